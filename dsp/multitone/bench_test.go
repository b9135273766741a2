package multitone

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkAnalyzeInto measures one period of both inputs (stereo) at
// 48 kHz and reports periods per second on one core and the multiple of
// real time (period duration over analysis time).
// With hum=5 it also fits five 50 Hz mains lines out of both inputs.
func BenchmarkAnalyzeInto(b *testing.B) {
	for _, c := range []struct{ p, hum int }{{8192, 0}, {16384, 0}, {16384, 5}} {
		p := c.p
		b.Run(fmt.Sprintf("period=%d/hum=%d", p, c.hum), func(b *testing.B) {
			m, err := Design(Options{Rate: 48000, Period: p, From: 20, To: 20000, PerDecade: 24, LevelDBFS: -10, CapDBFS: -10, Avoid: MainsLines(5)})
			if err != nil {
				b.Fatal(err)
			}
			rng := rand.New(rand.NewPCG(1, 1))
			ref := addNoise(nil, m.Period(), 1e-4, rng)
			resp := addNoise(nil, rbj("peak", 48000, 1000, 1, 6).filter(m.Period()), 1e-4, rng)
			an := NewAnalyzer(m)
			var lines []float64
			for k := 1; k <= c.hum; k++ {
				lines = append(lines, 50*float64(k))
			}
			if err := an.SetInterferers(lines); err != nil {
				b.Fatal(err)
			}
			avg := NewAverager(m)
			var f Frame
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				if err := an.AnalyzeInto(&f, ref, resp); err != nil {
					b.Fatal(err)
				}
				avg.Add(&f)
			}
			sec := b.Elapsed().Seconds() / float64(b.N)
			b.ReportMetric(1/sec, "periods/s")
			b.ReportMetric(float64(p)/48000/sec, "x-realtime")
		})
	}
}

// BenchmarkDesign measures designing a 20 Hz–20 kHz multitone with 10
// tones per decade, per phase method.
func BenchmarkDesign(b *testing.B) {
	for _, r := range []Reduction{ReduceNone, ReduceClip, ReduceLp} {
		for _, p := range []int{8192, 16384} {
			b.Run(fmt.Sprintf("%v/period=%d", r, p), func(b *testing.B) {
				o := thirdOctave(r, PhaseSchroeder, 0)
				o.Period = p
				b.ReportAllocs()
				for b.Loop() {
					if _, err := Design(o); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
