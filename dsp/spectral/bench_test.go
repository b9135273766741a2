package spectral

import (
	"fmt"
	"math/rand/v2"
	"testing"
	"time"
)

// benchRecord returns seconds of stereo noise at 48 kHz: a white reference
// and a response through a cookbook low-pass plus noise.
func benchRecord(seconds float64) (x, y []float64) {
	const fs = 48000.0
	r := rand.New(rand.NewPCG(81, 82))
	x = whiteNoise(r, make([]float64, int(seconds*fs)), 0.1)
	y = make([]float64, len(x))
	cookbook(lowPass, 1000, 0.7071, 0, fs).filter(&biquadState{}, y, x)
	for i := range y {
		y[i] += 0.001 * r.NormFloat64()
	}
	return x, y
}

func reportRealTime(b *testing.B, audio time.Duration) {
	perOp := b.Elapsed() / time.Duration(b.N)
	if perOp > 0 {
		b.ReportMetric(float64(audio)/float64(perOp), "x_realtime")
	}
}

// BenchmarkAddSpectrum: one second of stereo 48 kHz audio added whole,
// then the spectrum taken, per segment length.
func BenchmarkAddSpectrum(b *testing.B) {
	x, y := benchRecord(1)
	for _, n := range []int{1024, 4096, 8192, 16384} {
		b.Run(fmt.Sprintf("seg=%d", n), func(b *testing.B) {
			w := mustWelch(b, n, 48000)
			dst := make([]Bin, 0, n/2+1)
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				w.Reset()
				w.Add(x, y)
				dst = w.Spectrum(dst)
			}
			reportRealTime(b, time.Second)
		})
	}
}

// BenchmarkStream60s: 60 s of stereo 48 kHz audio fed in 512-frame blocks
// as from an audio callback, then a 30-bands-per-decade trace from 20 Hz
// to 20 kHz, with 8192-sample segments.
func BenchmarkStream60s(b *testing.B) {
	const block = 512
	x, y := benchRecord(60)
	w := mustWelch(b, 8192, 48000)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		w.Reset()
		for i := 0; i < len(x); i += block {
			j := min(i+block, len(x))
			w.Add(x[i:j], y[i:j])
		}
		if _, err := w.Trace(20, 20000, 30); err != nil {
			b.Fatal(err)
		}
	}
	reportRealTime(b, 60*time.Second)
}
