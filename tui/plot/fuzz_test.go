package plot

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"unicode/utf8"
)

// FuzzRender draws random panels at random sizes and ranges, with NaN,
// ±Inf, zero and negative frequencies, reversed and empty ranges, and
// checks that nothing panics and the text is exactly h rows of w runes.
func FuzzRender(f *testing.F) {
	inf, nan := math.Inf(1), math.NaN()
	// Seeds: the golden cases, the tiny size, and odd ranges.
	f.Add(80, 24, 20.0, 20e3, 0.0, 0.0, uint16(200), uint64(1), uint8(0))
	f.Add(160, 48, 10.0, 100e3, 0.0, 0.0, uint16(500), uint64(2), uint8(2))
	f.Add(20, 6, 20.0, 20e3, -10.0, 0.0, uint16(50), uint64(3), uint8(1|4))
	f.Add(300, 100, 1.0, 1e6, -90.0, 90.0, uint16(1000), uint64(4), uint8(1|8))
	f.Add(40, 10, 20e3, 20.0, 0.0, 0.0, uint16(3), uint64(5), uint8(16))
	f.Add(40, 10, 1000.0, 1000.0, 5.0, 5.0, uint16(0), uint64(6), uint8(1))
	f.Add(7, 3, nan, inf, nan, inf, uint16(9), uint64(7), uint8(255))
	f.Add(-3, 1000, -20.0, 0.0, -inf, inf, uint16(1), uint64(8), uint8(32))
	f.Add(1, 1, 1e-300, 1e300, -1e300, 1e300, uint16(64), uint64(9), uint8(64|128))
	f.Fuzz(func(t *testing.T, w, h int, from, to, lo, hi float64, n uint16, seed uint64, flags uint8) {
		// Keep sizes where the fuzzer spends its time useful; clamping of
		// huge sizes is covered by TestSizes.
		w %= 330
		h %= 120
		rng := rand.New(rand.NewPCG(seed, uint64(n)))
		panels := make([]Panel, 1+int(flags>>6))
		specials := []float64{nan, inf, -inf, 0, -1e308, 1e308, 5e-324}
		for p := range panels {
			series := make([]Series, 1+rng.IntN(3))
			for s := range series {
				m := int(n) % 700
				fs, vs := make([]float64, m), make([]float64, m)
				fLo, fHi := math.Log10(math.Max(math.Abs(from), 1e-3)), math.Log10(math.Max(math.Abs(to), 1e-3))
				for i := range fs {
					fs[i] = math.Pow(10, fLo+(fHi-fLo)*(rng.Float64()*1.4-0.2))
					vs[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(8)-2))
					if flags&2 != 0 && rng.IntN(10) == 0 {
						vs[i] = specials[rng.IntN(len(specials))]
					}
					if flags&16 != 0 && rng.IntN(10) == 0 {
						fs[i] = specials[rng.IntN(len(specials))]
					}
				}
				if flags&32 != 0 {
					fs, vs = nil, nil
				}
				series[s] = Series{Name: strings.Repeat("s", rng.IntN(12)), Freq: fs, Value: vs, Style: s}
			}
			panels[p] = Panel{
				Title:  strings.Repeat("T", rng.IntN(20)),
				Y:      Axis{Auto: flags&1 == 0, Min: lo, Max: hi, Step: float64(rng.IntN(3)) * hi / 7, Unit: "dB"},
				Series: series,
			}
		}
		opt := Options{
			From: from, To: to, ASCII: flags&4 != 0, MarkClip: flags&8 != 0,
			Cursor: math.Abs(from*to) / (1 + rng.Float64()), Gutter: int(flags>>5) % 4 * 3,
		}
		var c Canvas
		g := c.Render(w, h, opt, panels...)
		wantW, wantH := max(w, 0), max(h, 0)
		if g.W != wantW || g.H != wantH || len(g.Cells) != wantW*wantH {
			t.Fatalf("grid %dx%d with %d cells, want %dx%d", g.W, g.H, len(g.Cells), wantW, wantH)
		}
		if wantW > 0 && wantH > 0 {
			rows := strings.Split(g.String(), "\n")
			if len(rows) != wantH {
				t.Fatalf("%d rows, want %d", len(rows), wantH)
			}
			for i, r := range rows {
				if k := utf8.RuneCountInString(r); k != wantW {
					t.Fatalf("row %d has %d runes, want %d", i, k, wantW)
				}
			}
		}
		for _, lay := range g.Panels {
			if !(lay.Max > lay.Min) || math.IsInf(lay.Max-lay.Min, 0) {
				t.Fatalf("panel range %g..%g", lay.Min, lay.Max)
			}
		}
		if x := g.X; x.Width > 0 {
			for col := x.Left; col < x.Left+x.Width; col++ {
				if got, ok := x.Col(x.Freq(col)); got != col || !ok {
					t.Fatalf("Col(Freq(%d)) = %d, %v on %g–%g", col, got, ok, x.From, x.To)
				}
			}
		}
		// A second render on the same canvas gives the same cells.
		first := append([]Cell(nil), g.Cells...)
		g = c.Render(w, h, opt, panels...)
		for i := range first {
			if first[i] != g.Cells[i] {
				t.Fatalf("cell %d differs on redraw", i)
			}
		}
	})
}
