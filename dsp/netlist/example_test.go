package netlist_test

import (
	"fmt"
	"os"
	"strings"

	"tonetrace/dsp/netlist"
)

func ExampleParse() {
	const text = `* presence lift
R1 in mid 4k7
C1 mid out 22n   ; coupling
R2 out gnd 1meg
`
	n, err := netlist.Parse(strings.NewReader(text), "lift.cir")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%s: %q, input %s, output %s\n", n.Name, n.Title, n.In, n.Out)
	for _, e := range n.Elements {
		fmt.Println(e.Name, e.Kind, e.Nodes, e.Value)
	}
	// Output:
	// lift.cir: "presence lift", input in, output out
	// R1 R [in mid] 4700
	// C1 C [mid out] 2.2e-08
	// R2 R [out 0] 1e+06
}

func ExampleParse_errors() {
	const text = `R1 in mid 4k7
C1 mid out 1M
R2 out x 10k
`
	_, err := netlist.Parse(strings.NewReader(text), "bad.cir")
	fmt.Println(err)
	// Output:
	// bad.cir:2:12: C1: bad capacitance "1M": unknown unit "M"; hint: SPICE reads M as milli: write "1m" or "1000u" for a millifarad; or write a capacitance in farads without spaces, e.g. "15n", "15nF", "2n2", "100p", "4.7u", "4µ7" or "1e-9"
	// bad.cir:3:8: node "x" is floating: only R2 connects to it; hint: connect it to another element, or name it with ".io IN OUT" if it is the input or output
}

func ExampleFormat() {
	n, err := netlist.Options{In: "src"}.Parse(strings.NewReader("r1 SRC out 4700\nC1 out 0 2.2e-8\n"), "")
	if err != nil {
		fmt.Println(err)
		return
	}
	if err := n.SetValue("R1", 10e3); err != nil {
		fmt.Println(err)
		return
	}
	netlist.Format(os.Stdout, n)
	// Output:
	// r1 SRC out 10k
	// C1 out 0   22n
	// .io SRC out
	// .end
}
