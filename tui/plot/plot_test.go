package plot

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// refTol is the tolerance for REFERENCES.md §5 values, which are given to
// four decimals.
const refTol = 5e-5

// TestRCReference checks the RC low-pass and high-pass used by the plot
// tests against REFERENCES.md §5 (ngspice-39 AC analysis [V]).
func TestRCReference(t *testing.T) {
	// fc = 1061.0330 Hz for R = 10 kΩ, C = 15 nF (REFERENCES.md §5 [V]).
	if math.Abs(rcFc-1061.0330) > refTol {
		t.Fatalf("fc = %.4f Hz, want 1061.0330", rcFc)
	}
	tests := []struct {
		name            string
		ratio           float64
		lpGain, lpPhase float64
		hpGain, hpPhase float64
	}{
		// REFERENCES.md §5 table, ngspice-39 [V].
		{"0.1 fc", 0.1, -0.0432, -5.7106, -20.0432, 84.2894},
		{"0.5 fc", 0.5, -0.9691, -26.5651, -6.9897, 63.4349},
		{"fc", 1, -3.0103, -45.0000, -3.0103, 45.0000},
		{"2 fc", 2, -6.9897, -63.4349, -0.9691, 26.5651},
		{"10 fc", 10, -20.0432, -84.2894, -0.0432, 5.7106},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g, p := rcLowpass(tt.ratio * rcFc)
			if math.Abs(g-tt.lpGain) > refTol || math.Abs(p-tt.lpPhase) > refTol {
				t.Errorf("low-pass %.4f dB %.4f°, want %.4f dB %.4f°", g, p, tt.lpGain, tt.lpPhase)
			}
			g, p = rcHighpass(tt.ratio * rcFc)
			if math.Abs(g-tt.hpGain) > refTol || math.Abs(p-tt.hpPhase) > refTol {
				t.Errorf("high-pass %.4f dB %.4f°, want %.4f dB %.4f°", g, p, tt.hpGain, tt.hpPhase)
			}
		})
	}
}

// TestXMapRoundTrip checks the log mapping against its formula and that
// column → frequency → column returns the same column exactly.
func TestXMapRoundTrip(t *testing.T) {
	ranges := [][2]float64{{20, 20e3}, {10, 100e3}, {1, 10}, {999, 1001}, {1e-3, 1e9}}
	for _, r := range ranges {
		for _, width := range []int{1, 2, 7, 14, 76, 153, 299} {
			m := XMap{From: r[0], To: r[1], Left: 5, Width: width}
			name := fmt.Sprintf("%g-%g/%d", r[0], r[1], width)
			// Formula of the brief (our own definition): x = (log10 f −
			// log10 from)/(log10 to − log10 from)·(2·width − 1).
			if x := m.DotX(r[0]); x != 0 {
				t.Errorf("%s: DotX(From) = %g, want 0", name, x)
			}
			if x := m.DotX(r[1]); math.Abs(x-float64(2*width-1)) > 1e-9 {
				t.Errorf("%s: DotX(To) = %g, want %d", name, x, 2*width-1)
			}
			mid := math.Sqrt(r[0] * r[1])
			if x := m.DotX(mid); math.Abs(x-float64(2*width-1)/2) > 1e-9 {
				t.Errorf("%s: DotX(geometric mean) = %g, want %g", name, x, float64(2*width-1)/2)
			}
			for col := m.Left; col < m.Left+width; col++ {
				f := m.Freq(col)
				got, ok := m.Col(f)
				if got != col || !ok {
					t.Fatalf("%s: Col(Freq(%d) = %g) = %d, %v", name, col, f, got, ok)
				}
			}
			for x := 0; x < 2*width; x++ {
				f := m.DotFreq(float64(x))
				if got := math.Round(m.DotX(f)); got != float64(x) {
					t.Fatalf("%s: DotX(DotFreq(%d)) rounds to %g", name, x, got)
				}
			}
			// Outside the range: clamped and not ok.
			if col, ok := m.Col(r[0] / 10); ok || col != m.Left {
				t.Errorf("%s: Col below From = %d, %v", name, col, ok)
			}
			if col, ok := m.Col(r[1] * 10); ok || col != m.Left+width-1 {
				t.Errorf("%s: Col above To = %d, %v", name, col, ok)
			}
			for _, bad := range []float64{0, -1, math.NaN(), math.Inf(1)} {
				if _, ok := m.Col(bad); ok {
					t.Errorf("%s: Col(%g) ok", name, bad)
				}
			}
		}
	}
}

func TestPanelLayoutRoundTrip(t *testing.T) {
	for _, rows := range []int{1, 2, 5, 11, 47} {
		p := PanelLayout{Top: 3, Rows: rows + 1, PlotTop: 4, PlotRows: rows, Min: -37.5, Max: 12}
		if y := p.DotY(p.Max); y != 0 {
			t.Errorf("rows %d: DotY(Max) = %g", rows, y)
		}
		if y := p.DotY(p.Min); y != float64(4*rows-1) {
			t.Errorf("rows %d: DotY(Min) = %g", rows, y)
		}
		for r := p.PlotTop; r < p.PlotTop+rows; r++ {
			if got, ok := p.Row(p.Value(r)); got != r || !ok {
				t.Fatalf("rows %d: Row(Value(%d)) = %d, %v", rows, r, got, ok)
			}
		}
		if r, ok := p.Row(p.Max + 1); ok || r != p.PlotTop {
			t.Errorf("rows %d: above range gives %d, %v", rows, r, ok)
		}
		if r, ok := p.Row(p.Min - 1); ok || r != p.PlotTop+rows-1 {
			t.Errorf("rows %d: below range gives %d, %v", rows, r, ok)
		}
	}
}

// TestCornerColumn renders the RC low-pass Bode plot and checks that the
// points at 0.1·fc, fc and 10·fc light exactly the dots the mappings
// predict, and that the −3 dB point is in the column of fc.
func TestCornerColumn(t *testing.T) {
	// Check values: REFERENCES.md §5, ngspice-39 [V].
	checks := []struct {
		name        string
		ratio       float64
		gain, phase float64
	}{
		{"0.1 fc", 0.1, -0.0432, -5.7106},
		{"fc (-3 dB)", 1, -3.0103, -45},
		{"10 fc", 10, -20.0432, -84.2894},
	}
	freqs := logGrid(20, 20e3, 120, 0.1*rcFc, rcFc, 10*rcFc)
	cv := rcCurve("RC low-pass", 3, freqs, rcLowpass)
	var c Canvas
	for _, size := range [][2]int{{80, 24}, {160, 48}, {40, 12}} {
		w, h := size[0], size[1]
		g := c.Bode(w, h, Options{From: 20, To: 20e3}, Axis{Auto: true}, Axis{Auto: true}, cv)
		checkShape(t, g, w, h)
		if g.X.Left+g.X.Width != w {
			t.Fatalf("%dx%d: plot columns %d+%d do not reach the right edge", w, h, g.X.Left, g.X.Width)
		}
		for _, ck := range checks {
			f := ck.ratio * rcFc
			// Expected dot column from the log-axis formula.
			x := math.Round((math.Log10(f) - math.Log10(20)) / (math.Log10(20e3) - math.Log10(20)) * float64(g.X.Width*2-1))
			col := g.X.Left + int(x)/2
			if got, ok := g.X.Col(f); got != col || !ok {
				t.Errorf("%dx%d %s: Col = %d, %v; formula gives %d", w, h, ck.name, got, ok, col)
			}
			for pi, v := range []float64{ck.gain, ck.phase} {
				lay := g.Panels[pi]
				y := math.Round((lay.Max - v) / (lay.Max - lay.Min) * float64(4*lay.PlotRows-1))
				row := lay.PlotTop + int(y)/4
				cell := g.At(col, row)
				if !hasDot(cell.Rune, int(x)%2, int(y)%4) {
					t.Errorf("%dx%d %s panel %d: cell (%d,%d) = %q lacks dot (%d,%d)",
						w, h, ck.name, pi, col, row, cell.Rune, int(x)%2, int(y)%4)
				}
				if cell.Kind != KindTrace || cell.Style != 3 {
					t.Errorf("%dx%d %s panel %d: cell kind %v style %d", w, h, ck.name, pi, cell.Kind, cell.Style)
				}
			}
		}
	}
}

// TestDecadeLabels checks the frequency labels: which 1-2-5 set is chosen
// for the width, and that the decade labels and grid lines sit in the
// columns the log mapping gives.
func TestDecadeLabels(t *testing.T) {
	tests := []struct {
		name string
		w, h int
		want string // the label row, fields joined by spaces
	}{
		// 76 plot columns for 3 decades: 1-2-5 labels fit (25 columns a
		// decade, 7.6 between 1 and 2).
		{"80 wide 1-2-5", 80, 24, "Hz 20 50 100 200 500 1k 2k 5k 10k 20k"},
		{"160 wide 1-2-5", 160, 48, "Hz 20 50 100 200 500 1k 2k 5k 10k 20k"},
		// 36 plot columns: 2k and 5k (3.6 columns apart) collide; 1-5 fits.
		{"40 wide 1-5", 40, 12, "Hz 50 100 500 1k 5k 10k"},
		// 18 plot columns: only the decades.
		{"20 wide decades", 20, 6, "Hz 100 1k 10k"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			freqs := logGrid(20, 20e3, 50)
			cv := rcCurve("", 1, freqs, rcLowpass)
			g := Bode(tt.w, tt.h, Options{From: 20, To: 20e3}, Axis{Auto: true}, Axis{Auto: true}, cv)
			checkShape(t, &g, tt.w, tt.h)
			labels := rowText(&g, tt.h-1)
			if got := strings.Join(strings.Fields(labels), " "); got != tt.want {
				t.Fatalf("labels %q, want %q", got, tt.want)
			}
			for _, d := range []struct {
				f    float64
				text string
			}{{100, "100"}, {1000, "1k"}, {10000, "10k"}} {
				// Column from the log-axis formula; labels are centred on it.
				x := math.Round((math.Log10(d.f) - math.Log10(20)) / 3 * float64(2*g.X.Width-1))
				col := g.X.Left + int(x)/2
				start := col - (len(d.text)-1)/2
				if got := string([]rune(labels)[start : start+len(d.text)]); got != d.text {
					t.Errorf("label %s: columns %d.. hold %q", d.text, start, got)
				}
				// The decade grid line runs down the column wherever no
				// trace or tick row covers it.
				lines := 0
				for _, lay := range g.Panels {
					for r := lay.PlotTop; r < lay.PlotTop+lay.PlotRows; r++ {
						cell := g.At(col, r)
						switch cell.Rune {
						case '┊', '┼':
							lines++
						default:
							if cell.Kind != KindTrace {
								t.Errorf("label %s: cell (%d,%d) = %q %v, want grid or trace", d.text, col, r, cell.Rune, cell.Kind)
							}
						}
					}
				}
				if lines == 0 {
					t.Errorf("label %s: no grid line in column %d", d.text, col)
				}
			}
		})
	}
}

// TestNaNGap checks that NaN values and invalid frequencies break a trace
// and that a lone point between gaps is still drawn.
func TestNaNGap(t *testing.T) {
	freqs := logGrid(20, 20e3, 61)
	vals := make([]float64, len(freqs))
	for i := range vals {
		vals[i] = -10
	}
	// Gap over points 20–29; lone point 40 between NaNs; an invalid
	// frequency at 50.
	for i := 20; i < 30; i++ {
		vals[i] = math.NaN()
	}
	vals[39], vals[41] = math.NaN(), math.NaN()
	freqs[50] = -1
	p := Panel{Y: Axis{Min: -20, Max: 0}, Series: []Series{{Freq: freqs, Value: vals, Style: 2}}}
	g := Render(80, 10, Options{From: 20, To: 20e3}, p)
	lay := g.Panels[0]
	m := dotMatrix(&g, lay)
	yRow := int(math.Round(lay.DotY(-10)))
	lit := func(f float64) bool { return m[yRow][int(math.Round(g.X.DotX(f)))] }
	anyIn := func(x0, x1 float64) bool {
		for x := int(math.Ceil(x0)); x <= int(math.Floor(x1)); x++ {
			for y := range m {
				if m[y][x] {
					return true
				}
			}
		}
		return false
	}
	for _, i := range []int{0, 19, 30, 38, 40, 42, 49, 51, 60} {
		if !lit(freqs[i]) {
			t.Errorf("point %d at %.1f Hz not drawn", i, freqs[i])
		}
	}
	// Strictly between the last point before a gap and the first after it
	// nothing may be drawn.
	gaps := [][2]int{{19, 30}, {38, 40}, {40, 42}, {49, 51}}
	for _, gp := range gaps {
		x0, x1 := g.X.DotX(freqs[gp[0]]), g.X.DotX(freqs[gp[1]])
		if anyIn(math.Round(x0)+1, math.Round(x1)-1) {
			t.Errorf("dots drawn inside the gap between points %d and %d", gp[0], gp[1])
		}
	}
}

// TestContinuity draws a steep random trace and checks that its dots are
// 8-connected from the first column to the last (Bresenham leaves no
// holes).
func TestContinuity(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	freqs := logGrid(20, 20e3, 40)
	vals := make([]float64, len(freqs))
	for i := range vals {
		vals[i] = rng.Float64()*60 - 50 // −50…+10 dB, steep jumps
	}
	p := Panel{Y: Axis{Min: -50, Max: 10}, Series: []Series{{Freq: freqs, Value: vals}}}
	g := Render(100, 30, Options{From: 20, To: 20e3}, p)
	m := dotMatrix(&g, g.Panels[0])
	span := func(x int) (lo, hi int) {
		lo, hi = len(m), -1
		for y := range m {
			if m[y][x] {
				lo, hi = min(lo, y), max(hi, y)
			}
		}
		return lo, hi
	}
	for x := 0; x < 2*g.X.Width; x++ {
		lo, hi := span(x)
		if hi < 0 {
			t.Fatalf("dot column %d empty", x)
		}
		if x == 0 {
			continue
		}
		plo, phi := span(x - 1)
		if lo > phi+1 || hi < plo-1 {
			t.Fatalf("dot columns %d (%d–%d) and %d (%d–%d) do not touch", x-1, plo, phi, x, lo, hi)
		}
	}
}

// TestClipping checks values beyond a fixed range: drawn along the edge,
// flagged, optionally marked, and nothing drawn outside the panel.
func TestClipping(t *testing.T) {
	freqs := []float64{20, 200, 2000, 20000}
	tests := []struct {
		name     string
		vals     []float64
		wantUp   bool
		wantDown bool
	}{
		{"below", []float64{-5, -5, -30, -30}, false, true},
		{"above", []float64{-5, -5, 12, 12}, true, false},
		{"through both edges", []float64{20, -30, 20, -30}, true, true},
		{"minus infinity (zero gain)", []float64{-5, math.Inf(-1), -5, -5}, false, true},
		{"plus infinity", []float64{-5, math.Inf(1), -5, -5}, true, false},
		{"inside", []float64{-1, -9, -2, -8}, false, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			// Two panels, so a trace leaking out of the first would show in
			// the second.
			p := Panel{Y: Axis{Min: -10, Max: 0}, Series: []Series{{Freq: freqs, Value: tt.vals, Style: 7}}}
			empty := Panel{Y: Axis{Min: -10, Max: 0}}
			for _, mark := range []bool{false, true} {
				g := Render(60, 21, Options{From: 20, To: 20e3, MarkClip: mark}, p, empty)
				lay := g.Panels[0]
				var up, down bool
				for r := 0; r < g.H; r++ {
					for col := 0; col < g.W; col++ {
						cell := g.At(col, r)
						inPlot := r >= lay.PlotTop && r < lay.PlotTop+lay.PlotRows && col >= g.X.Left
						if cell.Kind == KindTrace && !inPlot {
							t.Fatalf("trace outside the panel at (%d,%d)", col, r)
						}
						if !cell.Clipped {
							if mark && (cell.Rune == '▲' || cell.Rune == '▼') {
								t.Errorf("unclipped cell marked at (%d,%d)", col, r)
							}
							continue
						}
						switch r {
						case lay.PlotTop:
							up = true
							if mark && cell.Rune != '▲' {
								t.Errorf("clipped top cell (%d,%d) = %q, want ▲", col, r, cell.Rune)
							}
						case lay.PlotTop + lay.PlotRows - 1:
							down = true
							if mark && cell.Rune != '▼' {
								t.Errorf("clipped bottom cell (%d,%d) = %q, want ▼", col, r, cell.Rune)
							}
						default:
							t.Errorf("clipped cell (%d,%d) not on an edge row", col, r)
						}
						if !mark {
							// Clipped dots lie on the edge dot row.
							edge := 0
							if r != lay.PlotTop {
								edge = 3
							}
							if !hasDot(cell.Rune, 0, edge) && !hasDot(cell.Rune, 1, edge) {
								t.Errorf("clipped cell (%d,%d) = %q has no dot on the edge", col, r, cell.Rune)
							}
						}
					}
				}
				if up != tt.wantUp || down != tt.wantDown {
					t.Errorf("mark %v: clipped top %v bottom %v, want %v %v", mark, up, down, tt.wantUp, tt.wantDown)
				}
			}
		})
	}
}

// TestFlatTrace checks that a flat trace sits on one dot row mid-panel
// under the default minimum span, unbroken across the width.
func TestFlatTrace(t *testing.T) {
	freqs := logGrid(20, 20e3, 30)
	vals := make([]float64, len(freqs))
	for i := range vals {
		vals[i] = -6.02
	}
	g := Render(50, 12, Options{From: 20, To: 20e3}, Panel{Y: Axis{Auto: true}, Series: []Series{{Freq: freqs, Value: vals}}})
	lay := g.Panels[0]
	// Minimum span 1 dB centred on the trace (Axis.MinSpan default).
	if math.Abs(lay.Max-lay.Min-1) > 1e-12 || math.Abs((lay.Max+lay.Min)/2+6.02) > 1e-12 {
		t.Fatalf("range %g..%g, want 1 dB around -6.02", lay.Min, lay.Max)
	}
	m := dotMatrix(&g, lay)
	want := int(math.Round(lay.DotY(-6.02)))
	if mid := float64(4*lay.PlotRows-1) / 2; math.Abs(float64(want)-mid) > 0.5 {
		t.Errorf("trace on dot row %d, middle is %g", want, mid)
	}
	for y := range m {
		for x := range m[y] {
			if m[y][x] != (y == want) {
				t.Fatalf("dot (%d,%d) = %v, want only row %d lit", x, y, m[y][x], want)
			}
		}
	}
}

// TestOwnership checks that where two traces share a cell the later one
// owns it, and elsewhere each owns its own cells.
func TestOwnership(t *testing.T) {
	freqs := []float64{20, 20e3}
	a := Series{Name: "a", Freq: freqs, Value: []float64{-10, -10}, Style: 4}
	b := Series{Name: "b", Freq: freqs, Value: []float64{0, -20}, Style: 9}
	g := Render(41, 21, Options{From: 20, To: 20e3}, Panel{Y: Axis{Min: -20, Max: 0}, Series: []Series{a, b}})
	lay := g.Panels[0]
	rowA, _ := lay.Row(-10)
	colMid, _ := g.X.Col(math.Sqrt(20 * 20e3))
	if c := g.At(colMid, rowA); c.Kind != KindTrace || c.Style != 9 {
		t.Errorf("crossing cell: %v style %d, want trace style 9", c.Kind, c.Style)
	}
	if c := g.At(g.X.Left, rowA); c.Kind != KindTrace || c.Style != 4 {
		t.Errorf("a-only cell: %v style %d, want trace style 4", c.Kind, c.Style)
	}
	rowB, _ := lay.Row(0)
	if c := g.At(g.X.Left, rowB); c.Kind != KindTrace || c.Style != 9 {
		t.Errorf("b-only cell: %v style %d, want trace style 9", c.Kind, c.Style)
	}
	// The legend names both, coloured by style, right-aligned.
	head := rowText(&g, lay.Top)
	if !strings.HasSuffix(head, "a  b") {
		t.Errorf("header %q, want legend \"a  b\" at the right", head)
	}
	if c := g.At(g.W-1, lay.Top); c.Kind != KindLegend || c.Style != 9 {
		t.Errorf("legend cell %v style %d", c.Kind, c.Style)
	}
}

func TestCursor(t *testing.T) {
	freqs := logGrid(20, 20e3, 40)
	cv := rcCurve("", 1, freqs, rcLowpass)
	tests := []struct {
		name   string
		cursor float64
		want   bool
	}{
		{"at fc", rcFc, true},
		{"at the lower end", 20, true},
		{"none", 0, false},
		{"error: NaN", math.NaN(), false},
		{"error: below range", 10, false},
		{"error: above range", 30e3, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := Bode(80, 24, Options{From: 20, To: 20e3, Cursor: tt.cursor}, Axis{Auto: true}, Axis{Auto: true}, cv)
			col, _ := g.X.Col(tt.cursor)
			flagged := 0
			for _, c := range g.Cells {
				if c.Cursor {
					flagged++
				}
			}
			if !tt.want {
				if flagged != 0 {
					t.Errorf("%d cells flagged for no cursor", flagged)
				}
				return
			}
			plotRows := g.Panels[0].PlotRows + g.Panels[1].PlotRows
			if flagged != plotRows {
				t.Errorf("%d cells flagged, want %d (every plot row)", flagged, plotRows)
			}
			for _, lay := range g.Panels {
				for r := lay.PlotTop; r < lay.PlotTop+lay.PlotRows; r++ {
					c := g.At(col, r)
					if !c.Cursor || (c.Kind != KindTrace && (c.Kind != KindCursor || c.Rune != '┃')) {
						t.Errorf("cursor cell (%d,%d) = %q %v cursor %v", col, r, c.Rune, c.Kind, c.Cursor)
					}
				}
			}
		})
	}
}

func TestHeader(t *testing.T) {
	s := Series{Name: "meas", Freq: []float64{100}, Value: []float64{0}, Style: 1}
	tests := []struct {
		name  string
		w     int
		panel Panel
		want  string
	}{
		{"title unit legend", 40, Panel{Title: "Gain", Y: Axis{Auto: true, Unit: "dB"}, Series: []Series{s}},
			"  dB Gain" + strings.Repeat(" ", 40-9-4) + "meas"},
		{"legend dropped when it does not fit", 13, Panel{Title: "Gain", Y: Axis{Auto: true, Unit: "dB"}, Series: []Series{s}},
			" dB Gain     "},
		{"control characters replaced", 30, Panel{Title: "a\tb\x1b[31m", Y: Axis{Min: 0, Max: 1}},
			"    a?b?[31m                  "},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := Render(tt.w, 8, Options{}, tt.panel)
			if got := rowText(&g, 0); got != tt.want {
				t.Errorf("header %q, want %q", got, tt.want)
			}
		})
	}
}

func TestSizes(t *testing.T) {
	freqs := logGrid(20, 20e3, 100)
	cv := rcCurve("RC", 1, freqs, rcLowpass)
	tests := []struct {
		name         string
		w, h         int
		wantW, wantH int
	}{
		{"zero", 0, 0, 0, 0},
		{"negative", -5, -1, 0, 0},
		{"one cell", 1, 1, 1, 1},
		{"one row", 80, 1, 80, 1},
		{"one column", 1, 24, 1, 24},
		{"two rows", 30, 2, 30, 2},
		{"tiny", 20, 6, 20, 6},
		{"narrow", 8, 24, 8, 24},
		{"80x24", 80, 24, 80, 24},
		{"300x100", 300, 100, 300, 100},
		{"clamped", 5000, 3000, MaxWidth, MaxHeight},
	}
	var c Canvas
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			for _, ascii := range []bool{false, true} {
				g := c.Bode(tt.w, tt.h, Options{ASCII: ascii, Cursor: 1000}, Axis{Auto: true}, Axis{Auto: true}, cv)
				checkShape(t, g, tt.wantW, tt.wantH)
				if ascii {
					for _, cell := range g.Cells {
						if cell.Rune > 0x7f {
							t.Fatalf("ASCII grid holds %q (%v)", cell.Rune, cell.Kind)
						}
					}
				}
			}
		})
	}
	// More panels than rows: the extra ones are left out.
	g := c.Render(30, 3, Options{}, Panel{}, Panel{}, Panel{})
	checkShape(t, g, 30, 3)
	if len(g.Panels) != 2 {
		t.Errorf("%d panels laid out in 2 rows", len(g.Panels))
	}
}

func TestLengthMismatchPanics(t *testing.T) {
	defer func() {
		r := recover()
		msg, _ := r.(string)
		if !strings.Contains(msg, "2 frequencies and 1 values") {
			t.Errorf("panic %v, want a message naming the lengths", r)
		}
	}()
	Render(40, 10, Options{}, Panel{Series: []Series{{Freq: []float64{1, 2}, Value: []float64{1}}}})
	t.Error("no panic")
}

// TestRerenderNoAllocs checks that a canvas redraws a frame of the same
// size without allocating.
func TestRerenderNoAllocs(t *testing.T) {
	curves := benchCurves(500)
	var c Canvas
	opt := Options{From: 20, To: 20e3, Cursor: 1000}
	c.Bode(160, 48, opt, Axis{Auto: true}, Axis{Auto: true}, curves...)
	allocs := testing.AllocsPerRun(20, func() {
		c.Bode(160, 48, opt, Axis{Auto: true}, Axis{Auto: true}, curves...)
	})
	if allocs != 0 {
		t.Errorf("%g allocations per redraw, want 0", allocs)
	}
	buf := c.grid.AppendText(nil)
	allocs = testing.AllocsPerRun(20, func() { buf = c.grid.AppendText(buf[:0]) })
	if allocs != 0 {
		t.Errorf("%g allocations per AppendText into a reused buffer, want 0", allocs)
	}
}

// TestPanelRows checks the heights asked for with Panel.Rows and the
// fallback to even sharing; the expected rows are counted by hand.
func TestPanelRows(t *testing.T) {
	p := func(rows int) Panel { return Panel{Title: "p", Y: Axis{Auto: true}, Rows: rows} }
	cases := []struct {
		name   string
		h      int
		panels []Panel
		want   []int
	}{
		// 30 rows: 29 for panels after the label row.
		{"none asked", 30, []Panel{p(0), p(0), p(0)}, []int{10, 10, 9}},
		{"third asks 5", 30, []Panel{p(0), p(0), p(5)}, []int{12, 12, 5}},
		{"first asks 4, odd rest", 30, []Panel{p(4), p(0), p(0)}, []int{4, 13, 12}},
		{"all ask: even", 30, []Panel{p(5), p(5), p(5)}, []int{10, 10, 9}},
		{"too much asked: even", 30, []Panel{p(0), p(0), p(28)}, []int{10, 10, 9}},
		{"exactly one row each left", 30, []Panel{p(0), p(0), p(27)}, []int{1, 1, 27}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var c Canvas
			g := c.Render(60, tc.h, Options{}, tc.panels...)
			if len(g.Panels) != len(tc.want) {
				t.Fatalf("%d panels drawn, want %d", len(g.Panels), len(tc.want))
			}
			top := 0
			for i, l := range g.Panels {
				if l.Rows != tc.want[i] || l.Top != top {
					t.Errorf("panel %d: top %d rows %d, want top %d rows %d", i, l.Top, l.Rows, top, tc.want[i])
				}
				top += l.Rows
			}
		})
	}
}
