package fit

import (
	"errors"
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
)

// skNetlist is the unity-gain Sallen-Key low-pass of REFERENCES.md §5 as
// a netlist: R1 from the input to a, R2 from a to b, C1 from a to the
// output (the feedback capacitor), C2 from b to ground, and a follower.
const skNetlist = `* unity-gain Sallen-Key low-pass
R1 in a 10k
R2 a b 10k
C1 a out 22n
C2 b 0 10n
U1 out b out
`

// rcNetlist is the first-order RC low-pass of REFERENCES.md §5.
const rcNetlist = `* RC low-pass
R1 in out 10k
C1 out 0 15n
`

func mustModel(t testing.TB, text string, fx mna.Fixture) *NetlistModel {
	t.Helper()
	n, err := netlist.Parse(strings.NewReader(text), "")
	if err != nil {
		t.Fatal(err)
	}
	m, err := NewNetlistModel(n, fx)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestNetlistModelAgainstSpice checks the adapter's responses against the
// ngspice values of REFERENCES.md §5 (Sallen-Key) and §6 (the RC low-pass
// behind a 100 Ω source into a 10 kΩ input: DC gain −6.0639 dB,
// fc′ = 2111.56 Hz) [V].
func TestNetlistModelAgainstSpice(t *testing.T) {
	sk := mustModel(t, skNetlist, mna.Fixture{})
	if got := strings.Join(sk.Params(), " "); got != "R1 R2 C1 C2" {
		t.Errorf("Params = %q, want the valued elements R1 R2 C1 C2", got)
	}
	if v := sk.Value("c1"); v != 22e-9 {
		t.Errorf("Value(c1) = %g", v)
	}
	if v := sk.Value("U1"); !math.IsNaN(v) {
		t.Errorf("Value(U1) = %g, want NaN (an amplifier has no value)", v)
	}
	h := make([]complex128, 2)
	if err := sk.Evaluate(h, []float64{1073.022, 2 * 1073.022}, nil, nil); err != nil {
		t.Fatal(err)
	}
	// REFERENCES.md §5 [V]: at f0 −2.5964 dB, −90°; at 2·f0 −12.1146 dB, −138.047°.
	checkPolar(t, "SK f0", h[0], -2.5964, -90, 1e-3)
	checkPolar(t, "SK 2f0", h[1], -12.1146, -138.047, 5e-4)

	rc := mustModel(t, rcNetlist, mna.Fixture{SourceOhms: 100, LoadOhms: 10e3})
	fcp := 2111.56 // REFERENCES.md §6 [V]
	if err := rc.Evaluate(h, []float64{0, fcp}, nil, nil); err != nil {
		t.Fatal(err)
	}
	checkPolar(t, "RC fixture DC", h[0], -6.0639, 0, spiceTol)
	// At fc′ the gain is 3.0103 dB under the DC gain and the phase −45°.
	checkPolar(t, "RC fixture fc'", h[1], -6.0639-3.0103, -45, 1e-3)
}

func checkPolar(t *testing.T, name string, h complex128, db, deg, tol float64) {
	t.Helper()
	gdb := 20 * math.Log10(cmplx.Abs(h))
	gdeg := cmplx.Phase(h) * 180 / math.Pi
	if math.Abs(gdb-db) > tol || math.Abs(gdeg-deg) > tol {
		t.Errorf("%s: %.5f dB, %.5f°; want %.4f dB, %.4f°", name, gdb, gdeg, db, deg)
	}
}

// TestNetlistModelFit fits netlist components to traces made by the same
// network with other values, and checks the fit returns those values
// (noiseless traces have an exact solution). With a 10 kΩ load the RC
// section's DC gain RL/(RL+Rs+R) depends on R alone (REFERENCES.md §6),
// so R1 and C1 become separately identifiable; without a load they are
// not.
func TestNetlistModelFit(t *testing.T) {
	fr := logGrid(20, 20e3, 50)
	cases := []struct {
		name  string
		text  string
		fx    mna.Fixture
		truth map[string]float64
		free  []string
	}{
		{"Sallen-Key C1 C2", skNetlist, mna.Fixture{}, map[string]float64{"C1": 33e-9, "C2": 6.8e-9}, []string{"C1", "C2"}},
		{"Sallen-Key R2 C2", skNetlist, mna.Fixture{SourceOhms: 50}, map[string]float64{"R2": 12e3, "C2": 8.2e-9}, []string{"R2", "C2"}},
		{"RC R1 C1 loaded", rcNetlist, mna.Fixture{SourceOhms: 100, LoadOhms: 10e3}, map[string]float64{"R1": 12e3, "C1": 18e-9}, []string{"R1", "C1"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			truth := mustModel(t, c.text, c.fx)
			var idx []int
			var vals []float64
			for _, name := range c.free {
				idx = append(idx, indexFold(truth.Params(), name))
				vals = append(vals, c.truth[name])
			}
			h := make([]complex128, len(fr))
			if err := truth.Evaluate(h, fr, idx, vals); err != nil {
				t.Fatal(err)
			}
			meas := points(fr, h)
			res, err := Fit(mustModel(t, c.text, c.fx), meas, c.free, Options{})
			if err != nil {
				t.Fatal(err)
			}
			for _, comp := range res.Components {
				if e := relErr(comp.Value, c.truth[comp.Name]); e > 1e-7 {
					t.Errorf("%s = %g, want %g", comp.Name, comp.Value, c.truth[comp.Name])
				}
			}
		})
	}
	// Unloaded, R1 and C1 of the RC section act only through R1·C1.
	m := mustModel(t, rcNetlist, mna.Fixture{})
	_, err := Fit(m, synth(m, fr), []string{"R1", "C1"}, Options{})
	var ni *NotIdentifiableError
	if !errors.As(err, &ni) || ni.Relation != Product {
		t.Errorf("unloaded RC: error %v, want R1 and C1 only act through their product", err)
	}
}

// TestNetlistModelRestores checks that a parameter freed in one
// evaluation returns to its nominal value when the next leaves it fixed.
func TestNetlistModelRestores(t *testing.T) {
	m := mustModel(t, rcNetlist, mna.Fixture{})
	fr := []float64{1061.033}
	a := make([]complex128, 1)
	b := make([]complex128, 1)
	if err := m.Evaluate(a, fr, nil, nil); err != nil {
		t.Fatal(err)
	}
	if err := m.Evaluate(b, fr, []int{1}, []float64{1e-6}); err != nil {
		t.Fatal(err)
	}
	if err := m.Evaluate(b, fr, nil, nil); err != nil {
		t.Fatal(err)
	}
	if a[0] != b[0] {
		t.Errorf("after freeing C1 and fixing it again H = %v, want %v", b[0], a[0])
	}
	if err := m.Evaluate(b, fr, []int{0}, []float64{-5}); err == nil {
		t.Error("a negative resistance was accepted")
	}
}

// BenchmarkFitNetlist is BenchmarkFit with the Sallen-Key solved by MNA.
func BenchmarkFitNetlist(b *testing.B) {
	fr := logGrid(20, 20e3, 100)
	truth := mustModel(b, skNetlist, mna.Fixture{})
	meas := synth(truth, fr)
	m := mustModel(b, skNetlist, mna.Fixture{})
	start := map[string]float64{"C1": 47e-9, "C2": 4.7e-9}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Fit(m, meas, []string{"C1", "C2"}, Options{Start: start}); err != nil {
			b.Fatal(err)
		}
	}
}
