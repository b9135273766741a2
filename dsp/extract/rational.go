package extract

import "math"

// biquad is a local second-order rational model of a response,
//
//	H(s) ≈ (b0 + b1·s + b2·s²)/(1 + a1·s + a2·s²),  s = j·f/fc,
//
// with real coefficients, fitted by least squares to a few points around
// fc. Any network of second order at most (an RC corner, a series RLC, a
// Sallen-Key stage, a twin-T, a peaking or shelving equaliser) is
// represented exactly, so a resonance or a notch sampled by only a couple
// of points is still located accurately.
//
// The fit linearises the ratio as Levy (1959) did, b·S − a·S·H = H, and
// reweights each equation by 1/|D·H| from the previous pass as Sanathanan
// and Koerner (1963) did, so that the final pass minimises the relative
// error of H.
type biquad struct {
	fc    float64
	order int // 1 or 2; a first-order model has b2 = a2 = 0
	b     [3]float64
	a     [3]float64 // a[0] = 1
}

// maxRows is the number of real equations of a fit through maxNodes
// points.
const maxRows = 2 * maxNodes

// fit fits the model of the given order (1 or 2) to the points (f[i],
// h[i]), 3 ≤ len(f) ≤ 4, and reports whether the equations determined it.
func (q *biquad) fit(order int, f []float64, h []complex128) bool {
	m := len(f)
	if m < 3 {
		return false
	}
	q.order = order
	q.fc = math.Sqrt(f[0] * f[m-1])
	q.b = [3]float64{}
	q.a = [3]float64{1, 0, 0}
	cols := 2*order + 1
	var A [maxRows][5]float64
	var rhs [maxRows]float64
	for range 3 {
		for i := range m {
			nu := f[i] / q.fc
			s := complex(0, nu)
			hs := h[i] * s
			hs2 := hs * s
			d := complex(q.a[0], 0) + complex(q.a[1], 0)*s + complex(q.a[2], 0)*s*s
			w := 1 / math.Sqrt(sqAbs(d*h[i]))
			r, c := 2*i, 2*i+1
			if order == 1 {
				// Unknowns b0, b1, a1.
				A[r] = [5]float64{w, 0, -real(hs) * w}
				A[c] = [5]float64{0, nu * w, -imag(hs) * w}
			} else {
				// Unknowns b0, b1, b2, a1, a2.
				A[r] = [5]float64{w, 0, -nu * nu * w, -real(hs) * w, -real(hs2) * w}
				A[c] = [5]float64{0, nu * w, 0, -imag(hs) * w, -imag(hs2) * w}
			}
			rhs[r] = real(h[i]) * w
			rhs[c] = imag(h[i]) * w
		}
		x, ok := lstsq(&A, &rhs, 2*m, cols)
		if !ok {
			return false
		}
		if order == 1 {
			q.b = [3]float64{x[0], x[1], 0}
			q.a = [3]float64{1, x[2], 0}
		} else {
			q.b = [3]float64{x[0], x[1], x[2]}
			q.a = [3]float64{1, x[3], x[4]}
		}
	}
	return true
}

// at returns H and d(ln H)/du at u = t (u = log10 f).
func (q *biquad) at(t float64) (h, dlog complex128) {
	s := complex(0, math.Pow(10, t)/q.fc)
	n := complex(q.b[0], 0) + s*(complex(q.b[1], 0)+s*complex(q.b[2], 0))
	d := complex(q.a[0], 0) + s*(complex(q.a[1], 0)+s*complex(q.a[2], 0))
	dn := complex(q.b[1], 0) + 2*s*complex(q.b[2], 0)
	dd := complex(q.a[1], 0) + 2*s*complex(q.a[2], 0)
	// ds/du = s·ln 10.
	return n / d, (dn/n - dd/d) * s * math.Ln10
}

// lstsq solves the first rows equations of A·x = b in the first cols
// unknowns (cols ≤ 5) in the least-squares sense by Householder QR,
// overwriting A and b. It reports false when A is numerically
// rank-deficient.
func lstsq(A *[maxRows][5]float64, b *[maxRows]float64, rows, cols int) (x [5]float64, ok bool) {
	if rows < cols {
		return x, false
	}
	var diag [5]float64
	var scale float64
	for k := range cols {
		// The equations are scaled to order one, so a plain sum of
		// squares cannot overflow.
		var norm float64
		for i := k; i < rows; i++ {
			norm += A[i][k] * A[i][k]
		}
		norm = math.Sqrt(norm)
		scale = math.Max(scale, norm)
		if norm == 0 || norm <= 1e-13*scale {
			return x, false
		}
		if A[k][k] > 0 {
			norm = -norm
		}
		// v = column k below the diagonal minus norm·e_k, stored in place.
		for i := k; i < rows; i++ {
			A[i][k] /= -norm
		}
		A[k][k]++
		for j := k + 1; j < cols; j++ {
			var s float64
			for i := k; i < rows; i++ {
				s += A[i][k] * A[i][j]
			}
			s = -s / A[k][k]
			for i := k; i < rows; i++ {
				A[i][j] += s * A[i][k]
			}
		}
		var s float64
		for i := k; i < rows; i++ {
			s += A[i][k] * b[i]
		}
		s = -s / A[k][k]
		for i := k; i < rows; i++ {
			b[i] += s * A[i][k]
		}
		diag[k] = norm
	}
	for k := cols - 1; k >= 0; k-- {
		s := b[k]
		for j := k + 1; j < cols; j++ {
			s -= A[k][j] * x[j]
		}
		x[k] = s / diag[k]
	}
	return x, true
}
