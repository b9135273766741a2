package netlist

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"tonetrace/config"
	"unicode"
	"unicode/utf8"
)

// Format writes n as netlist text that [Parse] reads back to the same
// title, elements (names, kinds, nodes and exact values), input and
// output: the title as a '*' comment, one element per line with the
// columns aligned, then ".io IN OUT" (the defaults "in" and "out" for
// empty fields) and ".end". Values are written in the shortest decimal
// that reads back exactly, with a prefix SPICE reads the same way: "4.7k",
// "1meg", "15n", "2.2u", "0.47"; never "M" or a bare "f".
//
// Format returns an error, writing nothing, when n cannot be written as
// text: an element whose name does not start with its kind's letter, a
// wrong number of nodes, a name or node that is empty or holds white
// space or ';', or a value that is not finite. Errors from w are
// returned as they are.
func Format(w io.Writer, n *Netlist) error {
	rows := make([][]string, 0, len(n.Elements))
	for i := range n.Elements {
		e := &n.Elements[i]
		row, err := formatElement(e)
		if err != nil {
			return err
		}
		rows = append(rows, row)
	}
	in, out := n.In, n.Out
	if in == "" {
		in = DefaultIn
	}
	if out == "" {
		out = DefaultOut
	}
	for _, s := range []string{in, out} {
		if !validField(s) {
			return fmt.Errorf("netlist: cannot write input or output node %q: a node name must be non-empty without white space or ';'", s)
		}
	}

	var b strings.Builder
	if t := strings.TrimSpace(strings.ReplaceAll(n.Title, "\n", " ")); t != "" {
		b.WriteString("* " + t + "\n")
	}
	var widths []int
	for _, row := range rows {
		for j, f := range row {
			if j == len(widths) {
				widths = append(widths, 0)
			}
			widths[j] = max(widths[j], utf8.RuneCountInString(f))
		}
	}
	for _, row := range rows {
		for j, f := range row {
			b.WriteString(f)
			if j < len(row)-1 {
				b.WriteString(strings.Repeat(" ", widths[j]-utf8.RuneCountInString(f)+1))
			}
		}
		b.WriteByte('\n')
	}
	b.WriteString(".io " + in + " " + out + "\n.end\n")
	_, err := io.WriteString(w, b.String())
	return err
}

// formatElement returns the fields of an element's line.
func formatElement(e *Element) ([]string, error) {
	if e.Kind < Resistor || e.Kind > OpAmp {
		return nil, fmt.Errorf("netlist: cannot write %q: unknown kind %d", e.Name, int(e.Kind))
	}
	sh := shapes[e.Kind]
	r, _ := utf8.DecodeRuneInString(e.Name)
	if k, ok := kindOf(r); !ok || k != e.Kind || !validField(e.Name) {
		return nil, fmt.Errorf("netlist: cannot write element %q: %s's name must start with %s and hold no white space or ';'", e.Name, sh.what, e.Kind)
	}
	if len(e.Nodes) != sh.nodes {
		return nil, fmt.Errorf("netlist: cannot write %s: it has %s; %s takes %s", e.Name, count(len(e.Nodes), "node"), sh.what, sh.terms)
	}
	row := make([]string, 0, 1+len(e.Nodes)+1)
	row = append(row, e.Name)
	for _, nd := range e.Nodes {
		if !validField(nd) {
			return nil, fmt.Errorf("netlist: cannot write %s: node %q must be non-empty without white space or ';'", e.Name, nd)
		}
		row = append(row, nd)
	}
	if e.Kind != OpAmp {
		if math.IsNaN(e.Value) || math.IsInf(e.Value, 0) {
			return nil, fmt.Errorf("netlist: cannot write %s: its value %v is not finite", e.Name, e.Value)
		}
		row = append(row, FormatValue(e.Kind, e.Value))
	}
	return row, nil
}

// validField reports whether s can stand as one field of a line.
func validField(s string) bool {
	return s != "" && !strings.ContainsRune(s, ';') && strings.IndexFunc(s, unicode.IsSpace) < 0
}

var (
	bigPrefixes   = []config.Prefix{{Exp: 0, Symbol: ""}, {Exp: 3, Symbol: "k"}, {Exp: 6, Symbol: "meg"}, {Exp: 9, Symbol: "G"}}
	smallPrefixes = []config.Prefix{{Exp: -12, Symbol: "p"}, {Exp: -9, Symbol: "n"}, {Exp: -6, Symbol: "u"}, {Exp: -3, Symbol: "m"}, {Exp: 0, Symbol: ""}}
)

// FormatValue writes an element value as netlist text without unit or
// space, with the largest prefix not above its magnitude: resistances and
// gains with k, meg or G ("4.7k", "1meg"; below 1 as a plain decimal,
// "0.47"), capacitances and inductances with p, n, u or m ("15n",
// "2.2u", "10m"). The digits are the shortest that read back exactly, so
// the text parses back to v for the same kind. NaN and infinities are
// written as Go does ("NaN", "+Inf") and do not parse.
func FormatValue(k Kind, v float64) string {
	prefixes := bigPrefixes
	if k == Capacitor || k == Inductor {
		prefixes = smallPrefixes
	}
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	num, symbol := config.SplitSI(v, prefixes)
	return num + symbol
}
