package simulate

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/mat"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/tone"
)

// testRate is the sample rate of most tests, in Hz.
const testRate = 48000

// Tolerances of the stepped-sine comparison: the accuracy target of the
// issue, 0.05 dB and 0.5° from 10 Hz to 0.4·fs.
const (
	gainTolDB   = 0.05
	phaseTolDeg = 0.5
)

// circuit is a test-only netlist that stamps its own MNA descriptor by the
// textbook rules (independent of package mna's builder): node voltages
// first, in order of first appearance, then one branch current per
// inductor, voltage-controlled source, ideal op-amp and the driving source.
type circuit struct {
	elems []element
}

type element struct {
	kind  byte // 'R', 'C', 'L', 'E' (VCVS), 'U' (ideal op-amp)
	name  string
	nodes []string
	value float64
}

func (c *circuit) add(kind byte, name string, value float64, nodes ...string) *circuit {
	c.elems = append(c.elems, element{kind: kind, name: name, nodes: nodes, value: value})
	return c
}

// R, C and L connect a and b.
func (c *circuit) R(name, a, b string, ohms float64) *circuit {
	return c.add('R', name, ohms, a, b)
}
func (c *circuit) C(name, a, b string, farads float64) *circuit {
	return c.add('C', name, farads, a, b)
}
func (c *circuit) L(name, a, b string, henries float64) *circuit {
	return c.add('L', name, henries, a, b)
}

// E is a voltage-controlled voltage source: V(p) − V(m) = gain·(V(cp) − V(cm)).
func (c *circuit) E(name, p, m, cp, cm string, gain float64) *circuit {
	return c.add('E', name, gain, p, m, cp, cm)
}

// U is an ideal op-amp (nullor): V(inp) = V(inn), output current free.
func (c *circuit) U(name, out, inp, inn string) *circuit {
	return c.add('U', name, 0, out, inp, inn)
}

// build stamps the descriptor of the circuit driven by an ideal voltage
// source u at node in, with output node out. Node "0" is ground.
func (c *circuit) build(in, out string) *mna.Descriptor {
	index := map[string]int{}
	var names []string
	node := func(s string) {
		if s == "0" {
			return
		}
		if _, ok := index[s]; !ok {
			index[s] = len(names)
			names = append(names, "V("+s+")")
		}
	}
	node(in)
	for _, e := range c.elems {
		nn := e.nodes
		if e.kind == 'E' {
			nn = e.nodes[:4]
		}
		for _, s := range nn {
			node(s)
		}
	}
	node(out)
	nv := len(names)
	var branches []string
	for _, e := range c.elems {
		if e.kind == 'L' || e.kind == 'E' || e.kind == 'U' {
			branches = append(branches, "I("+e.name+")")
		}
	}
	branches = append(branches, "I(source)")
	n := nv + len(branches)
	g := mat.NewDense(n, n, nil)
	cm := mat.NewDense(n, n, nil)
	b := make([]float64, n)
	idx := func(s string) int {
		if s == "0" {
			return -1
		}
		return index[s]
	}
	add := func(m *mat.Dense, i, j int, v float64) {
		if i >= 0 && j >= 0 {
			m.Set(i, j, m.At(i, j)+v)
		}
	}
	twoTerm := func(m *mat.Dense, a, bb int, v float64) {
		add(m, a, a, v)
		add(m, bb, bb, v)
		add(m, a, bb, -v)
		add(m, bb, a, -v)
	}
	k := nv
	for _, e := range c.elems {
		switch e.kind {
		case 'R':
			twoTerm(g, idx(e.nodes[0]), idx(e.nodes[1]), 1/e.value)
		case 'C':
			twoTerm(cm, idx(e.nodes[0]), idx(e.nodes[1]), e.value)
		case 'L': // V(a) − V(b) − L·I′ = 0, current a→b
			a, bb := idx(e.nodes[0]), idx(e.nodes[1])
			add(g, a, k, 1)
			add(g, bb, k, -1)
			add(g, k, a, 1)
			add(g, k, bb, -1)
			add(cm, k, k, -e.value)
			k++
		case 'E':
			p, m, cp, cn := idx(e.nodes[0]), idx(e.nodes[1]), idx(e.nodes[2]), idx(e.nodes[3])
			add(g, p, k, 1)
			add(g, m, k, -1)
			add(g, k, p, 1)
			add(g, k, m, -1)
			add(g, k, cp, -e.value)
			add(g, k, cn, e.value)
			k++
		case 'U':
			o, p, m := idx(e.nodes[0]), idx(e.nodes[1]), idx(e.nodes[2])
			add(g, o, k, 1)
			add(g, k, p, 1)
			add(g, k, m, -1)
			k++
		}
	}
	s := idx(in)
	add(g, s, k, 1)
	add(g, k, s, 1)
	b[k] = 1
	return &mna.Descriptor{G: g, C: cm, B: b, Out: idx(out), Unknowns: append(names, branches...)}
}

// acResponse returns H(jω) = [(G + jωC)⁻¹B][Out] at f Hz, by solving the
// real form [G −ωC; ωC G]·[xr; xi] = [B; 0] — the definition of the AC
// response in package mna's documentation.
func acResponse(t testing.TB, d *mna.Descriptor, f float64) complex128 {
	t.Helper()
	n := d.Size()
	w := 2 * math.Pi * f
	a := mat.NewDense(2*n, 2*n, nil)
	rhs := mat.NewVecDense(2*n, nil)
	for i := range n {
		for j := range n {
			g, c := d.G.At(i, j), d.C.At(i, j)
			a.Set(i, j, g)
			a.Set(i, n+j, -w*c)
			a.Set(n+i, j, w*c)
			a.Set(n+i, n+j, g)
		}
		rhs.SetVec(i, d.B[i])
	}
	var x mat.VecDense
	if err := x.SolveVec(a, rhs); err != nil {
		t.Fatalf("AC solve at %g Hz: %v", f, err)
	}
	return complex(x.AtVec(d.Out), x.AtVec(n+d.Out))
}

// logFreqs returns n frequencies spaced evenly in log f from lo to hi.
func logFreqs(lo, hi float64, n int) []float64 {
	f := make([]float64, n)
	for i := range f {
		f[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	return f
}

// dB and deg convert a complex ratio.
func dB(h complex128) float64  { return 20 * math.Log10(cmplx.Abs(h)) }
func deg(h complex128) float64 { return cmplx.Phase(h) * 180 / math.Pi }

// wrapDeg wraps an angle in degrees to (−180, 180].
func wrapDeg(a float64) float64 {
	w := math.Remainder(a, 360)
	if w <= -180 {
		w += 360
	}
	return w
}

// steppedSine drives sim with a cosine at each frequency from rest:
// settle seconds, then an integer-cycle block (at least minBlock seconds),
// and estimates H = Y/X with the tone package's IEEE Std 1057 fit, the
// output block taken Latency() samples after the input block.
func steppedSine(t testing.TB, sim *Simulator, freqs []float64, settle, minBlock float64) []complex128 {
	t.Helper()
	rate := sim.Rate()
	est, err := tone.NewEstimator(rate)
	if err != nil {
		t.Fatal(err)
	}
	lat := sim.Latency()
	out := make([]complex128, len(freqs))
	for i, f := range freqs {
		nb, err := tone.CycleLength(f, rate, minBlock)
		if err != nil {
			t.Fatal(err)
		}
		ns := int(math.Ceil(settle * rate))
		total := ns + nb + lat
		x := make([]float64, total)
		for n := range x {
			cyc := f * float64(n) / rate
			cyc -= math.Floor(cyc)
			x[n] = 0.5 * math.Cos(2*math.Pi*cyc+0.3)
		}
		y := make([]float64, total)
		sim.Reset()
		sim.Process(y, x)
		ex, err := est.Fit(x[ns:ns+nb], f)
		if err != nil {
			t.Fatalf("fit input at %g Hz: %v", f, err)
		}
		ey, err := est.Fit(y[ns+lat:ns+lat+nb], f)
		if err != nil {
			t.Fatalf("fit output at %g Hz: %v", f, err)
		}
		out[i] = ey.Phasor / ex.Phasor
	}
	return out
}

// checkResponse compares measured ratios with predictions within the
// issue's tolerances and reports the worst errors.
func checkResponse(t *testing.T, name string, freqs []float64, got, want []complex128) {
	t.Helper()
	worstG, worstP := 0.0, 0.0
	for i, f := range freqs {
		r := got[i] / want[i]
		eg, ep := dB(r), deg(r)
		worstG = math.Max(worstG, math.Abs(eg))
		worstP = math.Max(worstP, math.Abs(ep))
		if math.Abs(eg) > gainTolDB || math.Abs(ep) > phaseTolDeg {
			t.Errorf("%s at %.5g Hz: simulated %.4f dB %.3f°, predicted %.4f dB %.3f° (error %.4f dB %.4f°; limits %g dB %g°)",
				name, f, dB(got[i]), deg(got[i]), dB(want[i]), deg(want[i]), eg, ep, gainTolDB, phaseTolDeg)
		}
	}
	t.Logf("%s: %d points, worst error %.2e dB, %.2e°", name, len(freqs), worstG, worstP)
}

func fmtC(h complex128) string { return fmt.Sprintf("%.4f dB %.3f°", dB(h), deg(h)) }
