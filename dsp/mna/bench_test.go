package mna

import (
	"strconv"
	"testing"

	"tonetrace/dsp/netlist"
)

// benchNetworks returns networks of several sizes for the benchmarks,
// keyed by element count: the RC low-pass (2), the Tow-Thomas biquad (11)
// and a twin-T into a fourth-order Sallen-Key pair with gain (20).
func benchNetworks() []struct {
	n  *netlist.Netlist
	fx Fixture
} {
	cases := spiceCases()
	tow, sk4 := cases[0].n, cases[2].n
	twenty := &netlist.Netlist{Title: "twin-T into Sallen-Key", In: "in", Out: "out"}
	twenty.Elements = append(twenty.Elements,
		el("Rt1", "in ta", 10e3), el("Rt2", "ta t", 10e3), el("Ct3", "ta 0", 30e-9),
		el("Ct1", "in tb", 15e-9), el("Ct2", "tb t", 15e-9), el("Rt3", "tb 0", 5e3))
	for _, e := range sk4.Elements {
		for i, v := range e.Nodes {
			if v == "in" {
				e.Nodes = append([]string(nil), e.Nodes...)
				e.Nodes[i] = "t"
			}
		}
		twenty.Elements = append(twenty.Elements, e)
	}
	fx := Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}
	return []struct {
		n  *netlist.Netlist
		fx Fixture
	}{{rcLowPass(), fx}, {tow, fx}, {twenty, fx}}
}

// BenchmarkResponse times one frequency with a reused Solver.
func BenchmarkResponse(b *testing.B) {
	for _, c := range benchNetworks() {
		d := mustBuild(b, c.n, c.fx)
		b.Run(strconv.Itoa(len(c.n.Elements))+"-elements-"+strconv.Itoa(d.Size())+"-unknowns", func(b *testing.B) {
			s := NewSolver(d)
			b.ReportAllocs()
			f := 1000.0
			for b.Loop() {
				if _, err := s.Response(f); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkPredict times a 300-frequency prediction, trace included.
func BenchmarkPredict(b *testing.B) {
	freqs := logFreqs(300, 10, 100e3)
	for _, c := range benchNetworks() {
		d := mustBuild(b, c.n, c.fx)
		b.Run(strconv.Itoa(len(c.n.Elements))+"-elements-300-freqs", func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := Predict(d, freqs); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkResponsesTo times the same 300 frequencies into a reused
// buffer, the form fitting uses.
func BenchmarkResponsesTo(b *testing.B) {
	freqs := logFreqs(300, 10, 100e3)
	dst := make([]complex128, len(freqs))
	for _, c := range benchNetworks() {
		s := NewSolver(mustBuild(b, c.n, c.fx))
		b.Run(strconv.Itoa(len(c.n.Elements))+"-elements-300-freqs", func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := s.ResponsesTo(dst, freqs); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkBuild and BenchmarkSetValue time building the system and
// restamping it after a value change.
func BenchmarkBuild(b *testing.B) {
	c := benchNetworks()[2]
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Build(c.n, c.fx); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSetValue(b *testing.B) {
	c := benchNetworks()[2]
	w, err := NewNetwork(c.n, c.fx)
	if err != nil {
		b.Fatal(err)
	}
	vals := [2]float64{10e3, 12e3}
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		i++
		if err := w.SetValue("R11", vals[i&1]); err != nil {
			b.Fatal(err)
		}
	}
}
