package mna

import (
	"fmt"
	"slices"
	"strings"

	"tonetrace/dsp/netlist"
	"tonetrace/dsp/trace"
)

// Network bundles a netlist, its fixture, their descriptor and a solver,
// for fitting and live tuning: SetValue changes one component and restamps
// the system in place, without allocating new matrices.
//
// A Network keeps its own copy of the netlist. It is not safe for
// concurrent use.
type Network struct {
	nl  netlist.Netlist // own copy; Elements owned
	lay *layout
	d   *Descriptor
	s   *Solver
}

// NewNetwork builds the network of n in fixture fx; it returns Build's
// errors. Later changes to n do not affect the Network.
func NewNetwork(n *netlist.Netlist, fx Fixture) (*Network, error) {
	if n == nil {
		return nil, fmt.Errorf("mna: NewNetwork of a nil netlist")
	}
	w := &Network{nl: *n}
	w.nl.Elements = slices.Clone(n.Elements)
	for i := range w.nl.Elements {
		w.nl.Elements[i].Nodes = slices.Clone(n.Elements[i].Nodes)
	}
	if err := w.rebuild(fx); err != nil {
		return nil, err
	}
	return w, nil
}

// rebuild lays out and stamps the system afresh for fixture fx, keeping
// the old one on error.
func (w *Network) rebuild(fx Fixture) error {
	lay, err := plan(&w.nl, fx)
	if err != nil {
		return err
	}
	d := lay.alloc(&w.nl)
	lay.stamp(d, w.nl.Elements)
	s := NewSolver(d)
	if err := lay.check(d, w.nl.Elements, s); err != nil {
		return err
	}
	w.lay, w.d, w.s = lay, d, s
	return nil
}

// Netlist returns a copy of the network's netlist with its current values.
func (w *Network) Netlist() *netlist.Netlist {
	n := w.nl
	n.Elements = slices.Clone(w.nl.Elements)
	for i := range n.Elements {
		n.Elements[i].Nodes = slices.Clone(w.nl.Elements[i].Nodes)
	}
	return &n
}

// Fixture returns the fixture the network is built with.
func (w *Network) Fixture() Fixture { return w.d.Fixture }

// Descriptor returns the network's MNA system. SetValue changes its
// values in place; SetFixture replaces it.
func (w *Network) Descriptor() *Descriptor { return w.d }

// find returns the index of the element named name (case-insensitive),
// or −1.
func (w *Network) find(name string) int {
	for i, e := range w.nl.Elements {
		if strings.EqualFold(e.Name, name) {
			return i
		}
	}
	return -1
}

// Value returns the value of the element named name (case-insensitive):
// Ω, F, H or a voltage gain; false when there is no such element.
func (w *Network) Value(name string) (float64, bool) {
	i := w.find(name)
	if i < 0 {
		return 0, false
	}
	return w.nl.Elements[i].Value, true
}

// SetValue sets the value of the element named name (case-insensitive) to
// v (Ω, F, H or a voltage gain) and restamps the system in place. It
// returns an error, leaving the network as it was, when there is no such
// element, the element is an amplifier (which has no value), v is out of
// the element's range (as for Build), or the new value makes the system
// singular.
func (w *Network) SetValue(name string, v float64) error {
	i := w.find(name)
	if i < 0 {
		names := make([]string, 0, len(w.nl.Elements))
		for _, e := range w.nl.Elements {
			if e.Kind != netlist.OpAmp {
				names = append(names, e.Name)
			}
		}
		return fmt.Errorf("mna: SetValue: no element named %q; the elements with values are %s", name, strings.Join(names, ", "))
	}
	e := &w.nl.Elements[i]
	if e.Kind == netlist.OpAmp {
		return fmt.Errorf("mna: SetValue: %s is an ideal amplifier and has no value; set a resistor, capacitor, inductor or controlled-source gain", where(&w.nl, i))
	}
	if err := checkValue(e.Kind, v); err != nil {
		return fmt.Errorf("mna: SetValue: %s: %w", where(&w.nl, i), err)
	}
	old := e.Value
	e.Value = v
	w.lay.stamp(w.d, w.nl.Elements)
	if err := w.lay.check(w.d, w.nl.Elements, w.s); err != nil {
		e.Value = old
		w.lay.stamp(w.d, w.nl.Elements)
		return fmt.Errorf("mna: SetValue %s = %v: %w", e.Name, v, err)
	}
	return nil
}

// SetFixture rebuilds the network for fixture fx. On error the network
// keeps its old fixture. The Descriptor and its unknowns may change (a
// source resistance of 0 adds the source current), so fetch Descriptor
// again afterwards.
func (w *Network) SetFixture(fx Fixture) error { return w.rebuild(fx) }

// Response returns H(f) at frequency f in Hz; see Solver.Response. It does
// not allocate.
func (w *Network) Response(f float64) (complex128, error) { return w.s.Response(f) }

// ResponsesTo returns H at each of freqs; see Solver.ResponsesTo.
func (w *Network) ResponsesTo(dst []complex128, freqs []float64) ([]complex128, error) {
	return w.s.ResponsesTo(dst, freqs)
}

// Predict returns the response at freqs as a trace; see Predict.
func (w *Network) Predict(freqs []float64) (trace.Trace, error) { return w.s.predict(freqs) }
