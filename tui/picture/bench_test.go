package picture

import (
	"io"
	"math"
	"testing"
)

// BenchmarkWrite draws three 500-point traces (the §5 RC low-pass and
// high-pass and their product) from 10 Hz to 100 kHz.
func BenchmarkWrite(b *testing.B) {
	const n = 500
	fs := make([]float64, n)
	for i := range fs {
		fs[i] = 10 * math.Pow(1e4, float64(i)/(n-1))
	}
	series := []Series{
		{Name: "low-pass", Trace: sampled(fs, rcLowPass)},
		{Name: "high-pass", Trace: sampled(fs, rcHighPass)},
		{Name: "band-pass", Trace: sampled(fs, func(f float64) complex128 { return rcLowPass(f) * rcHighPass(f) }), Dashed: true},
	}
	for _, format := range []string{FormatSVG, FormatPNG} {
		b.Run(format, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if err := Write(io.Discard, format, Options{Title: "benchmark"}, series...); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
