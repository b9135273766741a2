package extract

import (
	"math"
	"slices"

	"tonetrace/dsp/trace"
)

// Local interpolation.
//
// Every reading between points comes from a local model of the response
// around it, in one of five forms:
//
//   - kindDB: gain in dB and unwrapped phase in degrees, each a real cubic
//     in u = log10 f through the four nearest points;
//   - kindH: H itself, a complex cubic in u through the same points;
//   - kindInv: 1/H, a complex cubic in u;
//   - kindRat1, kindRat2: a rational function of s of first or second
//     order fitted to H at those points by least squares (see biquad).
//
// Gain in dB is log|H|, which is singular at both the poles and the zeros
// of a network, so a dB cubic rounds off a sharp resonance and a deep
// notch alike. H is singular only at the poles, so it follows a notch
// (where dB has a cusp) closely; 1/H is singular only at the zeros, so it
// follows a resonance (for an all-pole network it is a polynomial in s);
// the rational forms are exact for networks of their order.
//
// The complex and rational forms need H not to spin round the origin
// between points. A latency does that, so a delay τ seen at the high end
// of the trace (Analyzer.tau) is divided out first, H·e^{jωτ} — an analytic
// factor that leaves |H| alone — and added back to phase and delay.
//
// Which form serves a given place is decided by the data: each form is
// refitted without one of the nearby points and asked to predict that
// point's gain; the form with the smallest error is used. Where the trace
// is too short for that test, the dB form is used.

// maxNodes is the number of points a local interpolant passes through: a
// cubic, whose error falls as the fourth power of the point spacing.
const maxNodes = 4

// local is a real interpolating polynomial of degree m−1 (m ≤ 4) through m
// nodes, held in Newton's divided-difference form.
type local struct {
	m int
	x [maxNodes]float64
	c [maxNodes]float64
}

// fit builds the polynomial through (x[i], y[i]); len(x) = len(y) ≤ 4 and
// the x are distinct.
func (p *local) fit(x, y []float64) {
	p.m = len(x)
	copy(p.x[:], x)
	copy(p.c[:], y)
	for k := 1; k < p.m; k++ {
		for i := p.m - 1; i >= k; i-- {
			p.c[i] = (p.c[i] - p.c[i-1]) / (p.x[i] - p.x[i-k])
		}
	}
}

// at returns the value and the first derivative of the polynomial at t.
func (p *local) at(t float64) (v, d float64) {
	v = p.c[p.m-1]
	for k := p.m - 2; k >= 0; k-- {
		d = d*(t-p.x[k]) + v
		v = v*(t-p.x[k]) + p.c[k]
	}
	return v, d
}

// clocal is the complex counterpart of local: a complex polynomial of a
// real variable through up to four nodes.
type clocal struct {
	m int
	x [maxNodes]float64
	c [maxNodes]complex128
}

func (p *clocal) fit(x []float64, y []complex128) {
	p.m = len(x)
	copy(p.x[:], x)
	copy(p.c[:], y)
	for k := 1; k < p.m; k++ {
		for i := p.m - 1; i >= k; i-- {
			p.c[i] = (p.c[i] - p.c[i-1]) / complex(p.x[i]-p.x[i-k], 0)
		}
	}
}

// at returns the value and the derivative of the polynomial at t.
func (p *clocal) at(t float64) (v, d complex128) {
	v = p.c[p.m-1]
	for k := p.m - 2; k >= 0; k-- {
		dt := complex(t-p.x[k], 0)
		d = d*dt + v
		v = v*dt + p.c[k]
	}
	return v, d
}

type modelKind uint8

const (
	kindDB modelKind = iota
	kindH
	kindInv
	kindRat1
	kindRat2
	numKinds
)

// model is a local interpolant of the response; see the comment at the
// top of this file.
type model struct {
	kind modelKind
	g    local   // gain in dB against u (kindDB)
	ph   local   // unwrapped phase in degrees against u (every kind)
	c    clocal  // H·e^{jωτ}, or its inverse, against u
	q    biquad  // H·e^{jωτ} (kindRat1, kindRat2)
	tau  float64 // delay removed before the complex fit, in seconds
}

// gainDB returns the model's gain in dB at u = t.
func (m *model) gainDB(t float64) float64 {
	switch m.kind {
	case kindH:
		z, _ := m.c.at(t)
		return 10 * math.Log10(sqAbs(z))
	case kindInv:
		z, _ := m.c.at(t)
		return -10 * math.Log10(sqAbs(z))
	case kindRat1, kindRat2:
		z, _ := m.q.at(t)
		return 10 * math.Log10(sqAbs(z))
	}
	v, _ := m.g.at(t)
	return v
}

// phase returns the model's unwrapped phase in degrees and its group delay
// −dφ/dω in seconds at u = t.
func (m *model) phase(t float64) (deg, delay float64) {
	ref, d := m.ph.at(t)
	f := math.Pow(10, t)
	// du/dω = 1/(2π f ln 10).
	dudw := 1 / (2 * math.Pi * f * math.Ln10)
	if m.kind == kindDB {
		return ref, -d * math.Pi / 180 * dudw
	}
	var arg, darg float64 // arg H̃ and d arg H̃/du, radians and radians per decade
	if m.kind == kindRat1 || m.kind == kindRat2 {
		z, dlog := m.q.at(t)
		arg, darg = math.Atan2(imag(z), real(z)), imag(dlog)
	} else {
		z, dz := m.c.at(t)
		arg, darg = math.Atan2(imag(z), real(z)), imag(dz/z)
		if m.kind == kindInv {
			arg, darg = -arg, -darg
		}
	}
	// H = H̃·e^{−jωτ}: φ = φ̃ − ωτ, τ_g = −dφ̃/dω + τ.
	deg = arg*180/math.Pi - 360*f*m.tau
	deg = ref + trace.WrapDeg(deg-ref)
	return deg, -darg*dudw + m.tau
}

// fitNodes builds a model of the given kind through the points idx
// (at most 4, distinct, ascending) and reports whether it could.
func (a *Analyzer) fitNodes(m *model, kind modelKind, idx []int) bool {
	var x, y, p, f [maxNodes]float64
	var z [maxNodes]complex128
	k := len(idx)
	for j, i := range idx {
		x[j], y[j], p[j], f[j] = a.u[i], a.g[i], a.ph[i], a.f[i]
	}
	m.kind, m.tau = kind, a.tau
	m.ph.fit(x[:k], p[:k])
	if kind == kindDB {
		m.g.fit(x[:k], y[:k])
		return true
	}
	for j, i := range idx {
		w := 2 * math.Pi * a.f[i] * a.tau
		z[j] = a.h[i] * complex(math.Cos(w), math.Sin(w))
		if kind == kindInv {
			z[j] = 1 / z[j]
		}
	}
	switch kind {
	case kindRat1:
		return m.q.fit(1, f[:k], z[:k])
	case kindRat2:
		return m.q.fit(2, f[:k], z[:k])
	}
	m.c.fit(x[:k], z[:k])
	return true
}

// fitRange builds a model through the consecutive points [s, s+cnt),
// choosing its kind among the first kinds by how well each predicts each
// probe point from its four nearest neighbours (probes < 0 are skipped).
func (a *Analyzer) fitRange(m *model, s, cnt int, probes [3]int, kinds modelKind) {
	n := len(a.u)
	var idx [maxNodes]int
	best, bestErr := kindDB, math.Inf(1)
	for kind := range kinds {
		var sum float64
		ok := false
		for _, j := range probes {
			if j < 0 {
				continue
			}
			nodes := looNodes(idx[:0], j, n)
			if nodes == nil {
				continue
			}
			e := math.Inf(1)
			if a.fitNodes(m, kind, nodes) {
				e = math.Abs(m.gainDB(a.u[j]) - a.g[j])
			}
			if math.IsNaN(e) {
				e = math.Inf(1)
			}
			sum += e
			ok = true
		}
		if !ok {
			break
		}
		if sum < bestErr {
			best, bestErr = kind, sum
		}
	}
	for j := range cnt {
		idx[j] = s + j
	}
	if !a.fitNodes(m, best, idx[:cnt]) {
		a.fitNodes(m, kindDB, idx[:cnt])
	}
}

// looNodes returns the four points nearest to j, excluding j itself, with
// at least one on each side; nil when the trace is too short for that.
func looNodes(dst []int, j, n int) []int {
	if j < 1 || j > n-2 || n < 5 {
		return nil
	}
	lo, hi := j, j // nearest points taken so far: (lo, j) and (j, hi]
	for len(dst) < maxNodes {
		switch {
		case lo-1 >= 0 && (hi+1 >= n || j-(lo-1) <= hi+1-j):
			lo--
			dst = append(dst, lo)
		case hi+1 < n:
			hi++
			dst = append(dst, hi)
		default:
			return nil
		}
	}
	slices.Sort(dst)
	return dst
}

// stencil returns the first index of the m = min(4, n) consecutive nodes
// used to interpolate inside the interval [i, i+1] of an n-point trace:
// centred (i−1 … i+2) where the trace allows, shifted inward at its ends.
func stencil(i, n int) (start, m int) {
	m = min(maxNodes, n)
	start = max(0, min(i-1, n-m))
	return start, m
}

// peakStencil returns the nodes for the extremum at interior index k: the
// three points k−1, k, k+1 plus the neighbour on the side where the data
// lean (toward the larger of y[k−1], y[k+1] when want > 0, the smaller when
// want < 0), so that the true extremum lies near the middle of the nodes.
func peakStencil(y []float64, k int, want float64) (start, m int) {
	n := len(y)
	if n < maxNodes {
		return 0, n
	}
	right := (y[k+1]-y[k-1])*want >= 0
	switch {
	case right && k+2 < n:
		return k - 1, maxNodes
	case !right && k-2 >= 0:
		return k - 2, maxNodes
	case k+2 < n:
		return k - 1, maxNodes
	default:
		return k - 2, maxNodes
	}
}

// crossing returns u in [u[i], u[i+1]] where the gain crosses level, and
// leaves in m the model used. The caller guarantees that g[i] and g[i+1]
// lie on opposite sides of level (or one on it).
func (a *Analyzer) crossing(m *model, i int, level float64) float64 {
	lo, hi := a.u[i], a.u[i+1]
	s, cnt := stencil(i, len(a.u))
	a.fitRange(m, s, cnt, [3]int{i, i + 1, -1}, numKinds)
	if t, ok := m.bisect(lo, hi, level); ok {
		return t
	}
	// The chosen model misses a point by rounding or, for the
	// least-squares biquad, by its residual: use the dB cubic, which
	// passes through the points.
	var idx [maxNodes]int
	for j := range cnt {
		idx[j] = s + j
	}
	a.fitNodes(m, kindDB, idx[:cnt])
	if t, ok := m.bisect(lo, hi, level); ok {
		return t
	}
	m.g.fit(a.u[i:i+2], a.g[i:i+2])
	return lo + (hi-lo)*(level-a.g[i])/(a.g[i+1]-a.g[i])
}

// bisect returns the u in [lo, hi] where the model's gain crosses level,
// or false when the gains at lo and hi lie on the same side of it.
func (m *model) bisect(lo, hi, level float64) (float64, bool) {
	flo := m.gainDB(lo) - level
	fhi := m.gainDB(hi) - level
	switch {
	case math.IsNaN(flo) || math.IsNaN(fhi):
		return 0, false
	case flo == 0:
		return lo, true
	case fhi == 0:
		return hi, true
	case (flo > 0) == (fhi > 0):
		return 0, false
	}
	for range 64 {
		mid := 0.5 * (lo + hi)
		if mid <= lo || mid >= hi {
			break
		}
		fm := m.gainDB(mid) - level
		if fm == 0 {
			return mid, true
		}
		if (fm > 0) == (flo > 0) {
			lo, flo = mid, fm
		} else {
			hi = mid
		}
	}
	return 0.5 * (lo + hi), true
}

// extremum returns u and the gain in dB of the maximum (sign = +1) or
// minimum (sign = −1) of the model around the interior point k, searched
// between u[k−1] and u[k+1], and leaves in m the model used.
//
// The complex and rational models can place a sharp extreme between two
// points, which is right for an undersampled resonance or notch and wrong
// for a wiggle of noise; they are allowed only when the point stands out
// from its second neighbours on both sides by more than six times the
// noise level.
func (a *Analyzer) extremum(m *model, k int, sign float64) (t, v float64) {
	s, cnt := peakStencil(a.g, k, sign)
	kinds := numKinds
	n := len(a.g)
	prom := math.Inf(1)
	for _, j := range [2]int{max(k-2, 0), min(k+2, n-1)} {
		prom = math.Min(prom, (a.g[k]-a.g[j])*sign)
	}
	if !(prom > 6*a.noise) {
		kinds = kindDB + 1
	}
	a.fitRange(m, s, cnt, [3]int{k - 1, k, k + 1}, kinds)
	t = golden(func(t float64) float64 {
		return -sign * m.gainDB(t)
	}, a.u[k-1], a.u[k+1])
	v = m.gainDB(t)
	// The model passes through the data, so its extremum is at least as
	// extreme as the best point; guard against rounding and against the
	// residual of the least-squares model.
	if !((v-a.g[k])*sign >= 0) {
		return a.u[k], a.g[k]
	}
	return t, v
}

// golden minimises f on [a, b] by a coarse scan followed by golden-section
// search around the best sample, and returns the abscissa of the minimum.
// The scan makes it safe for functions with a second, shallower dip.
func golden(f func(float64) float64, a, b float64) float64 {
	const scan = 16
	best, bestV := a, f(a)
	step := (b - a) / scan
	for j := 1; j <= scan; j++ {
		t := a + float64(j)*step
		if j == scan {
			t = b
		}
		if v := f(t); v < bestV {
			best, bestV = t, v
		}
	}
	lo, hi := math.Max(a, best-step), math.Min(b, best+step)
	const invPhi = 0.6180339887498949
	c := hi - invPhi*(hi-lo)
	d := lo + invPhi*(hi-lo)
	fc, fd := f(c), f(d)
	for range 100 {
		if hi-lo <= 1e-14*(math.Abs(lo)+math.Abs(hi)) {
			break
		}
		if fc < fd {
			hi, d, fd = d, c, fc
			c = hi - invPhi*(hi-lo)
			fc = f(c)
		} else {
			lo, c, fc = c, d, fd
			d = lo + invPhi*(hi-lo)
			fd = f(d)
		}
	}
	t := 0.5 * (lo + hi)
	if !(f(t) <= bestV) {
		return best
	}
	return t
}

func sqAbs(z complex128) float64 { return real(z)*real(z) + imag(z)*imag(z) }
