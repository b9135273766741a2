package mna

import (
	"errors"
	"math"
	"math/cmplx"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"tonetrace/dsp/netlist"
)

// TestStamps compares the stamped matrices with ones written out by hand
// from the MNA stamps of Ho, Ruehli & Brennan, "The modified nodal
// approach to network analysis", IEEE Trans. CAS-22(6):504–509, 1975
// (from memory), and the nullor stamp of Vlach & Singhal, "Computer
// Methods for Circuit Analysis and Design", 1983 (from memory).
func TestStamps(t *testing.T) {
	cases := []struct {
		name     string
		n        *netlist.Netlist
		fx       Fixture
		unknowns []string
		g, c     []float64
		b        []float64
		out      int
		h        complex128 // H at 0 Hz
	}{
		{
			name: "R, L, C, ideal source, loaded",
			n:    nl("rlc", el("R1", "in a", 2000), el("L1", "a out", 1e-3), el("C1", "out 0", 1e-6)),
			fx:   Fixture{LoadOhms: 4000, LoadFarads: 1e-9},
			// in, a, out, I(L1), I(source)
			unknowns: []string{"V(in)", "V(a)", "V(out)", "I(L1)", "I(source)"},
			g: []float64{
				5e-4, -5e-4, 0, 0, 1,
				-5e-4, 5e-4, 0, 1, 0,
				0, 0, 2.5e-4, -1, 0,
				0, 1, -1, 0, 0,
				1, 0, 0, 0, 0,
			},
			c: []float64{
				0, 0, 0, 0, 0,
				0, 0, 0, 0, 0,
				0, 0, 1e-6 + 1e-9, 0, 0,
				0, 0, 0, -1e-3, 0,
				0, 0, 0, 0, 0,
			},
			b:   []float64{0, 0, 0, 0, 1},
			out: 2,
			h:   4000.0 / 6000,
		},
		{
			name: "VCVS and op-amp, Norton source",
			n: nl("amp", el("R1", "in a", 1000), el("E1", "b 0 a 0", 3), el("R2", "b n", 1000),
				el("R3", "n out", 2000), el("U1", "out 0 n", 0)),
			fx:       Fixture{SourceOhms: 50},
			unknowns: []string{"V(in)", "V(a)", "V(b)", "V(n)", "V(out)", "I(E1)", "I(U1)"},
			g: []float64{
				1e-3 + 0.02, -1e-3, 0, 0, 0, 0, 0,
				-1e-3, 1e-3, 0, 0, 0, 0, 0,
				0, 0, 1e-3, -1e-3, 0, 1, 0,
				0, 0, -1e-3, 1e-3 + 5e-4, -5e-4, 0, 0,
				0, 0, 0, -5e-4, 5e-4, 0, 1,
				0, -3, 1, 0, 0, 0, 0,
				0, 0, 0, -1, 0, 0, 0,
			},
			c:   make([]float64, 49),
			b:   []float64{0.02, 0, 0, 0, 0, 0, 0},
			out: 4,
			h:   -6, // gain 3, then an inverting gain of 2
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d := mustBuild(t, c.n, c.fx)
			k := len(c.b)
			if !slices.Equal(d.Unknowns, c.unknowns) {
				t.Errorf("Unknowns %q, want %q", d.Unknowns, c.unknowns)
			}
			if d.Size() != k || d.Out != c.out {
				t.Fatalf("Size %d Out %d, want %d %d", d.Size(), d.Out, k, c.out)
			}
			if want := mat.NewDense(k, k, c.g); !mat.EqualApprox(d.G, want, 1e-15) {
				t.Errorf("G =\n%v\nwant\n%v", mat.Formatted(d.G), mat.Formatted(want))
			}
			if want := mat.NewDense(k, k, c.c); !mat.EqualApprox(d.C, want, 1e-15) {
				t.Errorf("C =\n%v\nwant\n%v", mat.Formatted(d.C), mat.Formatted(want))
			}
			if !slices.Equal(d.B, c.b) {
				t.Errorf("B = %v, want %v", d.B, c.b)
			}
			if d.Fixture != c.fx {
				t.Errorf("Fixture %+v, want %+v", d.Fixture, c.fx)
			}
			h, err := d.Response(0)
			if err != nil || cmplx.Abs(h-c.h) > 1e-12 {
				t.Errorf("H(0) = %v, %v; want %v", h, err, c.h)
			}
		})
	}
}

// TestBuildErrors checks that Build rejects bad netlists and fixtures with
// a message naming the fault.
func TestBuildErrors(t *testing.T) {
	good := func() *netlist.Netlist { return rcLowPass() }
	with := func(f func(n *netlist.Netlist)) *netlist.Netlist {
		n := good()
		f(n)
		return n
	}
	cases := []struct {
		name     string
		n        *netlist.Netlist
		fx       Fixture
		want     string // a fragment of the message
		singular bool   // wraps ErrSingular
	}{
		{"nil netlist", nil, Fixture{}, "nil netlist", false},
		{"no elements", nl("empty"), Fixture{}, "no elements", false},
		{"negative source", good(), Fixture{SourceOhms: -1}, "SourceOhms is -1", false},
		{"infinite source", good(), Fixture{SourceOhms: math.Inf(1)}, "SourceOhms is +Inf", false},
		{"NaN load", good(), Fixture{LoadOhms: math.NaN()}, "LoadOhms is NaN", false},
		{"negative load", good(), Fixture{LoadOhms: -10e3}, "LoadOhms is -10000", false},
		{"infinite load capacitance", good(), Fixture{LoadFarads: math.Inf(1)}, "LoadFarads is +Inf", false},
		{"negative load capacitance", good(), Fixture{LoadFarads: -1e-12}, "LoadFarads is -1e-12", false},
		{"unknown input", with(func(n *netlist.Netlist) { n.In = "x" }), Fixture{}, `input node "x" is not in netlist`, false},
		{"unknown output", with(func(n *netlist.Netlist) { n.Out = "y" }), Fixture{}, `output node "y" is not in netlist`, false},
		{"input is ground", with(func(n *netlist.Netlist) { n.In = "gnd" }), Fixture{}, "input node of netlist", false},
		{"output is ground", with(func(n *netlist.Netlist) { n.Out = "0" }), Fixture{}, "output node of netlist", false},
		{"zero resistor", with(func(n *netlist.Netlist) { n.Elements[0].Value = 0 }), Fixture{}, "R1: resistance is 0", false},
		{"negative capacitor", with(func(n *netlist.Netlist) { n.Elements[1].Value = -1e-9 }), Fixture{}, "C1: capacitance is -1e-09", false},
		{"NaN gain", nl("e", el("R1", "in a", 1), el("E1", "out 0 a 0", math.NaN())), Fixture{}, "E1: gain is NaN", false},
		{"infinite inductor", nl("l", el("L1", "in out", math.Inf(1)), el("R1", "out 0", 1)), Fixture{}, "L1: inductance is +Inf", false},
		{"wrong node count", nl("n", el("R1", "in out 0", 1)), Fixture{}, "R1: R takes 2 nodes, got 3", false},
		{"unknown kind", nl("k", netlist.Element{Name: "Q1", Kind: netlist.Kind(9), Nodes: []string{"in", "out"}}), Fixture{}, "unknown element kind 9", false},
		{"duplicate name", nl("d", el("R1", "in out", 1), el("r1", "out 0", 1)), Fixture{}, "already used by R1", false},
		{"element across one node", nl("s", el("R1", "in out", 1), el("C1", "out OUT", 1e-9)), Fixture{}, "C1: both ends are on node out", false},
		{"shorted VCVS", nl("s", el("R1", "in out", 1), el("E1", "out out in 0", 2)), Fixture{}, "E1: both output nodes", false},
		{"amplifier inputs on one node", nl("s", el("R1", "in out", 1), el("U1", "out in in", 0)), Fixture{}, "U1: both inputs are on node in", false},
		{"amplifier output on ground", nl("s", el("R1", "in out", 1), el("R2", "out 0", 1), el("U1", "0 in out", 0)), Fixture{}, "U1: the output is ground", false},
		{"line number in message", &netlist.Netlist{Name: "f.cir", In: "in", Out: "out",
			Elements: []netlist.Element{{Name: "R1", Kind: netlist.Resistor, Nodes: []string{"in", "out"}, Value: -5, Line: 7}}},
			Fixture{}, "f.cir:7: R1: resistance is -5", false},
		{"floating nodes", nl("f", el("R1", "in out", 1e3), el("R2", "out 0", 1e3), el("R3", "x y", 1e3)), Fixture{}, "nodes x, y float", true},
		{"node only at amplifier inputs", nl("f", el("R1", "in out", 1e3), el("U1", "out p out", 0)), Fixture{}, "node p floats", true},
		{"unloaded output without a path", nl("f", el("R1", "in a", 1e3), el("R2", "a 0", 1e3), el("E1", "out b a 0", 1)), Fixture{}, "nodes out, b float", true},
		{"amplifier without feedback", nl("nf", el("R1", "in a", 1e3), el("R2", "a 0", 1e3), el("R3", "n 0", 1e3),
			el("R4", "out 0", 1e3), el("U1", "out a n", 0)), Fixture{}, "op-amp U1 has no feedback", true},
		{"amplifier driving the ideal input", nl("nf", el("R1", "in out", 1e3), el("R2", "out 0", 1e3), el("U1", "out in 0", 0)),
			Fixture{}, "op-amp U1 has no feedback", true},
		{"two amplifiers on one output", nl("two", el("R1", "in n", 1e3), el("R2", "n out", 1e3), el("U1", "out 0 n", 0),
			el("U2", "out 0 n", 0)), Fixture{}, "do not determine", true},
		{"controlled-source loop of gain 1", nl("loop", el("R1", "in a", 1e3), el("R2", "a 0", 1e3), el("E1", "b 0 c 0", 1),
			el("E2", "c 0 b 0", 1), el("R3", "b out", 1e3), el("R4", "out 0", 1e3)), Fixture{}, "singular at every frequency", true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d, err := Build(c.n, c.fx)
			if err == nil {
				t.Fatalf("Build succeeded with %d unknowns %q, want an error containing %q", d.Size(), d.Unknowns, c.want)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q does not contain %q", err, c.want)
			}
			if !strings.HasPrefix(err.Error(), "mna: ") {
				t.Errorf("error %q lacks the mna: prefix", err)
			}
			if got := errors.Is(err, ErrSingular); got != c.singular {
				t.Errorf("errors.Is(ErrSingular) = %v, want %v (%v)", got, c.singular, err)
			}
		})
	}
}

// TestNodeNames checks that node names ignore case, that "gnd" is ground,
// that empty In/Out mean "in"/"out" and that the input may be the output.
func TestNodeNames(t *testing.T) {
	want := mustResponse(t, NewSolver(mustBuild(t, rcLowPass(), Fixture{})), 1000)
	n := &netlist.Netlist{Elements: []netlist.Element{el("R1", "IN Out", rcR), el("C1", "out GND", rcC)}}
	got := mustResponse(t, NewSolver(mustBuild(t, n, Fixture{})), 1000)
	if cmplx.Abs(got-want) > 1e-15 {
		t.Errorf("H = %v, want %v", got, want)
	}
	// Input and output on one node: the divider of Rs and R1 ∥ RL,
	// (2/3 kΩ)/(1 kΩ + 2/3 kΩ) = 0.4 (common practice).
	same := &netlist.Netlist{In: "x", Out: "x", Elements: []netlist.Element{el("R1", "x 0", 1e3)}}
	h := mustResponse(t, NewSolver(mustBuild(t, same, Fixture{SourceOhms: 1e3, LoadOhms: 2e3})), 50)
	if want := complex(0.4, 0); cmplx.Abs(h-want) > 1e-15 {
		t.Errorf("H = %v, want %v", h, want)
	}
	h = mustResponse(t, NewSolver(mustBuild(t, same, Fixture{})), 50)
	if h != 1 {
		t.Errorf("H with an ideal source = %v, want 1", h)
	}
}

// TestResponseErrors checks the solver's frequency checks and a system
// that is singular only at 0 Hz.
func TestResponseErrors(t *testing.T) {
	// Node a is reached only through capacitors: no DC voltage.
	d := mustBuild(t, nl("series caps", el("C1", "in a", 1e-9), el("C2", "a out", 1e-9), el("R1", "out 0", 1e3)), Fixture{})
	s := NewSolver(d)
	cases := []struct {
		name     string
		f        float64
		want     string
		singular bool
	}{
		{"negative", -1, "frequency -1 Hz", false},
		{"NaN", math.NaN(), "frequency NaN Hz", false},
		{"infinite", math.Inf(1), "frequency +Inf Hz", false},
		{"DC with a capacitor-only node", 0, "at 0 Hz: the equations do not determine V(a)", true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := s.Response(c.f)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want one containing %q", err, c.want)
			}
			if errors.Is(err, ErrSingular) != c.singular {
				t.Errorf("errors.Is(ErrSingular) = %v, want %v", !c.singular, c.singular)
			}
		})
	}
	// Above 0 Hz the capacitive divider works: H = jωC/2 R/(1 + jωC/2 R)
	// (two equal capacitors in series, common practice).
	f := 1000.0
	sj := complex(0, 2*math.Pi*f*0.5e-9*1e3)
	if got, want := mustResponse(t, s, f), sj/(1+sj); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
		t.Errorf("H(1 kHz) = %v, want %v", got, want)
	}
}

// TestSolveTo checks the whole solution vector of the loaded RC low-pass
// against Ohm's and Kirchhoff's laws (common practice).
func TestSolveTo(t *testing.T) {
	fx := Fixture{SourceOhms: 100, LoadOhms: 10e3}
	d := mustBuild(t, rcLowPass(), fx)
	s := NewSolver(d)
	x, err := s.SolveTo(nil, 1000)
	if err != nil {
		t.Fatal(err)
	}
	if len(x) != 2 || d.Unknowns[0] != "V(in)" || d.Unknowns[1] != "V(out)" {
		t.Fatalf("x = %v, unknowns %q", x, d.Unknowns)
	}
	w := 2 * math.Pi * 1000
	// Current through R1 equals the current into C1 ∥ RL.
	iR := (x[0] - x[1]) / rcR
	iOut := x[1] * complex(1/fx.LoadOhms, w*rcC)
	// Current from the source through Rs equals the current through R1.
	iS := (1 - x[0]) / complex(fx.SourceOhms, 0)
	if cmplx.Abs(iR-iOut) > 1e-15 || cmplx.Abs(iS-iR) > 1e-15 {
		t.Errorf("KCL: %v %v %v", iS, iR, iOut)
	}
	dst := make([]complex128, 0, 8)
	y, _ := s.SolveTo(dst, 1000)
	if &y[0] != &dst[:1][0] || y[1] != x[1] {
		t.Errorf("SolveTo did not reuse dst")
	}
}
