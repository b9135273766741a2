package plot

import (
	"math"
	"sort"
	"strings"
	"testing"
	"unicode/utf8"
)

// RC network of REFERENCES.md §5: R = 10 kΩ, C = 15 nF, fc = 1/(2πRC).
const (
	rcR = 10e3
	rcC = 15e-9
)

var rcFc = 1 / (2 * math.Pi * rcR * rcC)

// rcLowpass returns the gain in dB and phase in degrees of the
// first-order RC low-pass H = 1/(1 + j f/fc).
func rcLowpass(f float64) (gainDB, phaseDeg float64) {
	x := f / rcFc
	return -10 * math.Log10(1+x*x), -math.Atan(x) * 180 / math.Pi
}

// rcHighpass returns the gain in dB and phase in degrees of the
// first-order RC high-pass H = (j f/fc)/(1 + j f/fc).
func rcHighpass(f float64) (gainDB, phaseDeg float64) {
	x := f / rcFc
	return 10*math.Log10(x*x) - 10*math.Log10(1+x*x), 90 - math.Atan(x)*180/math.Pi
}

// logGrid returns n log-spaced frequencies from lo to hi, plus extra
// frequencies, sorted.
func logGrid(lo, hi float64, n int, extra ...float64) []float64 {
	f := make([]float64, 0, n+len(extra))
	for i := 0; i < n; i++ {
		f = append(f, lo*math.Pow(hi/lo, float64(i)/float64(n-1)))
	}
	f = append(f, extra...)
	sort.Float64s(f)
	return f
}

// rcCurve samples a response over freqs.
func rcCurve(name string, style int, freqs []float64, h func(float64) (float64, float64)) Curve {
	c := Curve{Name: name, Style: style, Freq: freqs,
		Gain: make([]float64, len(freqs)), Phase: make([]float64, len(freqs))}
	for i, f := range freqs {
		c.Gain[i], c.Phase[i] = h(f)
	}
	return c
}

// unicodeDot is the bit of the dot at (col, row) of a braille cell, from
// the Unicode Braille Patterns chart (U+2800–U+28FF): dots 1 2 3 7 down
// the left column, 4 5 6 8 down the right; dot n is bit n−1 (from memory).
func unicodeDot(col, row int) rune {
	dot := [2][4]int{{1, 2, 3, 7}, {4, 5, 6, 8}}[col][row]
	return 1 << (dot - 1)
}

// hasDot reports whether the cell rune is a braille pattern with the dot
// at (col, row) of the cell.
func hasDot(r rune, col, row int) bool {
	if r < 0x2800 || r > 0x28FF {
		return false
	}
	return (r-0x2800)&unicodeDot(col, row) != 0
}

// dotMatrix reads back the dots of a panel's plot area from the runes:
// m[y][x] in dot coordinates.
func dotMatrix(g *Grid, lay PanelLayout) [][]bool {
	m := make([][]bool, 4*lay.PlotRows)
	for y := range m {
		m[y] = make([]bool, 2*g.X.Width)
		for x := range m[y] {
			r := g.At(g.X.Left+x/2, lay.PlotTop+y/4).Rune
			m[y][x] = hasDot(r, x%2, y%4)
		}
	}
	return m
}

// rowText returns row r of the grid as a string.
func rowText(g *Grid, r int) string { return string(g.AppendRow(nil, r)) }

// checkShape fails unless the grid's text is h rows of w runes.
func checkShape(t *testing.T, g *Grid, w, h int) {
	t.Helper()
	s := g.String()
	if h == 0 || w == 0 {
		if strings.Trim(s, "\n") != "" {
			t.Fatalf("%dx%d: want empty text, got %q", w, h, s)
		}
		return
	}
	rows := strings.Split(s, "\n")
	if len(rows) != h {
		t.Fatalf("%dx%d: got %d rows", w, h, len(rows))
	}
	for i, r := range rows {
		if n := utf8.RuneCountInString(r); n != w {
			t.Fatalf("%dx%d: row %d has %d runes: %q", w, h, i, n, r)
		}
	}
	if len(g.Cells) != w*h {
		t.Fatalf("%dx%d: %d cells", w, h, len(g.Cells))
	}
}
