package mna

import (
	"errors"
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"tonetrace/dsp/netlist"
	"tonetrace/dsp/trace"
)

// TestNetworkSetValue checks that SetValue restamps to the same system a
// fresh Build gives, and that the RC corner moves as 1/(2πRC).
func TestNetworkSetValue(t *testing.T) {
	fx := Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}
	src := sallenKey(10e3, 10e3, 22e-9, 10e-9, el("U1", "out b out", 0))
	w, err := NewNetwork(src, fx)
	if err != nil {
		t.Fatal(err)
	}
	src.Elements[0].Value = 1 // the Network keeps its own copy
	if v, ok := w.Value("r1"); !ok || v != 10e3 {
		t.Fatalf("Value(r1) = %v, %v; want 10000, true", v, ok)
	}
	for _, set := range []struct {
		name string
		v    float64
	}{{"R1", 4.7e3}, {"c2", 6.8e-9}, {"C1", 33e-9}} {
		if err := w.SetValue(set.name, set.v); err != nil {
			t.Fatalf("SetValue(%s, %g): %v", set.name, set.v, err)
		}
	}
	want := mustBuild(t, sallenKey(4.7e3, 10e3, 33e-9, 6.8e-9, el("U1", "out b out", 0)), fx)
	got := w.Descriptor()
	if !equalDense(got.G.RawMatrix().Data, want.G.RawMatrix().Data) || !equalDense(got.C.RawMatrix().Data, want.C.RawMatrix().Data) {
		t.Errorf("restamped system differs from a fresh Build")
	}
	ws := NewSolver(want)
	for _, f := range []float64{10, 1000, 1e5} {
		h, err := w.Response(f)
		if err != nil || cmplx.Abs(h-mustResponse(t, ws, f)) > 1e-15 {
			t.Errorf("%g Hz: %v, %v", f, h, err)
		}
	}
	if n := w.Netlist(); n.Elements[0].Value != 4.7e3 || n.Elements[3].Value != 6.8e-9 {
		t.Errorf("Netlist() values %v %v", n.Elements[0].Value, n.Elements[3].Value)
	}

	// The corner of an RC low-pass follows R: fc = 1/(2πRC) (common
	// practice).
	rc, err := NewNetwork(rcLowPass(), Fixture{})
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range []float64{1e3, 4.7e3, 22e3} {
		if err := rc.SetValue("R1", r); err != nil {
			t.Fatal(err)
		}
		h, _ := rc.Response(1 / (2 * math.Pi * r * rcC))
		if math.Abs(db(h)+3.0103) > tolDB || math.Abs(deg(h)+45) > tolDeg { // REFERENCES §5: −3.0103 dB, −45° at fc
			t.Errorf("R = %g: %.5f dB %.5f° at fc", r, db(h), deg(h))
		}
	}
}

func equalDense(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > 1e-15*max(math.Abs(a[i]), math.Abs(b[i])) {
			return false
		}
	}
	return true
}

// TestNetworkErrors checks that bad SetValue and SetFixture calls fail
// with a clear message and leave the network as it was.
func TestNetworkErrors(t *testing.T) {
	loop := nl("gain loop", el("R1", "in a", 1e3), el("R2", "a 0", 1e3), el("E1", "b 0 c 0", 1),
		el("E2", "c 0 b 0", 0.5), el("R3", "b out", 1e3), el("R4", "out 0", 1e3), el("U1", "x 0 x", 0), el("R5", "x 0", 1))
	w, err := NewNetwork(loop, Fixture{})
	if err != nil {
		t.Fatal(err)
	}
	before, _ := w.Response(1000)
	cases := []struct {
		name     string
		run      func() error
		want     string
		singular bool
	}{
		{"unknown element", func() error { return w.SetValue("R9", 1) }, `no element named "R9"`, false},
		{"amplifier", func() error { return w.SetValue("u1", 1) }, "U1 is an ideal amplifier", false},
		{"negative resistor", func() error { return w.SetValue("R1", -1) }, "R1: resistance is -1", false},
		{"loop gain 1", func() error { return w.SetValue("E2", 1) }, "singular at every frequency", true},
		{"bad fixture", func() error { return w.SetFixture(Fixture{LoadOhms: -1}) }, "LoadOhms is -1", false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := c.run()
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want one containing %q", err, c.want)
			}
			if errors.Is(err, ErrSingular) != c.singular {
				t.Errorf("errors.Is(ErrSingular) = %v, want %v", !c.singular, c.singular)
			}
			if h, err := w.Response(1000); err != nil || h != before {
				t.Errorf("after the failed call H = %v, %v; want %v", h, err, before)
			}
		})
	}
	if v, _ := w.Value("E2"); v != 0.5 {
		t.Errorf("E2 = %v after failed SetValue, want 0.5", v)
	}
	if _, err := NewNetwork(nil, Fixture{}); err == nil {
		t.Error("NewNetwork(nil) succeeded")
	}
}

// TestNetworkSetFixture checks that changing the fixture rebuilds the
// system (a source resistance of 0 adds the source current) and gives the
// loaded response of REFERENCES §6.
func TestNetworkSetFixture(t *testing.T) {
	w, err := NewNetwork(rcLowPass(), Fixture{})
	if err != nil {
		t.Fatal(err)
	}
	if n := w.Descriptor().Size(); n != 3 {
		t.Errorf("ideal source: %d unknowns, want 3", n)
	}
	fx := Fixture{SourceOhms: 100, LoadOhms: 10e3}
	if err := w.SetFixture(fx); err != nil {
		t.Fatal(err)
	}
	if w.Fixture() != fx || w.Descriptor().Size() != 2 {
		t.Errorf("fixture %+v, %d unknowns", w.Fixture(), w.Descriptor().Size())
	}
	h, _ := w.Response(0)
	if math.Abs(db(h)+6.0639) > tolDB { // REFERENCES §6: DC gain −6.0639 dB
		t.Errorf("DC gain %.5f dB, want −6.0639 dB", db(h))
	}
}

// TestNetworkAllocs checks that a Network's Response and a Solver's
// ResponsesTo allocate nothing.
func TestNetworkAllocs(t *testing.T) {
	w, err := NewNetwork(sallenKey(10e3, 10e3, 22e-9, 10e-9, el("U1", "out b out", 0)), Fixture{SourceOhms: 50, LoadOhms: 10e3})
	if err != nil {
		t.Fatal(err)
	}
	freqs := logFreqs(100, 20, 20e3)
	dst := make([]complex128, len(freqs))
	if a := testing.AllocsPerRun(20, func() { _, _ = w.Response(1000) }); a != 0 {
		t.Errorf("Response: %v allocations, want 0", a)
	}
	if a := testing.AllocsPerRun(5, func() { _, _ = w.ResponsesTo(dst, freqs) }); a != 0 {
		t.Errorf("ResponsesTo: %v allocations, want 0", a)
	}
	if a := testing.AllocsPerRun(20, func() { _ = w.SetValue("R1", 4.7e3) }); a > 20 {
		t.Errorf("SetValue: %v allocations, want few", a)
	}
}

// logFreqs returns n log-spaced frequencies from lo to hi.
func logFreqs(n int, lo, hi float64) []float64 {
	f := make([]float64, n)
	for i := range f {
		f[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	return f
}

// TestPredict checks the trace's points against the solver and its
// metadata against the fixture, and the frequency checks.
func TestPredict(t *testing.T) {
	n := rcLowPass()
	n.Name = "rc.cir"
	fx := Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}
	d := mustBuild(t, n, fx)
	freqs := logFreqs(31, 20, 20e3)
	tr, err := Predict(d, freqs)
	if err != nil {
		t.Fatal(err)
	}
	s := NewSolver(d)
	for i, p := range tr.Points {
		if p.Freq != freqs[i] || p.H != mustResponse(t, s, freqs[i]) || !math.IsNaN(p.Coherence) {
			t.Errorf("point %d: %+v", i, p)
		}
	}
	for key, want := range map[string]string{
		MetaMethod: "modified nodal analysis", MetaNetwork: "rc.cir",
		MetaSourceOhms: "100", MetaLoadOhms: "47000", MetaLoadFarads: "1e-10",
	} {
		if got, ok := tr.MetaValue(key); !ok || got != want {
			t.Errorf("meta %s = %q, %v; want %q", key, got, ok, want)
		}
	}
	// The fixture written reads back to the same numbers.
	tr, _ = Predict(mustBuild(t, rcLowPass(), Fixture{}), freqs)
	if v, _ := tr.MetaValue(MetaLoadOhms); v != "inf" {
		t.Errorf("unloaded load_ohms = %q, want inf", v)
	}
	if v, _ := tr.MetaValue(MetaSourceOhms); v != "0" {
		t.Errorf("ideal source_ohms = %q, want 0", v)
	}
	if _, ok := tr.MetaValue(MetaNetwork); !ok {
		t.Errorf("no network name from the title")
	}
	var buf strings.Builder
	if err := trace.Write(&buf, &tr); err != nil {
		t.Errorf("trace.Write of a prediction: %v", err)
	}

	caps := mustBuild(t, nl("caps", el("C1", "in a", 1e-9), el("C2", "a out", 1e-9), el("R1", "out 0", 1e3)), Fixture{})
	for _, c := range []struct {
		name  string
		d     *Descriptor
		freqs []float64
		want  string
	}{
		{"descending", d, []float64{100, 50}, "frequency 2 (50 Hz) is not above"},
		{"repeated", d, []float64{100, 100}, "frequency 2 (100 Hz) is not above"},
		{"negative", d, []float64{-1, 100}, "frequency 1 is -1 Hz"},
		{"NaN", d, []float64{10, math.NaN()}, "frequency 2 is NaN Hz"},
		{"singular at DC", caps, []float64{0, 100}, "at 0 Hz"},
	} {
		t.Run(c.name, func(t *testing.T) {
			if _, err := Predict(c.d, c.freqs); err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want one containing %q", err, c.want)
			}
		})
	}
	if tr, err := Predict(d, nil); err != nil || len(tr.Points) != 0 {
		t.Errorf("Predict of no frequencies: %v, %v", tr, err)
	}
}

// TestParsedNetlist builds a netlist read by the netlist package from
// text with RKM codes and compares it with the same circuit built in code.
func TestParsedNetlist(t *testing.T) {
	text := `* Sallen-Key low-pass of REFERENCES §5
R1 in a 10k
R2 a b 10k
C1 a out 22n
C2 b 0 10n
U1 out b out
`
	n, err := netlist.Parse(strings.NewReader(text), "sk.cir")
	if err != nil {
		t.Fatal(err)
	}
	s := NewSolver(mustBuild(t, n, Fixture{}))
	ref := NewSolver(mustBuild(t, sallenKey(10e3, 10e3, 22e-9, 10e-9, el("U1", "out b out", 0)), Fixture{}))
	for _, f := range []float64{100, 1073.022, 1e4} {
		if got, want := mustResponse(t, s, f), mustResponse(t, ref, f); cmplx.Abs(got-want) > 1e-15 {
			t.Errorf("%g Hz: %v, want %v", f, got, want)
		}
	}
	tr, err := Predict(s.Descriptor(), []float64{1073.022})
	if err != nil {
		t.Fatal(err)
	}
	if v, _ := tr.MetaValue(MetaNetwork); v != "sk.cir" {
		t.Errorf("network = %q, want sk.cir", v)
	}
}
