package stimulus

import (
	"fmt"
	"testing"
)

// benchRate is the sample rate of the benchmarks; one op is one second of
// audio, so x-real-time = 1 s / (ns/op).
const benchRate = 48000

func reportRealTime(b *testing.B) {
	b.ReportMetric(float64(b.N)*1e9/float64(b.Elapsed().Nanoseconds()), "x-real-time")
}

// BenchmarkSteppedSineRead reads one second at 48 kHz per op, in device-
// sized chunks.
func BenchmarkSteppedSineRead(b *testing.B) {
	steps := make([]Step, 31)
	for i := range steps {
		steps[i] = Step{Freq: 20 * float64(i+1) * 25, Settle: 480, Integrate: 4800}
	}
	for _, chunk := range []int{64, 512, 4096} {
		b.Run(fmt.Sprint(chunk), func(b *testing.B) {
			s, err := NewSteppedSine(benchRate, steps, 480, -20, -10)
			if err != nil {
				b.Fatal(err)
			}
			buf := make([]float64, chunk)
			b.ReportAllocs()
			for b.Loop() {
				for got := 0; got < benchRate; {
					n := s.Read(buf)
					if n == 0 {
						s.Reset()
					}
					got += n
				}
			}
			reportRealTime(b)
		})
	}
}

func BenchmarkWhiteNoiseRead(b *testing.B) {
	w, _ := NewWhiteNoise(1, -20, -10)
	buf := make([]float64, 512)
	b.ReportAllocs()
	for b.Loop() {
		for got := 0; got < benchRate; got += w.Read(buf) {
		}
	}
	reportRealTime(b)
}

func BenchmarkPinkNoiseRead(b *testing.B) {
	p, _ := NewPinkNoise(1, -20, -10)
	buf := make([]float64, 512)
	b.ReportAllocs()
	for b.Loop() {
		for got := 0; got < benchRate; got += p.Read(buf) {
		}
	}
	reportRealTime(b)
}
