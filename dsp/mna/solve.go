package mna

import (
	"fmt"
	"math"
	"strconv"

	"tonetrace/dsp/trace"
)

// Solver solves a descriptor's system (G + j2πf·C)·X = B at one frequency
// after another without allocating. It factors the complex matrix by
// Gaussian elimination with partial pivoting after scaling each row to a
// largest entry near 1 (the rows of an MNA system mix siemens with pure
// numbers), carrying the right-hand side along. Working in complex
// arithmetic takes a quarter of the memory and half the operations of the
// equivalent real system of twice the size.
//
// A Solver reads the descriptor's G, C and B on every call, so it follows
// changes to their values (as Network.SetValue makes) but not to their
// size. It is not safe for concurrent use; give each goroutine its own.
type Solver struct {
	d   *Descriptor
	n   int
	a   []complex128 // row-major n×n working matrix
	x   []complex128 // right-hand side, then solution
	inv []complex128 // reciprocal pivots
}

// NewSolver returns a solver for d, allocating its n×n complex work
// space once.
func NewSolver(d *Descriptor) *Solver {
	n := d.Size()
	return &Solver{d: d, n: n, a: make([]complex128, n*n), x: make([]complex128, n), inv: make([]complex128, n)}
}

// Descriptor returns the descriptor s solves.
func (s *Solver) Descriptor() *Descriptor { return s.d }

// Response returns H(f) = X[Out]/U, the network's complex transfer ratio at
// frequency f in Hz (f ≥ 0, finite). It returns an error wrapping
// ErrSingular when the system has no unique solution at f, such as at
// 0 Hz for a node reached only through capacitors.
func (s *Solver) Response(f float64) (complex128, error) {
	if err := s.solve(f); err != nil {
		return 0, err
	}
	return s.x[s.d.Out], nil
}

// SolveTo returns the whole solution X(f) for U = 1, in the order of the
// descriptor's Unknowns: node voltages in V per V, branch currents in A
// per V. dst is reused when it has the capacity.
func (s *Solver) SolveTo(dst []complex128, f float64) ([]complex128, error) {
	if err := s.solve(f); err != nil {
		return dst, err
	}
	if cap(dst) < s.n {
		dst = make([]complex128, s.n)
	}
	dst = dst[:s.n]
	copy(dst, s.x)
	return dst, nil
}

// ResponsesTo returns H at each of freqs (Hz, each finite and ≥ 0, in any
// order). dst is reused when it has the capacity. On error the entries
// before the failing frequency are filled.
func (s *Solver) ResponsesTo(dst []complex128, freqs []float64) ([]complex128, error) {
	if cap(dst) < len(freqs) {
		dst = make([]complex128, len(freqs))
	}
	dst = dst[:len(freqs)]
	for i, f := range freqs {
		h, err := s.Response(f)
		if err != nil {
			return dst, err
		}
		dst[i] = h
	}
	return dst, nil
}

// abs1 is |re| + |im|, the cheap complex magnitude used for pivoting.
func abs1(z complex128) float64 { return math.Abs(real(z)) + math.Abs(imag(z)) }

// solve leaves X(f) for U = 1 in s.x.
func (s *Solver) solve(f float64) error {
	if math.IsNaN(f) || math.IsInf(f, 0) || f < 0 {
		return fmt.Errorf("mna: frequency %v Hz; it must be finite and 0 or more", f)
	}
	if s.d.Size() != s.n {
		panic("mna: the descriptor changed size after NewSolver")
	}
	n := s.n
	w := 2 * math.Pi * f
	g, c := s.d.G.RawMatrix(), s.d.C.RawMatrix()
	a, x, inv := s.a, s.x, s.inv
	for i := 0; i < n; i++ {
		gr := g.Data[i*g.Stride : i*g.Stride+n]
		cr := c.Data[i*c.Stride : i*c.Stride+n]
		ar := a[i*n : i*n+n]
		// Scale the row by 1/(max|G| + ω·max|C|), within a factor of 2
		// of its largest entry.
		gm, cm := 0.0, 0.0
		for j := range gr {
			gm = max(gm, math.Abs(gr[j]))
			cm = max(cm, math.Abs(cr[j]))
		}
		big := gm + w*cm
		if big == 0 {
			return s.singular(f, i)
		}
		r := 1 / big
		wr := w * r
		for j := range ar {
			ar[j] = complex(gr[j]*r, cr[j]*wr)
		}
		x[i] = complex(s.d.B[i]*r, 0)
	}
	// Rows now have a largest entry between 1/2 and 1; a pivot this small
	// is a lost equation, not a small number.
	tol := float64(n) * 0x1p-52
	for k := 0; k < n; k++ {
		p, big := k, abs1(a[k*n+k])
		for i := k + 1; i < n; i++ {
			if v := abs1(a[i*n+k]); v > big {
				p, big = i, v
			}
		}
		if big <= tol {
			return s.singular(f, k)
		}
		if p != k {
			rk, rp := a[k*n+k:k*n+n], a[p*n+k:p*n+n]
			for j := range rk {
				rk[j], rp[j] = rp[j], rk[j]
			}
			x[k], x[p] = x[p], x[k]
		}
		// 1/pivot as conj/|·|², safe here: |pivot| is near 1.
		pv := a[k*n+k]
		q := 1 / (real(pv)*real(pv) + imag(pv)*imag(pv))
		ik := complex(real(pv)*q, -imag(pv)*q)
		inv[k] = ik
		rk := a[k*n+k+1 : k*n+n]
		xk := x[k]
		for i := k + 1; i < n; i++ {
			aik := a[i*n+k]
			if aik == 0 {
				continue
			}
			m := aik * ik
			ri := a[i*n+k+1 : i*n+n]
			ri = ri[:len(rk)]
			for j, v := range rk {
				ri[j] -= m * v
			}
			x[i] -= m * xk
		}
	}
	for k := n - 1; k >= 0; k-- {
		sum := x[k]
		rk := a[k*n+k+1 : k*n+n]
		xs := x[k+1 : n]
		xs = xs[:len(rk)]
		for j, v := range rk {
			sum -= v * xs[j]
		}
		x[k] = sum * inv[k]
	}
	return nil
}

// singular describes a breakdown of elimination at unknown k.
func (s *Solver) singular(f float64, k int) error {
	hint := "look for a node held by two voltage sources or amplifier outputs, or an amplifier without feedback"
	if f == 0 {
		hint = "at 0 Hz capacitors are open and inductors short: give every node a resistive path to ground, or ask for a frequency above 0"
	}
	return fmt.Errorf("%w at %v Hz: the equations do not determine %s; %s", ErrSingular, f, s.d.Unknowns[k], hint)
}

// Metadata keys Predict writes.
const (
	MetaMethod     = "method"      // "modified nodal analysis"
	MetaNetwork    = "network"     // Descriptor.Name, when not empty
	MetaSourceOhms = "source_ohms" // Fixture.SourceOhms in Ω
	MetaLoadOhms   = "load_ohms"   // Fixture.LoadOhms in Ω, "inf" when unloaded
	MetaLoadFarads = "load_farads" // Fixture.LoadFarads in F
)

// Predict returns the response of d at freqs (Hz, finite, ≥ 0 and
// strictly ascending, as a trace requires) as a trace whose points carry H
// and no measured quantities, and whose metadata name the method, the
// network and the fixture it was computed with (source_ohms, load_ohms,
// load_farads). It returns an error for a bad frequency or a frequency at
// which the system is singular.
func Predict(d *Descriptor, freqs []float64) (trace.Trace, error) {
	return NewSolver(d).predict(freqs)
}

func (s *Solver) predict(freqs []float64) (trace.Trace, error) {
	for i, f := range freqs {
		if math.IsNaN(f) || math.IsInf(f, 0) || f < 0 {
			return trace.Trace{}, fmt.Errorf("mna: Predict: frequency %d is %v Hz; frequencies must be finite and 0 or more", i+1, f)
		}
		if i > 0 && !(f > freqs[i-1]) {
			return trace.Trace{}, fmt.Errorf("mna: Predict: frequency %d (%v Hz) is not above the one before (%v Hz); give frequencies in ascending order without repeats", i+1, f, freqs[i-1])
		}
	}
	t := trace.Trace{Points: make([]trace.Point, len(freqs))}
	for i, f := range freqs {
		h, err := s.Response(f)
		if err != nil {
			return trace.Trace{}, err
		}
		t.Points[i] = trace.NewPoint(f, h)
	}
	fx := s.d.Fixture
	t.SetMeta(MetaMethod, "modified nodal analysis")
	if s.d.Name != "" {
		t.SetMeta(MetaNetwork, s.d.Name)
	}
	t.SetMeta(MetaSourceOhms, formatFloat(fx.SourceOhms))
	load := math.Inf(1)
	if fx.loaded() {
		load = fx.LoadOhms
	}
	t.SetMeta(MetaLoadOhms, formatFloat(load))
	t.SetMeta(MetaLoadFarads, formatFloat(fx.LoadFarads))
	return t, nil
}

// formatFloat writes v in the shortest form that reads back exactly;
// +Inf as "inf".
func formatFloat(v float64) string {
	if math.IsInf(v, 1) {
		return "inf"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// Response returns H(f) at frequency f in Hz; see Solver.Response. It
// allocates a Solver on every call: use one Solver for sweeps.
func (d *Descriptor) Response(f float64) (complex128, error) {
	return NewSolver(d).Response(f)
}
