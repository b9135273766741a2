package tone

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// benchRate is the sample rate of the benchmarks: 1 s blocks of 48 kHz
// audio, one channel per Fit call.
const benchRate = 48000

func benchSignal(n int, freq float64) []float64 {
	rng := rand.New(rand.NewPCG(7, 8))
	x := make([]float64, n)
	w := 2 * math.Pi * freq / benchRate
	for i := range x {
		t := float64(i)
		x[i] = 0.5*math.Cos(w*t+0.4) + 0.002*math.Cos(2*w*t) + 1e-4*rng.NormFloat64()
	}
	return x
}

// reportRealTime reports how many times faster than real time a stereo
// stream (two Fit calls per block of n samples) could be analysed.
func reportRealTime(b *testing.B, n int) {
	perOp := b.Elapsed().Seconds() / float64(b.N)
	b.ReportMetric(float64(n)/benchRate/(2*perOp), "x-realtime-stereo")
}

func BenchmarkFit(b *testing.B) {
	cases := []struct {
		name string
		freq float64
	}{
		{"integer", 1000},    // 1000 whole cycles per second
		{"general", 1000.37}, // 1000.37 cycles: normal equations
	}
	for _, n := range []int{4800, 48000} {
		for _, c := range cases {
			b.Run(fmt.Sprintf("%s/N=%d", c.name, n), func(b *testing.B) {
				e, _ := NewEstimator(benchRate)
				x := benchSignal(n, c.freq)
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					if _, err := e.Fit(x, c.freq); err != nil {
						b.Fatal(err)
					}
				}
				reportRealTime(b, n)
			})
		}
	}
}

func BenchmarkGoertzel(b *testing.B) {
	for _, n := range []int{4800, 48000} {
		b.Run(fmt.Sprintf("N=%d", n), func(b *testing.B) {
			x := benchSignal(n, 1000)
			b.ReportAllocs()
			for b.Loop() {
				Goertzel(x, 1000, benchRate)
			}
		})
	}
}

func BenchmarkFitFreq(b *testing.B) {
	for _, n := range []int{4800, 48000} {
		b.Run(fmt.Sprintf("N=%d", n), func(b *testing.B) {
			e, _ := NewEstimator(benchRate)
			x := benchSignal(n, 1000.05)
			b.ReportAllocs()
			for b.Loop() {
				if _, err := e.FitFreq(x, 1000); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
