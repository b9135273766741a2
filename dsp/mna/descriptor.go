// Package mna turns a netlist and its fixture into the equations of
// modified nodal analysis (MNA) and solves them in the frequency domain.
//
// The network is driven at its input node by an ideal voltage source u
// through the fixture's source resistance and loaded at its output node by
// the fixture's load resistance and capacitance. MNA writes the circuit as
// the descriptor system
//
//	C·x′(t) + G·x(t) = B·u(t),   y(t) = x[Out]
//
// whose unknowns x are the voltages of the non-ground nodes followed by
// the currents of the branches that need one (inductors, controlled
// sources, amplifier outputs, the driving source). In the frequency domain
// (G + jωC)·X = B·U, and the network's response is H(jω) = X[Out]/U.
//
// The stamps, with node voltages v, branch currents i and the KCL row of a
// node summing the currents that leave it:
//
//	R a b      G[a,a] += 1/R, G[b,b] += 1/R, G[a,b] −= 1/R, G[b,a] −= 1/R
//	C a b      the same pattern in C with the value C
//	L a b      branch i: KCL a +i, KCL b −i; row v(a) − v(b) − L·i′ = 0
//	E p m cp cm g   branch i: KCL p +i, KCL m −i; row v(p) − v(m) − g·(v(cp) − v(cm)) = 0
//	U o p m    branch i (the output current): KCL o +i; row v(p) − v(m) = 0 (nullor)
//
// The driving source: with Fixture.SourceOhms = 0 it is a voltage-source
// branch, KCL in +i and row v(in) = u (B has a 1 on that row); with a
// source resistance Rs it is its Norton equivalent, a conductance 1/Rs
// from the input node to ground and the current u/Rs into the input node
// (B has 1/Rs on the input node's row), which gives the same node voltages
// without an extra unknown. The load is a conductance and a capacitance
// from the output node to ground.
//
// Build stamps a netlist into a Descriptor and refuses systems that no
// frequency can solve, naming the floating node or the amplifier without
// feedback. A Solver solves the system at one frequency after another
// without allocating; Predict returns the response over a list of
// frequencies as a trace that records the fixture. Network bundles a
// netlist, its fixture and its system for fitting and live tuning, and
// restamps in place when a component value changes.
package mna

import "gonum.org/v1/gonum/mat"

// Fixture is what surrounds the network on the bench: the output that
// drives it and the input that measures it. The zero Fixture is an ideal
// source and no load.
type Fixture struct {
	// SourceOhms is the output resistance of the driving output in Ω;
	// 0 is an ideal source. It must be finite and not negative.
	SourceOhms float64
	// LoadOhms is the input resistance of the measuring input in Ω;
	// +Inf (or 0, meaning "not given") leaves the output unloaded. It
	// must not be negative.
	LoadOhms float64
	// LoadFarads is the capacitance across the measuring input (input and
	// cable) in F; 0 for none. It must be finite and not negative.
	LoadFarads float64
}

// Descriptor is a network's MNA system C·x′ + G·x = B·u with output
// y = x[Out]. It is what both the frequency-domain solver and the
// time-domain simulator start from.
type Descriptor struct {
	// G holds the conductances and the incidence rows of branch
	// equations; N×N.
	G *mat.Dense
	// C holds the capacitances and inductances (the terms multiplied by
	// d/dt, or by jω in the frequency domain); N×N.
	C *mat.Dense
	// B is the excitation: the column of the driving voltage u; length N.
	B []float64
	// Out is the index of the output node's voltage in x.
	Out int
	// Unknowns names each entry of x, for messages and tests: "V(out)",
	// "I(L1)", "I(source)". Node voltages come first, in the order the
	// nodes first appear in the netlist, then the branch currents in
	// element order, then the source current (only when the fixture's
	// source resistance is 0).
	Unknowns []string
	// Fixture is the fixture the system was built with.
	Fixture Fixture
	// Name names the network for metadata: the netlist's Name, or its
	// Title when it has no name; may be empty.
	Name string
}

// Size returns the number of unknowns N.
func (d *Descriptor) Size() int { return len(d.B) }
