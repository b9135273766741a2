package plot

import (
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// kindMap returns one character per cell saying what it shows: the
// trace's style digit (x when clipped, C in the cursor column), g grid,
// a axis, l label, t title, n legend name, c cursor, space blank.
func kindMap(g *Grid) string {
	var b strings.Builder
	for r := 0; r < g.H; r++ {
		if r > 0 {
			b.WriteByte('\n')
		}
		for _, c := range g.Row(r) {
			ch := byte('?')
			switch c.Kind {
			case KindBlank:
				ch = ' '
			case KindTrace:
				ch = byte('0' + c.Style%10)
				if c.Clipped {
					ch = 'x'
				} else if c.Cursor {
					ch = 'C'
				}
			case KindGrid:
				ch = 'g'
			case KindAxis:
				ch = 'a'
			case KindLabel:
				ch = 'l'
			case KindTitle:
				ch = 't'
			case KindLegend:
				ch = 'n'
			case KindCursor:
				ch = 'c'
			}
			b.WriteByte(ch)
		}
	}
	return b.String()
}

// TestGolden renders the first-order RC low-pass of REFERENCES.md §5
// (R = 10 kΩ, C = 15 nF, fc = 1061.033 Hz, ngspice-39 [V]; its values are
// checked in TestRCReference) as a Bode plot and compares the text and
// the cell kinds with testdata/*.golden. Refresh with -update after
// checking the new output by eye.
func TestGolden(t *testing.T) {
	freqs := logGrid(10, 100e3, 200, rcFc)
	lp := rcCurve("RC low-pass 10k/15n", 1, freqs, rcLowpass)
	hp := rcCurve("high-pass", 2, freqs, rcHighpass)
	tests := []struct {
		name   string
		w, h   int
		opt    Options
		curves []Curve
	}{
		{"rc_lowpass_80x24", 80, 24, Options{From: 20, To: 20e3}, []Curve{lp}},
		{"rc_lowpass_160x48", 160, 48, Options{From: 10, To: 100e3, Cursor: rcFc}, []Curve{lp}},
		{"rc_lowpass_highpass_80x24_ascii", 80, 24, Options{From: 20, To: 20e3, ASCII: true}, []Curve{lp, hp}},
		{"rc_lowpass_20x6", 20, 6, Options{From: 20, To: 20e3}, []Curve{lp}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := Bode(tt.w, tt.h, tt.opt, Axis{Auto: true}, Axis{Auto: true}, tt.curves...)
			checkShape(t, &g, tt.w, tt.h)
			got := g.String() + "\n--- kinds ---\n" + kindMap(&g) + "\n"
			path := filepath.Join("testdata", tt.name+".golden")
			if *update {
				if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("%v (run go test ./tui/plot -update to create it)", err)
			}
			if got != string(want) {
				t.Errorf("%s differs from the golden file; got:\n%s", path, got)
			}
		})
	}
}
