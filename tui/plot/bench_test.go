package plot

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"
)

// benchCurves returns three n-point responses over 10 Hz–30 kHz: the RC
// low-pass and high-pass and the series RLC band-pass of REFERENCES.md §5.
func benchCurves(n int) []Curve {
	freqs := logGrid(10, 30e3, n)
	rlc := func(f float64) (float64, float64) {
		// Series RLC, output across R: L = 10 mH, C = 100 nF, R = 100 Ω.
		s := complex(0, 2*math.Pi*f)
		h := 100 / (100 + s*0.01 + 1/(s*100e-9))
		return 20 * math.Log10(cmplx.Abs(h)), cmplx.Phase(h) * 180 / math.Pi
	}
	return []Curve{
		rcCurve("low-pass", 1, freqs, rcLowpass),
		rcCurve("high-pass", 2, freqs, rcHighpass),
		rcCurve("band-pass", 3, freqs, rlc),
	}
}

func BenchmarkBode(b *testing.B) {
	curves := benchCurves(500)
	for _, size := range [][2]int{{80, 24}, {160, 48}, {300, 100}} {
		b.Run(fmt.Sprintf("%dx%d", size[0], size[1]), func(b *testing.B) {
			var c Canvas
			opt := Options{From: 20, To: 20e3, Cursor: 1000}
			c.Bode(size[0], size[1], opt, Axis{Auto: true}, Axis{Auto: true}, curves...)
			b.ReportAllocs()
			for b.Loop() {
				c.Bode(size[0], size[1], opt, Axis{Auto: true}, Axis{Auto: true}, curves...)
			}
		})
	}
}

func BenchmarkAppendText(b *testing.B) {
	var c Canvas
	g := c.Bode(160, 48, Options{}, Axis{Auto: true}, Axis{Auto: true}, benchCurves(500)...)
	buf := g.AppendText(nil)
	b.ReportAllocs()
	for b.Loop() {
		buf = g.AppendText(buf[:0])
	}
}
