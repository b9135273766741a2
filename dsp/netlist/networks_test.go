package netlist

import (
	"math"
	"path/filepath"
	"testing"
)

// The example networks are checked against the design formulas of
// REFERENCES §5, whose check values (verified there against ngspice-39)
// are used first to confirm each formula as written here.

const (
	relTol   = 1e-6 // formula against a REFERENCES check value given to 6–7 digits
	designHz = 0.05 // a design frequency may miss its target by 5 %
)

// value returns the value of the named element, failing the test when it
// is absent.
func value(t *testing.T, n *Netlist, name string) float64 {
	t.Helper()
	e, ok := n.Element(name)
	if !ok {
		t.Fatalf("%s: no element %s", n.Name, name)
	}
	return e.Value
}

// sallenKey returns f0 and Q of the unity-gain Sallen-Key low-pass
// H = 1/(1 + s·C2(R1+R2) + s²R1R2C1C2), C1 from the middle node to the
// output and C2 to ground (REFERENCES §5).
func sallenKey(r1, r2, c1, c2 float64) (f0, q float64) {
	p := r1 * r2 * c1 * c2
	return 1 / (2 * math.Pi * math.Sqrt(p)), math.Sqrt(p) / (c2 * (r1 + r2))
}

func near(got, want, rel float64) bool { return math.Abs(got-want) <= rel*math.Abs(want) }

func parallel(a, b float64) float64 { return a * b / (a + b) }

func TestExampleNetworks(t *testing.T) {
	// Formula checks against REFERENCES §5 [V].
	if fc := 1 / (2 * math.Pi * 10e3 * 15e-9); !near(fc, 1061.0330, relTol) {
		t.Fatalf("RC corner %v, REFERENCES §5 gives 1061.0330 Hz", fc)
	}
	if f0, q := sallenKey(10e3, 10e3, 22e-9, 10e-9); !near(f0, 1073.022, relTol) || !near(q, 0.741620, relTol) {
		t.Fatalf("Sallen-Key f0 %v, Q %v; REFERENCES §5 gives 1073.022 Hz, 0.741620", f0, q)
	}
	if f0 := 1 / (2 * math.Pi * math.Sqrt(10e-3*100e-9)); !near(f0, 5032.921, relTol) {
		t.Fatalf("RLC f0 %v, REFERENCES §5 gives 5032.921 Hz", f0)
	}

	cases := []struct {
		file  string
		count int
		check func(t *testing.T, n *Netlist)
	}{
		{"rc-lowpass.cir", 2, func(t *testing.T, n *Netlist) {
			// REFERENCES §5: R = 10 kΩ, C = 15 nF, fc = 1061.0330 Hz.
			r, c := value(t, n, "R1"), value(t, n, "C1")
			if r != 10e3 || c != 15e-9 {
				t.Errorf("R1 = %v, C1 = %v; want 10k and 15n", r, c)
			}
			if fc := 1 / (2 * math.Pi * r * c); !near(fc, 1061.0330, relTol) {
				t.Errorf("corner %v Hz, want 1061.0330", fc)
			}
		}},
		{"hum-notch.cir", 12, func(t *testing.T, n *Netlist) {
			// Twin-T (REFERENCES §5): arms R, R, R/2 and C, C, 2C;
			// ω0 = 1/(RC). The R/2 and 2C are built from pairs.
			r, c := value(t, n, "R1"), value(t, n, "C1")
			if value(t, n, "R2") != r || value(t, n, "C2") != c {
				t.Error("the twin-T arms are not equal")
			}
			if half := parallel(value(t, n, "R3"), value(t, n, "R4")); half != r/2 {
				t.Errorf("leg resistance %v, want R/2 = %v", half, r/2)
			}
			if twice := value(t, n, "C3") + value(t, n, "C4"); twice != 2*c {
				t.Errorf("leg capacitance %v, want 2C = %v", twice, 2*c)
			}
			if f0 := 1 / (2 * math.Pi * r * c); !near(f0, 50, designHz) {
				t.Errorf("notch at %v Hz, want near 50", f0)
			}
		}},
		{"sub-feed.cir", 7, func(t *testing.T, n *Netlist) {
			f0, q := sallenKey(value(t, n, "R1"), value(t, n, "R2"), value(t, n, "C1"), value(t, n, "C2"))
			if !near(f0, 90, designHz) || q < 0.7 || q > 0.75 {
				t.Errorf("f0 %v Hz, Q %v; want near 90 Hz and about 0.71–0.75", f0, q)
			}
		}},
		{"presence.cir", 6, func(t *testing.T, n *Netlist) {
			// Series RLC: f0 = 1/(2π√(LC)) (REFERENCES §5).
			if f0 := 1 / (2 * math.Pi * math.Sqrt(value(t, n, "L1")*value(t, n, "C1"))); !near(f0, 3000, designHz) {
				t.Errorf("peak at %v Hz, want near 3 kHz", f0)
			}
			// Peak gain 1 + Rf/R2 = 2 for +6 dB.
			if g := 1 + value(t, n, "Rf")/value(t, n, "R2"); g != 2 {
				t.Errorf("peak gain %v, want 2", g)
			}
		}},
		{"crossover-lr4.cir", 17, func(t *testing.T, n *Netlist) {
			// Each stage is a second-order Butterworth section,
			// s² + 1.4142s + 1 (REFERENCES §5, Carter & Mancini): Q = 1/√2.
			for _, s := range [][4]string{{"R1", "R2", "C1a", "C2"}, {"R3", "R4", "C3a", "C4"}} {
				c1 := value(t, n, s[2]) + value(t, n, s[2][:2]+"b")
				f0, q := sallenKey(value(t, n, s[0]), value(t, n, s[1]), c1, value(t, n, s[3]))
				if !near(q, 1/math.Sqrt2, 1e-9) || !near(f0, 2000, designHz) {
					t.Errorf("stage %v: f0 %v Hz, Q %v; want near 2 kHz and 0.70711", s, f0, q)
				}
			}
		}},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			n, err := ParseFile(filepath.Join("..", "..", "testdata", "networks", c.file))
			if err != nil {
				t.Fatal(err)
			}
			if len(n.Elements) != c.count || n.Title == "" || n.In != "in" || n.Out != "out" {
				t.Errorf("%d elements, title %q, io %q %q; want %d elements, a title, in and out",
					len(n.Elements), n.Title, n.In, n.Out, c.count)
			}
			c.check(t, n)
		})
	}
}
