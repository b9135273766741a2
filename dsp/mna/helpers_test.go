package mna

import (
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"tonetrace/dsp/netlist"
)

// el makes an element from its name (whose first letter gives the kind),
// its nodes separated by spaces, and its value.
func el(name, nodes string, value float64) netlist.Element {
	kinds := map[byte]netlist.Kind{'R': netlist.Resistor, 'C': netlist.Capacitor, 'L': netlist.Inductor, 'E': netlist.VCVS, 'U': netlist.OpAmp}
	k, ok := kinds[strings.ToUpper(name[:1])[0]]
	if !ok {
		panic("el: unknown element letter in " + name)
	}
	return netlist.Element{Name: name, Kind: k, Nodes: strings.Fields(nodes), Value: value}
}

// nl makes a netlist with input "in" and output "out".
func nl(title string, elems ...netlist.Element) *netlist.Netlist {
	return &netlist.Netlist{Title: title, Elements: elems, In: "in", Out: "out"}
}

func db(h complex128) float64  { return 20 * math.Log10(cmplx.Abs(h)) }
func deg(h complex128) float64 { return cmplx.Phase(h) * 180 / math.Pi }

// wrapDeg wraps a phase difference to (−180, 180].
func wrapDeg(d float64) float64 {
	d = math.Remainder(d, 360)
	if d <= -180 {
		d += 360
	}
	return d
}

// mustBuild builds n or fails the test.
func mustBuild(t testing.TB, n *netlist.Netlist, fx Fixture) *Descriptor {
	t.Helper()
	d, err := Build(n, fx)
	if err != nil {
		t.Fatalf("Build(%s): %v", n.Title, err)
	}
	return d
}

// mustResponse returns H(f) or fails the test.
func mustResponse(t testing.TB, s *Solver, f float64) complex128 {
	t.Helper()
	h, err := s.Response(f)
	if err != nil {
		t.Fatalf("Response(%g): %v", f, err)
	}
	return h
}

// crossing returns the frequency in [lo, hi] at which g(f) − target
// changes sign, by bisection on a logarithmic scale to a relative width
// of 1e−13.
func crossing(t testing.TB, g func(f float64) float64, target, lo, hi float64) float64 {
	t.Helper()
	glo := g(lo) - target
	if (g(hi)-target)*glo > 0 {
		t.Fatalf("crossing: no sign change of g − %g in [%g, %g]", target, lo, hi)
	}
	for hi/lo-1 > 1e-13 {
		mid := math.Sqrt(lo * hi)
		if gm := g(mid) - target; gm*glo > 0 {
			lo, glo = mid, gm
		} else {
			hi = mid
		}
	}
	return math.Sqrt(lo * hi)
}
