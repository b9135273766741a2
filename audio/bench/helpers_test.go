package bench

import (
	"context"
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
	"time"

	"tonetrace/dsp/tone"
)

const testRate = 48000

// recording is what a test captured: both inputs by capture index from 0,
// NaN where no frame arrived, and the index jumps Read reported.
type recording struct {
	x     [2][]float64
	jumps []jump
	err   error // the error that ended the recording, if any
	read  int64 // frames read
}

// jump is a discontinuity between two Reads: frames [from, to) missing.
type jump struct{ from, to int64 }

// record plays stim from output frame at (nil stim: nothing) and captures
// until capture index frames. It fails the test on any error but the ones
// allowed by keepErr (which then ends the recording).
func record(t testing.TB, b *Bench, stim []float64, at int64, frames int64, keepErr bool) *recording {
	t.Helper()
	return recordWith(t, b, stim, at, frames, keepErr, nil)
}

// recordWith is record with a hook called after every Read with the next
// capture index expected.
func recordWith(t testing.TB, b *Bench, stim []float64, at int64, frames int64, keepErr bool, hook func(next int64)) *recording {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	werr := make(chan error, 1)
	if stim != nil {
		go func() {
			_, err := b.WriteAt(ctx, at, stim)
			b.Finish()
			werr <- err
		}()
	} else {
		werr <- nil
	}
	rec := &recording{}
	for c := range rec.x {
		rec.x[c] = make([]float64, frames)
		for i := range rec.x[c] {
			rec.x[c][i] = math.NaN()
		}
	}
	buf := [][]float64{make([]float64, 1024), make([]float64, 1024)}
	next := int64(0)
	for next < frames {
		n, first, err := b.Read(ctx, buf)
		if err != nil {
			if keepErr {
				rec.err = err
				break
			}
			t.Fatalf("Read after %d frames: %v", next, err)
		}
		if first != next {
			rec.jumps = append(rec.jumps, jump{next, first})
		}
		for c := range 2 {
			for i := range n {
				if k := first + int64(i); k < frames {
					rec.x[c][k] = buf[c][i]
				}
			}
		}
		rec.read += int64(n)
		next = first + int64(n)
		if hook != nil {
			hook(next)
		}
	}
	if stim != nil {
		// The writer may still be blocked on a stimulus longer than the
		// recording: stop it.
		cancel()
	}
	if err := <-werr; err != nil && !errors.Is(err, context.Canceled) && !keepErr {
		t.Fatalf("WriteAt: %v", err)
	}
	return rec
}

// multitone returns reps periods of n samples of the sum of cosines at
// freqs (each a whole number of cycles in n samples) with seeded random
// phases, scaled to a peak of exactly 1.
func multitone(freqs []float64, n, reps int, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 11))
	period := make([]float64, n)
	for _, f := range freqs {
		ph := 2 * math.Pi * r.Float64()
		w := 2 * math.Pi * f / testRate
		for i := range period {
			period[i] += math.Cos(w*float64(i) + ph)
		}
	}
	var peak float64
	for _, v := range period {
		peak = max(peak, math.Abs(v))
	}
	out := make([]float64, 0, n*reps)
	for range reps {
		for _, v := range period {
			out = append(out, v/peak)
		}
	}
	return out
}

// sine returns n samples of amp·cos(2πf·i/rate).
func sine(f, amp float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = amp * math.Cos(2*math.Pi*f*float64(i)/testRate)
	}
	return out
}

// logFreqs returns count whole-hertz frequencies spaced logarithmically from
// lo to hi.
func logFreqs(lo, hi float64, count int) []float64 {
	out := make([]float64, count)
	for i := range out {
		out[i] = math.Round(lo * math.Pow(hi/lo, float64(i)/float64(count-1)))
	}
	return out
}

// ratioAt fits both inputs of x[from:from+n] at f and returns the ratio
// input1/input2 and the two estimates.
func ratioAt(t testing.TB, x [2][]float64, from, n int, f float64) (complex128, tone.Estimate, tone.Estimate) {
	t.Helper()
	est := tone.Estimator{Rate: testRate, MaxHarmonic: 1}
	e1, err := est.Fit(x[0][from:from+n], f)
	if err != nil {
		t.Fatalf("fit input 1 at %g Hz: %v", f, err)
	}
	e2, err := est.Fit(x[1][from:from+n], f)
	if err != nil {
		t.Fatalf("fit input 2 at %g Hz: %v", f, err)
	}
	return e1.Phasor / e2.Phasor, e1, e2
}

// dB and deg of a complex ratio.
func dB(h complex128) float64  { return 20 * math.Log10(cmplx.Abs(h)) }
func deg(h complex128) float64 { return cmplx.Phase(h) * 180 / math.Pi }

// phaseDiff returns a − b in degrees, wrapped to (−180, 180].
func phaseDiff(a, b complex128) float64 { return deg(a / b) }

// rms returns the root mean square of x.
func rms(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v * v
	}
	return math.Sqrt(s / float64(len(x)))
}
