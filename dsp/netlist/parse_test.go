package netlist

import (
	"errors"
	"io"
	"reflect"
	"strings"
	"testing"
	"testing/iotest"

	"tonetrace/config"
)

// The netlist syntax follows SPICE: '*' comment lines, '+' continuation
// lines, node 0 as ground, element letters R, C, L, E with E's nodes in
// the order out+ out− in+ in−, the scale factor "meg" = 10^6 and M read as
// milli (ngspice User's Manual, chapter 2, "Circuit description" — from
// memory). RKM codes such as 4k7 and R47 follow IEC 60062 (REFERENCES §9)
// — from memory.

// parseText parses s under the file name "t.cir".
func parseText(s string) (*Netlist, error) { return Parse(strings.NewReader(s), "t.cir") }

// unjoin splits an errors.Join result.
func unjoin(err error) []error {
	if err == nil {
		return nil
	}
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		return j.Unwrap()
	}
	return []error{err}
}

// problemsOf returns the *Error values in err, failing the test for any
// other error.
func problemsOf(t *testing.T, err error) []*Error {
	t.Helper()
	var out []*Error
	for _, e := range unjoin(err) {
		var pe *Error
		if !errors.As(e, &pe) {
			t.Fatalf("problem %T %q is not a *Error", e, e)
		}
		out = append(out, pe)
	}
	return out
}

// withoutLines returns the elements with Line cleared, for comparing
// netlists read from different text.
func withoutLines(els []Element) []Element {
	out := make([]Element, len(els))
	for i, e := range els {
		e.Line = 0
		out[i] = e
	}
	return out
}

func TestParse(t *testing.T) {
	cases := []struct {
		name string
		text string
		want Netlist
	}{
		{
			name: "plain",
			text: "* RC low-pass\nR1 in out 10k\nC1 out 0 15n\n",
			want: Netlist{Name: "t.cir", Title: "RC low-pass", In: "in", Out: "out", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 10e3, Line: 2},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 15e-9, Line: 3},
			}},
		},
		{
			// SPICE continuation: a '+' line extends the line before.
			name: "continuation lines",
			text: "R1 in\n+ out\n+10k\nC1 out 0 ; the value follows\n* a comment between\n\n+ 15n\n",
			want: Netlist{Name: "t.cir", Title: "a comment between", In: "in", Out: "out", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 10e3, Line: 1},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 15e-9, Line: 4},
			}},
		},
		{
			// Names and nodes compare without regard to case; each node
			// keeps the spelling of its first use.
			name: "case-insensitive",
			text: "r1 IN Out 10K\nc1 out GND 15N\n",
			want: Netlist{Name: "t.cir", In: "IN", Out: "Out", Elements: []Element{
				{Name: "r1", Kind: Resistor, Nodes: []string{"IN", "Out"}, Value: 10e3, Line: 1},
				{Name: "c1", Kind: Capacitor, Nodes: []string{"Out", "0"}, Value: 15e-9, Line: 2},
			}},
		},
		{
			name: ".io after the elements",
			text: "R1 a b 10k\nC1 b 0 15n\n.io A B\n",
			want: Netlist{Name: "t.cir", In: "a", Out: "b", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"a", "b"}, Value: 10e3, Line: 1},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"b", "0"}, Value: 15e-9, Line: 2},
			}},
		},
		{
			name: ".io first sets the spelling",
			text: ".IO Src Load\nR1 src load 1k\nC1 LOAD 0 1n\n",
			want: Netlist{Name: "t.cir", In: "Src", Out: "Load", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"Src", "Load"}, Value: 1e3, Line: 2},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"Load", "0"}, Value: 1e-9, Line: 3},
			}},
		},
		{
			name: ".end stops reading",
			text: "R1 in out 10k\nC1 out 0 15n\n.END\nthis is not a netlist line\nX1 a b c\n",
			want: Netlist{Name: "t.cir", In: "in", Out: "out", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 10e3, Line: 1},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 15e-9, Line: 2},
			}},
		},
		{
			name: "ground aliases",
			text: "R1 in out 1k\nC1 out gnd 1n\nC2 out GND 2n\nC3 out 0 3n\n",
			want: Netlist{Name: "t.cir", In: "in", Out: "out", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 1e3, Line: 1},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 1e-9, Line: 2},
				{Name: "C2", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 2e-9, Line: 3},
				{Name: "C3", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 3e-9, Line: 4},
			}},
		},
		{
			name: "title is the first comment with text",
			text: "*\n   **** Banner ****  \n* second\n  R1 in out 1k ; indented\n\tC1 out 0 1n\n",
			want: Netlist{Name: "t.cir", Title: "Banner ****", In: "in", Out: "out", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 1e3, Line: 4},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 1e-9, Line: 5},
			}},
		},
		{
			name: "CRLF, byte-order mark, tabs and Unicode",
			text: "\ufeff* t\r\nR1\tin\tout\t4.7k\u03a9\r\nC1 out 0 4\u00b57\r\n",
			want: Netlist{Name: "t.cir", Title: "t", In: "in", Out: "out", Elements: []Element{
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 4700, Line: 2},
				{Name: "C1", Kind: Capacitor, Nodes: []string{"out", "0"}, Value: 4.7e-6, Line: 3},
			}},
		},
		{
			// A gain of zero or below is legal, as in SPICE.
			name: "zero and negative gains",
			text: "E1 out 0 in 0 0\nE2 m 0 in 0 -2\nR1 in m 1k\n",
			want: Netlist{Name: "t.cir", In: "in", Out: "out", Elements: []Element{
				{Name: "E1", Kind: VCVS, Nodes: []string{"out", "0", "in", "0"}, Value: 0, Line: 1},
				{Name: "E2", Kind: VCVS, Nodes: []string{"m", "0", "in", "0"}, Value: -2, Line: 2},
				{Name: "R1", Kind: Resistor, Nodes: []string{"in", "m"}, Value: 1e3, Line: 3},
			}},
		},
		{
			// The input is driven by the fixture and the output loaded by
			// it, so a follower alone is a whole network.
			name: "op-amp follower",
			text: "U1 out in out\n",
			want: Netlist{Name: "t.cir", In: "in", Out: "out", Elements: []Element{
				{Name: "U1", Kind: OpAmp, Nodes: []string{"out", "in", "out"}, Line: 1},
			}},
		},
		{
			// Nodes joined to ground only through capacitors count as
			// connected: the network is solved above 0 Hz.
			name: "capacitor-only path to ground",
			text: "C1 in mid 1u\nC2 mid out 1u\nL1 out 0 10m\n",
			want: Netlist{Name: "t.cir", In: "in", Out: "out", Elements: []Element{
				{Name: "C1", Kind: Capacitor, Nodes: []string{"in", "mid"}, Value: 1e-6, Line: 1},
				{Name: "C2", Kind: Capacitor, Nodes: []string{"mid", "out"}, Value: 1e-6, Line: 2},
				{Name: "L1", Kind: Inductor, Nodes: []string{"out", "0"}, Value: 10e-3, Line: 3},
			}},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n, err := parseText(c.text)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(*n, c.want) {
				t.Errorf("got  %+v\nwant %+v", *n, c.want)
			}
		})
	}
}

func TestValueForms(t *testing.T) {
	// Prefixes: SI Brochure, 9th ed., Table 7 — from memory. "meg" = 10^6
	// and M = milli in SPICE: ngspice User's Manual §2.3 — from memory.
	// RKM codes: IEC 60062 — from memory.
	cases := []struct {
		name  string
		kind  Kind
		value string
		want  float64
	}{
		{"R RKM 4k7", Resistor, "4k7", 4700},
		{"R RKM R47", Resistor, "R47", 0.47},
		{"R RKM 1M5", Resistor, "1M5", 1.5e6},
		{"R RKM 100R", Resistor, "100R", 100},
		{"R SPICE meg", Resistor, "1meg", 1e6},
		{"R SPICE MEG", Resistor, "2.2MEG", 2.2e6},
		{"R SPICE Meg with unit", Resistor, "1Megohm", 1e6},
		{"R SPICE meg with ohm sign", Resistor, "1megΩ", 1e6},
		// Deliberate difference from SPICE, which reads 1M as 1 mΩ.
		{"R bare M is mega", Resistor, "1M", 1e6},
		{"R milliohm with unit", Resistor, "50mΩ", 0.05},
		{"R milliohm word", Resistor, "50mohm", 0.05},
		{"R SI with unit", Resistor, "4.7kΩ", 4700},
		{"R bare", Resistor, "470", 470},
		{"R exponent", Resistor, "1e4", 1e4},
		{"C RKM 2n2", Capacitor, "2n2", 2.2e-9},
		{"C nF", Capacitor, "15nF", 15e-9},
		{"C pico", Capacitor, "100p", 100e-12},
		{"C micro with unit", Capacitor, "4.7uF", 4.7e-6},
		{"C micro sign RKM", Capacitor, "4µ7", 4.7e-6},
		{"C milli (SPICE agrees)", Capacitor, "1m", 1e-3},
		{"C exponent", Capacitor, "1e-9", 1e-9},
		{"L mH", Inductor, "10mH", 10e-3},
		{"L RKM 4m7", Inductor, "4m7", 4.7e-3},
		{"L RKM 2u2", Inductor, "2u2", 2.2e-6},
		{"L nH", Inductor, "100nH", 100e-9},
		{"L henries", Inductor, "1", 1},
		{"E plain", VCVS, "2", 2},
		{"E negative", VCVS, "-1", -1},
		{"E zero", VCVS, "0", 0},
		{"E half", VCVS, "0.5", 0.5},
		{"E SPICE meg", VCVS, "1meg", 1e6},
		{"E exponent", VCVS, "1e6", 1e6},
		{"E kilo", VCVS, "100k", 100e3},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			line := c.kind.String() + "1 in out " + c.value
			if c.kind == VCVS {
				line = "E1 out 0 in 0 " + c.value + "\nR1 in out 1k"
			}
			n, err := parseText(line + "\n")
			if err != nil {
				t.Fatal(err)
			}
			if got := n.Elements[0].Value; got != c.want {
				t.Errorf("%s: value %v, want %v", c.value, got, c.want)
			}
		})
	}
}

// wantProblem is one expected problem: its position, a fragment of its
// message and one of its hint.
type wantProblem struct {
	line, col int
	msg, hint string
}

func TestParseErrors(t *testing.T) {
	cases := []struct {
		name string
		text string
		want []wantProblem
	}{
		{"unknown letter", "V1 in 0 AC 1\nR1 in out 1k\nC1 out 0 1n\n",
			[]wantProblem{{1, 1, `unknown element "V1"`, "fixture drives the input"}}},
		{"known letters listed", "R1 in out 1k\nC1 out 0 1n\nQ1 out in 0 bc547\n",
			[]wantProblem{{3, 1, "known: R resistor, C capacitor, L inductor, E voltage-controlled voltage source, U ideal op-amp", "only linear elements"}}},
		{"SPICE title line", "rc filter\nR1 in out 10k\nC1 out 0 15n\n",
			[]wantProblem{{1, 11, `rc has 1 node; a resistor takes two nodes and a resistance`, "SPICE title line, start it with '*'"}}},
		{"missing value", "R1 in out\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, "R1: missing resistance", `"R1 in out 10k"`}}},
		{"missing node", "R1 in out 1k\nR2 out 4k7\nC1 out 0 1n\n",
			[]wantProblem{{2, 12, "R2 has 1 node and a value", `"R1 in out 10k"`}}},
		{"E with too few nodes", "E1 out 0 in\nR1 in 0 1k\n",
			[]wantProblem{{1, 13, "E1 has 3 nodes; a voltage-controlled voltage source takes four nodes (out+ out− in+ in−) and a gain", `"E1 out 0 a b 2"`}}},
		{"U with too few nodes", "U1 out in\n",
			[]wantProblem{{1, 11, "U1 has 2 nodes; an ideal op-amp takes three nodes", `"U1 out inp inn"`}}},
		{"unit apart from its number", "R1 in out 4.7 kΩ\nC1 out 0 1n\n",
			[]wantProblem{{1, 15, "R1 has too many fields", `without a space, e.g. "4.7kΩ"`}}},
		{"SPICE parameter", "R1 in out 1k tc=0.01\nC1 out 0 1n\n",
			[]wantProblem{{1, 14, "R1 has too many fields", "tc= or m= are not supported"}}},
		{"U with a value", "U1 out in fb 1meg\nR1 out fb 1k\nR2 fb 0 1k\n",
			[]wantProblem{{1, 14, "U1 has too many fields; an ideal op-amp takes three nodes (output, non-inverting input, inverting input) and no value", "use E"}}},
		{"bad value", "R1 in out 4k7x\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, `R1: bad resistance "4k7x": unknown unit "x"`, `write a resistance in ohms without spaces, e.g. "470", "4.7k", "4k7", "R47", "1meg"`}}},
		{"bad value column counts characters", ".io ïn out\nR1 ïn out 4k7x\nC1 out 0 1n\n",
			[]wantProblem{{2, 11, `bad resistance "4k7x"`, "4k7"}}},
		{"ambiguous m on a resistor", "R1 in out 1m\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, `"1m" is ambiguous`, `write "1meg" or "1M" for megohms, or "1mΩ" for milliohms`}}},
		{"ambiguous RKM m on a resistor", "R1 in out 4m7\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, `"4m7" is ambiguous`, `write "4M7" for megohms, or "4m7Ω" for milliohms`}}},
		{"bare F on a capacitor", "R1 in out 1k\nC1 out 0 100f\n",
			[]wantProblem{{2, 10, "femtofarads (10^-15) in SPICE", `"100p"`}}},
		{"M on a capacitor", "R1 in out 1k\nC1 out 0 1M\n",
			[]wantProblem{{2, 10, `C1: bad capacitance "1M"`, "SPICE reads M as milli"}}},
		{"meg on a capacitor", "R1 in out 1k\nC1 out 0 1meg\n",
			[]wantProblem{{2, 10, `bad capacitance "1meg": unknown unit "meg"`, `a capacitance in farads without spaces, e.g. "15n"`}}},
		{"mega on an inductor", "L1 in out 10MH\nR1 out 0 1k\n",
			[]wantProblem{{1, 11, `L1: bad inductance "10MH"`, "4m7"}}},
		{"gain in dB", "E1 out 0 in 0 20dB\nR1 in 0 1k\n",
			[]wantProblem{{1, 15, `E1: bad gain "20dB"`, "ratio"}}},
		{"expression", "R1 in out {rval}\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, `bad resistance "{rval}"`, "parameters and expressions are not supported"}}},
		{"negative resistance", "R1 in out -10k\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, `R1: the resistance must be positive, not "-10k"`, "remove the minus sign"}}},
		{"zero resistance", "R1 in out 0\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, "must be positive", "short circuit"}}},
		{"resistance below the smallest float", "R1 in out 1e-400\nC1 out 0 1n\n",
			[]wantProblem{{1, 11, "must be positive", "short circuit"}}},
		{"zero capacitance", "R1 in out 1k\nC1 out 0 0p\n",
			[]wantProblem{{2, 10, "the capacitance must be positive", "open circuit"}}},
		{"zero inductance", "R1 in out 1k\nL1 out 0 0\n",
			[]wantProblem{{2, 10, "the inductance must be positive", "short circuit"}}},
		{"duplicate name", "R1 in out 1k\nC1 out 0 1n\nr1 out 0 1k\n",
			[]wantProblem{{3, 1, `duplicate element name "r1"; it is already used at line 1`, "its own name"}}},
		{"both ends on one node", "R1 in out 1k\nC1 out OUT 1n\nR2 out 0 1k\n",
			[]wantProblem{{2, 8, `C1 has both ends on node "out"`, "two different nodes"}}},
		{"E output shorted", "R1 in x 1k\nE1 out out x 0 2\nR2 out 0 1k\nR3 x 0 1k\n",
			[]wantProblem{{2, 8, `E1 has both output terminals on node "out"`, "out−"}}},
		{"E senses one node", "R1 in x 1k\nE1 out 0 x x 2\nR3 x 0 1k\n",
			[]wantProblem{{2, 12, `E1 senses node "x" against itself`, "in−"}}},
		{"U inputs on one node", "R1 in a 1k\nU1 out a a\nR2 out a 1k\n",
			[]wantProblem{{2, 10, `U1 has both inputs on node "a"`, "feedback"}}},
		{"U output on ground", "R1 in out 1k\nU1 gnd in out\n",
			[]wantProblem{{2, 4, "U1 has its output on ground", "its own node"}}},
		{"two outputs on one node", "U1 out in out\nE1 out 0 in 0 2\n",
			[]wantProblem{{2, 4, `E1 drives node "out", which U1 (line 1) already drives`, "through resistors"}}},
		{"floating node", "R1 in out 1k\nC1 out 0 1n\nR2 out x 1k\n",
			[]wantProblem{{3, 8, `node "x" is floating: only R2 connects to it`, ".io IN OUT"}}},
		{"misspelt node", "R1 in middle 1k\nR2 midle out 1k\nC1 out 0 1n\n",
			[]wantProblem{
				{1, 7, `node "middle" is floating`, `did you mean "midle"?`},
				{2, 4, `node "midle" is floating`, `did you mean "middle"?`},
			}},
		{"node only sensed", "E1 out 0 s 0 2\nR1 in out 1k\n",
			[]wantProblem{{1, 10, `node "s" is floating: only an input of E1 touches it`, "connect it"}}},
		{"group without ground", "R1 in out 1k\nC1 out 0 1n\nR2 p q 1k\nR3 q p 2k\n",
			[]wantProblem{{3, 4, `nodes "p", "q" have no path to ground`, "inputs draw no current"}}},
		{"group reached only by E inputs", "R1 in out 1k\nC1 out 0 1n\nE1 y 0 a b 1\nR2 a b 1k\nR3 y out 1k\n",
			[]wantProblem{{3, 8, `nodes "a", "b" have no path to ground`, "join them"}}},
		{"default input and output absent", "R1 a b 1k\nC1 b 0 1n\n",
			[]wantProblem{
				{0, 0, `the default input node "in" does not appear in any element`, `".io IN OUT", or call the input node "in"; the nodes are "a", "b"`},
				{0, 0, `the default output node "out" does not appear`, `call the output node "out"`},
			}},
		{".io names an absent node", "R1 in out 1k\nC1 out 0 1n\n.io in outt\n",
			[]wantProblem{{3, 8, `output node "outt" does not appear in any element`, `did you mean "out"? check the spelling`}}},
		{".io names one node twice", ".io a A\nR1 a 0 1k\n",
			[]wantProblem{{1, 7, `the input and output are the same node "a"`, "different node"}}},
		{".io names ground", "R1 in out 1k\nC1 out 0 1n\n.io in gnd\n",
			[]wantProblem{{3, 8, `the output node cannot be ground ("gnd")`, "input measures"}}},
		{".io with one node", ".io in\nR1 in out 1k\nC1 out 0 1n\n",
			[]wantProblem{{1, 8, ".io needs two nodes, the input and the output; found 1", `".io in out"`}}},
		{".io with three nodes", ".io in out x\nR1 in out 1k\nC1 out 0 1n\n",
			[]wantProblem{{1, 12, ".io takes two nodes", "input node first"}}},
		{"second .io", ".io in out\nR1 in out 1k\nC1 out 0 1n\n.io out in\n",
			[]wantProblem{{4, 1, "second .io line; the first is at line 1", "keep one"}}},
		{"unknown directive", "R1 in out 1k\nC1 out 0 1n\n.ac dec 10 1 1k\n",
			[]wantProblem{{3, 1, `unknown directive ".ac"`, "knows .io"}}},
		{"SPICE control block", "R1 in out 1k\nC1 out 0 1n\n.control\nset wr_singlescale\nac dec 50 10 10Meg\n.endc\n",
			[]wantProblem{{3, 1, `SPICE control block ".control"`, ".endc block"}}},
		{"continuation first", "  + R1 in out 1k\nC1 out 0 1n\nR1 in out 1k\n",
			[]wantProblem{{1, 3, "continuation line ('+') with no line before it", "remove the '+'"}}},
		{"empty", "",
			[]wantProblem{{0, 0, "the netlist has no elements", `"R1 in out 10k"`}}},
		{"comments only", "* nothing here\n; nor here\n",
			[]wantProblem{{0, 0, "the netlist has no elements", "add one element per line"}}},
		{"elements after .end only", ".end\nR1 in out 1k\n",
			[]wantProblem{{0, 0, "the netlist has no elements", ""}}},
		{"problems sorted by line", "R1 in out 1k\nC1 out 0 0\nR1 out 0 x\n",
			[]wantProblem{
				{2, 10, "capacitance must be positive", "open circuit"},
				{3, 1, `duplicate element name "R1"`, "own name"},
				{3, 10, `bad resistance "x"`, "meg"},
			}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n, err := parseText(c.text)
			if err == nil {
				t.Fatalf("parsed without error: %+v", n)
			}
			if n != nil {
				t.Error("a netlist was returned with the error")
			}
			got := problemsOf(t, err)
			if len(got) != len(c.want) {
				t.Fatalf("%d problems, want %d:\n%v", len(got), len(c.want), err)
			}
			for i, w := range c.want {
				g := got[i]
				if g.File != "t.cir" || g.Line != w.line || g.Column != w.col {
					t.Errorf("problem %d at %s:%d:%d, want t.cir:%d:%d (%v)", i, g.File, g.Line, g.Column, w.line, w.col, g)
				}
				if !strings.Contains(g.Msg, w.msg) {
					t.Errorf("problem %d message %q lacks %q", i, g.Msg, w.msg)
				}
				if !strings.Contains(g.Hint, w.hint) || g.Hint == "" {
					t.Errorf("problem %d hint %q lacks %q", i, g.Hint, w.hint)
				}
				if msg := g.Error(); strings.ContainsAny(msg, "\n\r") {
					t.Errorf("problem %d is not one line: %q", i, msg)
				}
			}
		})
	}
}

// TestValueErrorWrapsParseError checks that a value config cannot read
// keeps config's *ParseError reachable.
func TestValueErrorWrapsParseError(t *testing.T) {
	_, err := parseText("R1 in out 4k7x\nC1 out 0 1n\n")
	var pe *config.ParseError
	if !errors.As(err, &pe) || pe.Quantity != "resistance" || pe.Input != "4k7x" {
		t.Fatalf("error %v does not wrap the *config.ParseError for 4k7x", err)
	}
}

func TestOptions(t *testing.T) {
	const text = "R1 a b 10k\nC1 b 0 15n\n.io x y\n"
	cases := []struct {
		name    string
		opt     Options
		in, out string
		wantErr string
	}{
		{"override both", Options{In: "A", Out: "B"}, "a", "b", ""},
		{"override input only", Options{In: "b"}, "", "", `output node "y" does not appear`},
		{"absent", Options{In: "a", Out: "q"}, "", "", `output node (given by the caller) "q" does not appear in any element`},
		{"ground", Options{In: "a", Out: "GND"}, "", "", `the output node cannot be ground ("GND")`},
		{"same", Options{In: "a", Out: "A"}, "", "", `the input and output are the same node "a"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n, err := c.opt.Parse(strings.NewReader(text), "t.cir")
			if c.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), c.wantErr) {
					t.Fatalf("error %v, want one containing %q", err, c.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if n.In != c.in || n.Out != c.out {
				t.Errorf("In, Out = %q, %q; want %q, %q", n.In, n.Out, c.in, c.out)
			}
		})
	}
}

func TestErrorString(t *testing.T) {
	cases := []struct {
		name string
		err  Error
		want string
	}{
		{"file, line and column", Error{File: "a.cir", Line: 3, Column: 7, Msg: "bad", Hint: "fix it"}, "a.cir:3:7: bad; hint: fix it"},
		{"file and line", Error{File: "a.cir", Line: 3, Msg: "bad"}, "a.cir:3: bad"},
		{"file only", Error{File: "a.cir", Msg: "bad", Hint: "fix it"}, "a.cir: bad; hint: fix it"},
		{"line without file", Error{Line: 3, Column: 7, Msg: "bad"}, "line 3, column 7: bad"},
		{"nothing", Error{Msg: "bad"}, "netlist: bad"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.err.Error(); got != c.want {
				t.Errorf("got %q, want %q", got, c.want)
			}
		})
	}
}

func TestMaxProblems(t *testing.T) {
	const bad = 30
	var b strings.Builder
	b.WriteString("R0 in out 1k\nC0 out 0 1n\n")
	for i := range bad {
		b.WriteString("R" + strings.Repeat("x", i+1) + " in out oops\n")
	}
	_, err := parseText(b.String())
	got := problemsOf(t, err)
	if len(got) != MaxProblems+1 {
		t.Fatalf("%d problems, want %d", len(got), MaxProblems+1)
	}
	last := got[len(got)-1]
	if want := "10 more problems not shown"; last.Msg != want || last.Line != 0 {
		t.Errorf("last problem %v, want %q", last, want)
	}
	if got[0].Line != 3 || got[MaxProblems-1].Line != 2+MaxProblems {
		t.Errorf("the first %d problems are not the first lines: %v", MaxProblems, err)
	}
}

func TestReadErrors(t *testing.T) {
	t.Run("reader fails", func(t *testing.T) {
		boom := errors.New("boom")
		_, err := Parse(iotest.ErrReader(boom), "x.cir")
		if !errors.Is(err, boom) || !strings.Contains(err.Error(), "x.cir") {
			t.Fatalf("error %v does not wrap the read error and name the file", err)
		}
	})
	t.Run("too large", func(t *testing.T) {
		r := io.MultiReader(strings.NewReader("R1 in out 1k\n"), strings.NewReader(strings.Repeat("* padding\n", MaxBytes/10+1)))
		_, err := Parse(r, "x.cir")
		var pe *Error
		if !errors.As(err, &pe) || !strings.Contains(pe.Msg, "larger than") {
			t.Fatalf("error %v, want a *Error about the size", err)
		}
	})
	t.Run("missing file", func(t *testing.T) {
		_, err := ParseFile("testdata/does-not-exist.cir")
		if err == nil || !strings.Contains(err.Error(), "does-not-exist.cir") {
			t.Fatalf("error %v does not name the file", err)
		}
	})
}
