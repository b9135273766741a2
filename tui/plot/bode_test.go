package plot

import (
	"math"
	"strings"
	"testing"

	"tonetrace/dsp/trace"
)

// TestCurveFromPoints checks the conversion from trace points: gain and
// phase of REFERENCES.md §5 points come back, and the phase is unwrapped
// across ±180°.
func TestCurveFromPoints(t *testing.T) {
	pts := []trace.Point{
		// RC low-pass, REFERENCES.md §5 (ngspice-39 [V]).
		trace.FromPolar(0.5*rcFc, -0.9691, -26.5651),
		trace.FromPolar(rcFc, -3.0103, -45),
		trace.FromPolar(2*rcFc, -6.9897, -63.4349),
		// A phase running on past −180° (e.g. a delay): wrapped it reads
		// +170°, unwrapped −190°.
		trace.FromPolar(4*rcFc, -12, -170),
		trace.FromPolar(8*rcFc, -18, -190),
	}
	want := []struct{ gain, phase float64 }{
		{-0.9691, -26.5651}, {-3.0103, -45}, {-6.9897, -63.4349}, {-12, -170}, {-18, -190},
	}
	const tol = 1e-9
	dst := Curve{Name: "kept", Style: 5, Freq: make([]float64, 0, 8)}
	backing := &dst.Freq[:1][0]
	c := CurveFromPoints(dst, pts)
	if c.Name != "kept" || c.Style != 5 {
		t.Errorf("name %q style %d not kept", c.Name, c.Style)
	}
	if &c.Freq[0] != backing {
		t.Error("Freq not reused although it had the capacity")
	}
	for i, w := range want {
		if c.Freq[i] != pts[i].Freq || math.Abs(c.Gain[i]-w.gain) > tol || math.Abs(c.Phase[i]-w.phase) > tol {
			t.Errorf("point %d: %g Hz %g dB %g°, want %g Hz %g dB %g°",
				i, c.Freq[i], c.Gain[i], c.Phase[i], pts[i].Freq, w.gain, w.phase)
		}
	}
	// Zero gain is −Inf dB: drawn clipped at the bottom, not a panic.
	c = CurveFromPoints(c, []trace.Point{trace.NewPoint(100, 0), trace.NewPoint(1000, 1)})
	if !math.IsInf(c.Gain[0], -1) {
		t.Errorf("zero ratio gives %g dB, want -Inf", c.Gain[0])
	}
	g := Bode(40, 12, Options{}, Axis{Min: -10, Max: 10}, Axis{Auto: true}, c)
	checkShape(t, &g, 40, 12)
}

func TestFixedGutter(t *testing.T) {
	p := Panel{Title: "Gain", Y: Axis{Min: -1000, Max: 1000, Unit: "dB"}}
	tests := []struct {
		name     string
		w        int
		gutter   int
		wantLeft int
		labels   bool // whether "-1000" fits
	}{
		{"auto", 60, 0, 6, true},
		{"wide fixed", 60, 9, 9, true},
		{"narrow fixed drops long labels", 60, 4, 4, false},
		{"error: fixed wider than the plot", 10, 9, 0, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := Render(tt.w, 12, Options{Gutter: tt.gutter}, p)
			checkShape(t, &g, tt.w, 12)
			if g.X.Left != tt.wantLeft || g.X.Left+g.X.Width != tt.w {
				t.Errorf("plot columns %d+%d, want from %d to %d", g.X.Left, g.X.Width, tt.wantLeft, tt.w)
			}
			if got := strings.Contains(g.String(), "-1000"); got != tt.labels {
				t.Errorf("label -1000 shown %v, want %v:\n%s", got, tt.labels, g.String())
			}
		})
	}
}
