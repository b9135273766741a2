package bench

import (
	"context"
	"errors"
	"math"
	"math/cmplx"
	"strings"
	"testing"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/tone"
)

// Tolerances of the fault signatures.
const (
	// noiseTolDB: the RMS of 24000 samples of white noise scatters by
	// 1/√(2N) = 0.5 % (0.04 dB); 0.5 dB leaves room for the tone's leak.
	noiseTolDB = 0.5
	// humTolDB: the hum passes the 2.4 Hz coupling high-pass (−0.01 dB at
	// 50 Hz) and nothing else.
	humTolDB = 0.1
	// driftTolHz is 0.1 ppm of 1 kHz; the four-parameter fit's standard
	// uncertainty over 0.5 s at this SNR is below 1e−5 Hz (Händel 2000,
	// REFERENCES.md §1).
	driftTolHz = 1e-4
	// phaseJumpTolDeg bounds the phase of a tone across a dropout.
	phaseJumpTolDeg = 0.5
)

// faultOutput drives the outputs at −12 dBFS: loud enough for FaultClip's
// +20 dB to clip hard, far from full scale without it.
func faultOutput() audio.OutputConfig {
	o := audio.DefaultOutputConfig()
	o.LevelDBFS = -12
	return o
}

// faultRun is one fault case's recording of a steady sine.
type faultRun struct {
	b        *Bench
	rec      *recording
	freq     float64
	at       int64 // output frame where the sine starts
	from, n  int   // a steady block, by capture index
	expected complex128
}

// runFault plays a sine at freq for seconds and records it; the steady block
// is 0.5 s starting 0.5 s after the sine reached the inputs.
func runFault(t *testing.T, faults []Fault, freq, seconds float64, keepErr bool) *faultRun {
	t.Helper()
	b := openBench(t, Config{Seed: 7, Output: faultOutput(), Faults: faults})
	stim := sine(freq, 1, int(seconds*testRate))
	at := b.PlayIndex() + testRate/10
	end := at + int64(b.Latency()) + int64(len(stim)) - testRate/10
	r := &faultRun{b: b, freq: freq, at: at, from: int(at) + b.Latency() + testRate/2, n: testRate / 2}
	r.rec = record(t, b, stim, at, end, keepErr)
	exp, err := b.Expected([]float64{freq})
	if err != nil {
		t.Fatal(err)
	}
	r.expected = exp.Points[0].H
	return r
}

// block returns input c over the steady block.
func (r *faultRun) block(c int) []float64 { return r.rec.x[c][r.from : r.from+r.n] }

// level returns the peak amplitude of input c at f over the steady block
// (Goertzel, REFERENCES.md §1: Â = 2|X|/N for whole cycles).
func (r *faultRun) level(c int, f float64) float64 {
	return 2 * cmplx.Abs(tone.Goertzel(r.block(c), f, testRate)) / float64(r.n)
}

// ratio returns input 1/input 2 at the sine's frequency.
func (r *faultRun) ratio(t *testing.T) complex128 {
	h, _, _ := ratioAt(t, r.rec.x, r.from, r.n, r.freq)
	return h
}

// near reports whether h is within the ratio tolerances of want.
func near(h, want complex128) bool {
	return math.Abs(dB(h)-dB(want)) <= ratioTolDB && math.Abs(phaseDiff(h, want)) <= ratioTolDeg
}

// clipped counts samples of x at exactly ±1.
func clipped(x []float64) int {
	n := 0
	for _, v := range x {
		if math.Abs(v) == 1 {
			n++
		}
	}
	return n
}

// TestFaultSignatures injects each fault and checks its signature in the
// raw captured data. The signatures are those the brief specifies for each
// fault and the reference values are the bench's own documented parameters
// (common practice for each fault's size); the "none" case checks that no
// signature appears without a fault.
func TestFaultSignatures(t *testing.T) {
	noise := math.Pow(10, DefaultInterface().NoiseDBFS/20)
	cases := []struct {
		name   string
		faults string
		freq   float64
		check  func(t *testing.T, r *faultRun)
	}{
		{"none", "", 3000, func(t *testing.T, r *faultRun) {
			if h := r.ratio(t); !near(h, r.expected) {
				t.Errorf("ratio %.3f dB %.2f°, want %.3f dB %.2f°", dB(h), deg(h), dB(r.expected), deg(r.expected))
			}
			for c := range 2 {
				if n := clipped(r.block(c)); n != 0 {
					t.Errorf("input %d: %d samples at full scale", c+1, n)
				}
				if l := r.level(c, HumHz); l > 1e-4 {
					t.Errorf("input %d: %g at 50 Hz without hum", c+1, l)
				}
			}
			if len(r.rec.jumps) != 0 {
				t.Errorf("index jumps %v", r.rec.jumps)
			}
		}},
		{"swap: input 2 carries the network's output", "swap", 3000, func(t *testing.T, r *faultRun) {
			if h := 1 / r.ratio(t); !near(h, r.expected) {
				t.Errorf("input 2/input 1 = %.3f dB %.2f°, want the network %.3f dB %.2f°", dB(h), deg(h), dB(r.expected), deg(r.expected))
			}
		}},
		{"dead-ref: input 2 at the noise floor", "dead-ref", 3000, func(t *testing.T, r *faultRun) {
			if got := 20 * math.Log10(rms(r.block(1))/noise); math.Abs(got) > noiseTolDB {
				t.Errorf("input 2 RMS %.2f dB re the noise floor", got)
			}
			if l := r.level(0, r.freq); l < 0.1 {
				t.Errorf("input 1 level %g, want the network's output", l)
			}
		}},
		{"dead-dut: input 1 at the noise floor", "dead-dut", 3000, func(t *testing.T, r *faultRun) {
			if got := 20 * math.Log10(rms(r.block(0))/noise); math.Abs(got) > noiseTolDB {
				t.Errorf("input 1 RMS %.2f dB re the noise floor", got)
			}
			if l := r.level(1, r.freq); l < 0.1 {
				t.Errorf("input 2 level %g, want the loopback", l)
			}
		}},
		{"clip: input 1 at ±1", "clip", 3000, func(t *testing.T, r *faultRun) {
			// −12 dBFS·2 (+6 dB peak)·10 (+20 dB) = 5 times full scale:
			// most samples clip.
			if n := clipped(r.block(0)); n < r.n/2 {
				t.Errorf("%d of %d input 1 samples at ±1, want most", n, r.n)
			}
			if n := clipped(r.block(1)); n != 0 {
				t.Errorf("%d input 2 samples at ±1", n)
			}
		}},
		{"hum: 50 Hz on input 1", "hum", 3000, func(t *testing.T, r *faultRun) {
			checkHum(t, r, 0)
		}},
		{"invert: input 1 polarity", "invert", 3000, func(t *testing.T, r *faultRun) {
			if h := -r.ratio(t); !near(h, r.expected) {
				t.Errorf("−input 1/input 2 = %.3f dB %.2f°, want %.3f dB %.2f°", dB(h), deg(h), dB(r.expected), deg(r.expected))
			}
		}},
		{"drift: capture clock +200 ppm", "drift", 1000, func(t *testing.T, r *faultRun) {
			checkDrift(t, r)
		}},
		{"swap and hum: the hum follows the lead", "swap,hum", 3000, func(t *testing.T, r *faultRun) {
			checkHum(t, r, 1)
		}},
		{"invert and dead-ref", "invert,dead-ref", 3000, func(t *testing.T, r *faultRun) {
			if got := 20 * math.Log10(rms(r.block(1))/noise); math.Abs(got) > noiseTolDB {
				t.Errorf("input 2 RMS %.2f dB re the noise floor", got)
			}
			e1, err := (&tone.Estimator{Rate: testRate}).Fit(r.block(0), r.freq)
			if err != nil {
				t.Fatal(err)
			}
			if l := e1.Amplitude(); l < 0.1 {
				t.Errorf("input 1 level %g", l)
			}
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			faults, err := ParseFaults(c.faults)
			if err != nil {
				t.Fatal(err)
			}
			c.check(t, runFault(t, faults, c.freq, 1.3, false))
		})
	}
}

// checkHum checks the hum of FaultHum on input c: the fundamental at
// HumDBFS, the third harmonic 8 dB below, and nothing on the other input.
func checkHum(t *testing.T, r *faultRun, c int) {
	t.Helper()
	for _, h := range []struct{ f, dBFS float64 }{{HumHz, HumDBFS}, {3 * HumHz, HumDBFS - 8}} {
		if got := 20 * math.Log10(r.level(c, h.f)); math.Abs(got-h.dBFS) > humTolDB {
			t.Errorf("input %d at %g Hz: %.2f dBFS, want %.2f dBFS", c+1, h.f, got, h.dBFS)
		}
	}
	if got := 20 * math.Log10(r.level(1-c, HumHz)); got > -90 {
		t.Errorf("input %d at 50 Hz: %.1f dBFS, want the noise floor", 2-c, got)
	}
}

// checkDrift checks FaultDrift: a 1 kHz tone reads 1000/(1 + 200·10⁻⁶) Hz
// on both inputs (four-parameter fit, IEEE Std 1057), the ratio is
// unaffected, and the capture index runs 200 ppm ahead of the output index.
func checkDrift(t *testing.T, r *faultRun) {
	t.Helper()
	want := r.freq / (1 + DriftPPM*1e-6)
	est := tone.Estimator{Rate: testRate}
	for c := range 2 {
		fe, err := est.FitFreq(r.block(c), r.freq)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(fe.Freq-want) > driftTolHz {
			t.Errorf("input %d: %.5f Hz, want %.5f Hz (%+.1f ppm off)", c+1, fe.Freq, want, (fe.Freq/r.freq-1)*1e6)
		}
		// The ratio at the observed frequency is the network's: both
		// inputs are resampled alike.
		if c == 1 {
			e1, err1 := est.Fit(r.block(0), fe.Freq)
			e2, err2 := est.Fit(r.block(1), fe.Freq)
			if err1 != nil || err2 != nil {
				t.Fatal(err1, err2)
			}
			if h := e1.Phasor / e2.Phasor; !near(h, r.expected) {
				t.Errorf("ratio under drift %.3f dB %.2f°, want %.3f dB %.2f°", dB(h), deg(h), dB(r.expected), deg(r.expected))
			}
		}
	}
	s := r.b.Stats()
	if ppm := (float64(s.CaptureFrames)/float64(s.PlayFrames) - 1) * 1e6; math.Abs(ppm-DriftPPM) > 1e6/float64(s.PlayFrames) {
		t.Errorf("capture/play frames %d/%d: %+.1f ppm, want %+g", s.CaptureFrames, s.PlayFrames, ppm, DriftPPM)
	}
}

// TestFaultNoDriftControl is checkDrift's control: without FaultDrift the
// four-parameter fit reads the tone at its frequency.
func TestFaultNoDriftControl(t *testing.T) {
	r := runFault(t, nil, 1000, 1.3, false)
	fe, err := (&tone.Estimator{Rate: testRate}).FitFreq(r.block(0), 1000)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(fe.Freq-1000) > driftTolHz {
		t.Errorf("%.5f Hz without drift, want 1000", fe.Freq)
	}
}

// TestFaultDropout checks FaultDropout: Read reports index jumps of 5–20 ms
// every 1.2–1.8 s, Dropouts and Stats count them, and the frames after a
// jump sit at their true place in time: a steady tone keeps its phase
// across the jump when phases are referred to the capture index.
func TestFaultDropout(t *testing.T) {
	r := runFault(t, []Fault{FaultDropout}, 1000, 4.2, false)
	jumps := r.rec.jumps
	if len(jumps) < 2 {
		t.Fatalf("%d index jumps in 4 s, want at least 2", len(jumps))
	}
	var lost int64
	checked := 0
	minLen := int64(math.Round(DropoutMinMS * testRate / 1000))
	maxLen := int64(math.Round(DropoutMaxMS * testRate / 1000))
	for i, j := range jumps {
		n := j.to - j.from
		lost += n
		if n < minLen || n > maxLen {
			t.Errorf("jump %d: %d frames, want %d…%d", i, n, minLen, maxLen)
		}
		if i > 0 {
			gap := float64(j.from-jumps[i-1].to) / testRate
			if gap < DropoutGapMin-1e-3 || gap > DropoutGapMax+1e-3 {
				t.Errorf("jump %d: %.3f s after the last, want %g…%g s", i, gap, DropoutGapMin, DropoutGapMax)
			}
		}
		if checkPhaseAcross(t, r, j) {
			checked++
		}
	}
	if checked == 0 {
		t.Error("no jump fell inside the steady tone")
	}
	episodes, frames := r.b.Dropouts()
	if episodes < int64(len(jumps)) || frames < lost {
		t.Errorf("Dropouts() = %d, %d frames; the reader saw %d jumps losing %d frames", episodes, frames, len(jumps), lost)
	}
	if s := r.b.Stats(); s.Dropped != 0 || s.CaptureFrames < r.rec.read+lost {
		t.Errorf("Stats: Dropped %d (want 0), CaptureFrames %d (want ≥ %d read + %d lost)", s.Dropped, s.CaptureFrames, r.rec.read, lost)
	}
}

// checkPhaseAcross fits the tone 0.1 s before and after a jump and compares
// the phases referred to capture index 0; it reports whether it could.
func checkPhaseAcross(t *testing.T, r *faultRun, j jump) bool {
	t.Helper()
	const n = testRate / 10 // 100 whole cycles of 1 kHz
	if j.from-n < int64(r.from) || j.to+n > int64(len(r.rec.x[1])) {
		return false // the tone is not steady yet, or the recording ends
	}
	at0 := func(from int64) float64 {
		e, err := (&tone.Estimator{Rate: testRate}).Fit(r.rec.x[1][from:from+n], r.freq)
		if err != nil {
			t.Fatal(err)
		}
		return e.Phase() - 2*math.Pi*r.freq*float64(from)/testRate
	}
	d := math.Remainder(at0(j.to)-at0(j.from-n), 2*math.Pi) * 180 / math.Pi
	if math.Abs(d) > phaseJumpTolDeg {
		t.Errorf("jump at %d: the tone's phase moved %.2f° across it, want 0 (frames at their true index)", j.from, d)
	}
	return true
}

// TestFaultUnplug checks FaultUnplug: Read returns audio.ErrDeviceLost
// after UnplugSeconds of audio, Write too, and Close does not hang.
func TestFaultUnplug(t *testing.T) {
	b := openBench(t, Config{Seed: 8, Faults: []Fault{FaultUnplug}})
	rec := record(t, b, nil, 0, 10*testRate, true)
	if !errors.Is(rec.err, audio.ErrDeviceLost) {
		t.Fatalf("recording ended with %v after %d frames, want ErrDeviceLost", rec.err, rec.read)
	}
	lo := int64(UnplugSeconds * testRate)
	if hi := lo + int64(testRate/50); rec.read < lo || rec.read > hi {
		t.Errorf("device lost after %d frames, want %d…%d (%g s + a period)", rec.read, lo, hi, UnplugSeconds)
	}
	if _, err := b.Write(context.Background(), []float64{0}); !errors.Is(err, audio.ErrDeviceLost) {
		t.Errorf("Write after unplug: %v, want ErrDeviceLost", err)
	}
	// SetValue still reaches the (lost) bench's circuit.
	if err := b.SetValue("R2", 3300); err != nil {
		t.Errorf("SetValue after unplug: %v", err)
	}
	done := make(chan error, 1)
	go func() { done <- b.Close() }()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("Close: %v", err)
		}
	case <-time.After(2 * time.Second):
		t.Fatal("Close hangs after unplug")
	}
	if _, _, err := b.Read(context.Background(), [][]float64{make([]float64, 8), make([]float64, 8)}); !errors.Is(err, audio.ErrClosed) {
		t.Errorf("Read after Close: %v, want ErrClosed", err)
	}
}

// TestParseFaults covers the parser, errors included.
func TestParseFaults(t *testing.T) {
	for _, c := range []struct {
		in      string
		want    []Fault
		errHave string // substring of the error; "" means no error
	}{
		{"", nil, ""},
		{"   ", nil, ""},
		{"swap", []Fault{FaultSwap}, ""},
		{"swap,hum", []Fault{FaultSwap, FaultHum}, ""},
		{" dead-ref , dead-dut ,clip", []Fault{FaultDeadRef, FaultDeadDUT, FaultClip}, ""},
		{"invert,dropout,drift,unplug", []Fault{FaultInvert, FaultDropout, FaultDrift, FaultUnplug}, ""},
		{"swp", nil, `unknown fault "swp"; known faults: swap, dead-ref, dead-dut, clip, hum, invert, dropout, drift, unplug`},
		{"SWAP", nil, `unknown fault "SWAP"`},
		{"swap,,hum", nil, "fault 2 of"},
		{"swap,", nil, "is empty"},
		{"hum,hum", nil, `fault "hum" is listed twice`},
	} {
		t.Run(c.in, func(t *testing.T) {
			got, err := ParseFaults(c.in)
			if c.errHave != "" {
				if err == nil || !strings.Contains(err.Error(), c.errHave) {
					t.Fatalf("ParseFaults(%q) error %v, want one containing %q", c.in, err, c.errHave)
				}
				return
			}
			if err != nil {
				t.Fatalf("ParseFaults(%q): %v", c.in, err)
			}
			if FormatFaults(got) != FormatFaults(c.want) || len(got) != len(c.want) {
				t.Errorf("ParseFaults(%q) = %v, want %v", c.in, got, c.want)
			}
		})
	}
	for _, f := range AllFaults() {
		if !f.Valid() || f.Description() == "" {
			t.Errorf("fault %q has no description", f)
		}
	}
}
