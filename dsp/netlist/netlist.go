// Package netlist reads the small SPICE-style circuit descriptions
// tonetrace predicts and fits responses from.
//
// A netlist is plain text, one element per line:
//
//	*** presence lift for a guitar preamp
//	R1 in mid 4k7
//	C1 mid out 22n
//	R2 out 0 10k
//	E1 buf 0 out 0 2        ; voltage-controlled voltage source, gain 2
//	U1 amp buf amp          ; ideal op-amp: output, +input, −input
//	L1 amp out 10mH
//	+                       ; a '+' line continues the line above
//	.io in out              ; optional: the input and output nodes
//	.end                    ; optional: nothing below is read
//
// # Lines
//
// A line whose first non-blank character is '*' is a comment; the first
// comment with text, stripped of its leading stars and surrounding space,
// is the [Netlist.Title]. Text after ';' is a comment. A line starting
// with '+' continues the element or directive above it (comment and blank
// lines may come between), as in SPICE. Fields are separated by white
// space, so a value and its unit must not be: "4.7kΩ", not "4.7 kΩ".
// Lines may end in CRLF; a leading byte-order mark is skipped.
//
// Element lines start with the element's name, whose first letter (in
// either case) gives the kind, as in SPICE:
//
//	Rname n1 n2 value              resistor, ohms
//	Cname n1 n2 value              capacitor, farads
//	Lname n1 n2 value              inductor, henries
//	Ename out+ out− in+ in− gain   voltage-controlled voltage source
//	Uname out in+ in−              ideal op-amp (infinite gain), no value
//
// The op-amp's output is referred to ground. Directives start with '.':
// ".io IN OUT" names the input and output nodes (default "in" and "out";
// [Options] given by the caller, from command-line flags, override both);
// ".end" ends the netlist. Other directives are errors; a SPICE
// ".control" … ".endc" block is reported once and skipped.
//
// # Names and nodes
//
// Element and node names are compared without regard to case, as in
// SPICE, and kept as written for messages. Every use of a node is stored
// with the spelling of its first use (the .io line counts), so code can
// compare node names with ==. Node "0" and "gnd" (any case) are ground,
// stored as [Ground].
//
// # Values
//
// Values are read by kind with the parsers of package config:
// [config.ParseResistance], [config.ParseCapacitance],
// [config.ParseInductance] and [config.ParseGain]. They take SI prefixes
// with an optional unit ("15n", "15nF", "4.7kΩ", "10mH", "100k"), IEC
// 60062 RKM codes ("4k7", "R47", "2n2", "4m7") and SPICE's "meg" for 10^6
// on resistors and gains ("1meg", "1MEG", "1megohm"). Where SPICE reads the
// same text differently, the choice is:
//
//   - SPICE reads M and m both as milli. Here a bare "M" is mega on
//     resistors and gains ("1M" = 1 MΩ, as a part is labelled), is
//     rejected on capacitors and inductors (megafarads and megahenries are
//     never meant), and "m" is milli everywhere. On resistors a bare "m"
//     ("1m", "4m7") is rejected as ambiguous, since it is often meant as
//     mega; write "1meg" or "1M" for 1 MΩ, "1mΩ" or "0.001" for 1 mΩ.
//   - SPICE reads a bare F as femto; a capacitor value ending in a bare
//     "F" or "f" with no prefix ("100f", "1F") is rejected as ambiguous.
//   - SPICE ignores digits after the scale factor; here "4k7" is the RKM
//     code for 4.7k, not 4k.
//
// Resistances, capacitances and inductances must be positive; a gain may
// be any finite number, zero and negative included.
//
// # Checks
//
// Parse reports every problem it finds (up to [MaxProblems]) as an
// *[Error] naming file, line and column, what is wrong and how to fix it:
// an unknown element letter (with the known ones), a wrong number of
// fields (missing node, missing value, a unit written apart, SPICE
// parameters), a value that does not read or is ambiguous, a
// non-positive R, C or L, a duplicate element name (naming the first
// line), an element with both terminals on one node (R, C, L; E's output
// or input pair; an op-amp's inputs), an op-amp output on ground, two
// ideal outputs driving one node (op-amp outputs, and E outputs whose
// other terminal is ground), a floating node (one element terminal only,
// except the input, which the fixture drives, and the output, which the
// fixture loads), a group of nodes with no path to ground, an input or
// output node that is ground, absent or the same as the other, and a
// netlist with no elements.
//
// For the path to ground, R, C and L join their two nodes (capacitors
// count: the network is solved at frequencies above 0 Hz), an E's output
// joins out+ and out−, an op-amp's output joins ground, and the input and
// output nodes join ground through the fixture. Amplifier and E inputs
// draw no current and join nothing, so a node reached only through them
// is reported. Problems that would only repeat another (nodes on a line
// with the wrong number of fields, floating nodes when the input or output
// is missing) are left out.
//
// The network is driven at its input node from an ideal voltage source
// through the fixture's source resistance, and loaded at its output by the
// fixture's load.
package netlist

import (
	"fmt"
	"math"
)

// Kind is the type of a circuit element.
type Kind int

// Element kinds.
const (
	Resistor  Kind = iota // R: two nodes, value in ohms
	Capacitor             // C: two nodes, value in farads
	Inductor              // L: two nodes, value in henries
	VCVS                  // E: out+ out− in+ in−, value is the voltage gain
	OpAmp                 // U: out in+ in−, ideal (infinite gain); no value
)

// Unit returns the symbol of the unit of the kind's value: "Ω", "F" or
// "H"; "" for a gain (E) or no value (U).
func (k Kind) Unit() string {
	switch k {
	case Resistor:
		return "Ω"
	case Capacitor:
		return "F"
	case Inductor:
		return "H"
	}
	return ""
}

// String returns the element letter of the kind: "R", "C", "L", "E", "U".
func (k Kind) String() string {
	switch k {
	case Resistor:
		return "R"
	case Capacitor:
		return "C"
	case Inductor:
		return "L"
	case VCVS:
		return "E"
	case OpAmp:
		return "U"
	}
	return "?"
}

// Element is one line of a netlist.
type Element struct {
	// Name is the element's name as written, including its letter
	// ("R1", "Cfb").
	Name string
	// Kind is the element type, from the first letter of Name.
	Kind Kind
	// Nodes are the node names in the order the element line gives them:
	// two for R, C and L; four for E (out+ out− in+ in−); three for U
	// (out in+ in−). Ground is "0".
	Nodes []string
	// Value is the resistance (Ω), capacitance (F), inductance (H) or
	// voltage gain; zero for U.
	Value float64
	// Line is the 1-based line of the element in its file, 0 when the
	// element was built in code.
	Line int
}

// Netlist is a parsed circuit.
type Netlist struct {
	// Name is the file name (for messages), or "" for text given directly.
	Name string
	// Title is the first comment line, if any, without its '*'.
	Title string
	// Elements are the elements in file order.
	Elements []Element
	// In and Out are the input and output nodes; "in" and "out" unless a
	// .io line names others.
	In, Out string
}

// Ground is the canonical name of the ground node.
const Ground = "0"

// Clone returns a deep copy of n: editing the copy's elements or their
// nodes leaves n unchanged.
func (n *Netlist) Clone() *Netlist {
	c := *n
	c.Elements = make([]Element, len(n.Elements))
	for i, e := range n.Elements {
		e.Nodes = append([]string(nil), e.Nodes...)
		c.Elements[i] = e
	}
	return &c
}

// Element returns the element with the given name, compared without
// regard to case ("r1" finds "R1"), and whether there is one. The pointer
// is into n.Elements: changes through it change n.
func (n *Netlist) Element(name string) (*Element, bool) {
	k := fold(name)
	for i := range n.Elements {
		if fold(n.Elements[i].Name) == k {
			return &n.Elements[i], true
		}
	}
	return nil, false
}

// SetValue sets the value of the named element (compared without regard
// to case), for fitting and live tuning: ohms, farads or henries for R, C
// and L, which must be positive and finite, or the voltage gain of an E,
// any finite number. Ideal op-amps (U) have no value. On error n is
// unchanged; an unknown name gives an error wrapping [ErrNoElement].
func (n *Netlist) SetValue(name string, v float64) error {
	e, ok := n.Element(name)
	if !ok {
		names := make([]string, len(n.Elements))
		for i := range n.Elements {
			names[i] = n.Elements[i].Name
		}
		return fmt.Errorf("%w: %q; the elements are %s", ErrNoElement, name, quoteList(names, 12))
	}
	sh := shapes[e.Kind]
	switch {
	case e.Kind == OpAmp:
		return fmt.Errorf("netlist: %s is %s and has no value to set", e.Name, sh.what)
	case math.IsNaN(v) || math.IsInf(v, 0):
		return fmt.Errorf("netlist: %s: the %s must be finite, not %v", e.Name, sh.quantity, v)
	case e.Kind != VCVS && v <= 0:
		return fmt.Errorf("netlist: %s: the %s must be positive, not %v", e.Name, sh.quantity, v)
	}
	e.Value = v
	return nil
}

// Nodes returns the names of the nodes other than ground ("0", or "gnd"
// in any case, in a netlist built in code) in the order the elements
// first use them. Names are compared exactly; Parse gives every node one
// spelling.
func (n *Netlist) Nodes() []string {
	var out []string
	seen := map[string]bool{}
	for i := range n.Elements {
		for _, nd := range n.Elements[i].Nodes {
			if !isGround(nd) && !seen[nd] {
				seen[nd] = true
				out = append(out, nd)
			}
		}
	}
	return out
}
