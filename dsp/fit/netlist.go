package fit

import (
	"fmt"
	"math"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
)

// NetlistModel is a [Model] of a circuit: a netlist in its fixture (the
// driving source's resistance and the measuring input's load), solved by
// modified nodal analysis. Its parameters are the elements that carry a
// value — resistors (Ω), capacitors (F), inductors (H) and controlled
// sources (voltage gain) — named as the netlist writes them; ideal
// amplifiers have none. Only positive values can be fitted, so an
// inverting controlled source (negative gain) must stay fixed.
//
// A NetlistModel changes the values of its own network in place; it is
// not safe for concurrent use.
type NetlistModel struct {
	net     *mna.Network
	names   []string
	nominal []float64
	cur     []float64 // the values the network holds now
}

// NewNetlistModel returns the model of netlist n in fixture fx, with the
// netlist's values as the nominal ones. It returns mna's errors for a
// netlist that cannot be solved. Later changes to n do not affect the
// model.
func NewNetlistModel(n *netlist.Netlist, fx mna.Fixture) (*NetlistModel, error) {
	net, err := mna.NewNetwork(n, fx)
	if err != nil {
		return nil, err
	}
	m := &NetlistModel{net: net}
	for _, e := range n.Elements {
		if e.Kind == netlist.OpAmp {
			continue
		}
		m.names = append(m.names, e.Name)
		m.nominal = append(m.nominal, e.Value)
	}
	m.cur = append([]float64(nil), m.nominal...)
	return m, nil
}

// Params returns the names of the elements that carry a value, in netlist
// order.
func (m *NetlistModel) Params() []string { return m.names }

// Value returns the netlist's value of the named element (any case), or
// NaN when there is no such element or it carries no value.
func (m *NetlistModel) Value(name string) float64 {
	if i := indexFold(m.names, name); i >= 0 {
		return m.nominal[i]
	}
	return math.NaN()
}

// Network returns the model's network, holding the values of the last
// evaluation.
func (m *NetlistModel) Network() *mna.Network { return m.net }

// Evaluate implements [Model]: it sets the free elements to values and the
// others back to their nominal values, then solves the network at each
// frequency. It does not allocate. Errors name the element or frequency
// (a value that makes the network singular, a frequency where it has no
// solution).
func (m *NetlistModel) Evaluate(dst []complex128, freqs []float64, free []int, values []float64) error {
	if len(dst) != len(freqs) || len(free) != len(values) {
		panic(fmt.Sprintf("fit: Evaluate with %d destinations for %d frequencies, %d indices for %d values",
			len(dst), len(freqs), len(free), len(values)))
	}
	for i := range m.names {
		want := m.nominal[i]
		for k, j := range free {
			if j == i {
				want = values[k]
			}
		}
		if want == m.cur[i] {
			continue
		}
		if err := m.net.SetValue(m.names[i], want); err != nil {
			return err
		}
		m.cur[i] = want
	}
	_, err := m.net.ResponsesTo(dst, freqs)
	return err
}
