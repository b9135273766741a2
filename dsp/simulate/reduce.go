package simulate

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/gonum"
	"gonum.org/v1/gonum/mat"

	"tonetrace/dsp/mna"
)

// Thresholds of the reduction.
const (
	// fastRadius separates the eigenvalues λ = σ/(σ − s) of σ·(G+σC)⁻¹C:
	// those below it in magnitude belong to infinite poles (the algebraic
	// unknowns) or to poles faster than about σ/fastRadius, which are
	// treated as instantaneous. A Jordan block of order k at λ = 0 is
	// perturbed by rounding to about ε^{1/k}; 1e−4 keeps blocks up to
	// order 3 on the fast side.
	fastRadius = 1e-4
	// maxDerivative is the highest derivative of the input the output may
	// contain (an ideal differentiator has 1).
	maxDerivative = 2
	// improperTol is the level, relative to the size of the network's
	// response, above which a derivative term beyond maxDerivative is
	// reported as an error rather than dropped as rounding.
	improperTol = 1e-9
	// keepTol is the level below which a derivative term is rounding and
	// dropped.
	keepTol = 1e-12
	// unstableTol is the growth rate, relative to σ, above which a pole
	// counts as unstable.
	unstableTol = 1e-6
	// spuriousPole is the speed, relative to σ, beyond which growing poles
	// are taken for rounding of a high-order block at infinity rather
	// than for an oscillator.
	spuriousPole = 1e3
	// singularCond is the condition number of the equilibrated G + σC above
	// which the network equations count as singular.
	singularCond = 1e13
)

// model is the network reduced to ordinary state-space form, with the
// input's derivatives allowed in the output:
//
//	ξ′ = A·ξ + b·u,   y = c·ξ + Σ_j p[j]·(σ⁻¹·d/dt)ʲ u.
//
// The full MNA vector is x = xs·ξ + xf0·u (+ derivative terms of u, left
// out), and pinv maps an x back to the ξ that best reproduces its
// charges and fluxes C·x.
type model struct {
	sigma float64
	n     int       // number of states
	a     []float64 // n×n, block upper triangular (real Schur blocks)
	start []int     // start[r]: first non-zero column of row r of a
	b, c  []float64 // n
	p     []float64 // derivative weights, len 1…maxDerivative+1
	poles []complex128
	size  int       // N, unknowns of the descriptor
	xs    []float64 // N×n
	xf0   []float64 // N
	pinv  []float64 // n×N
}

// checkDescriptor reports what is wrong with d's shape or values.
func checkDescriptor(d *mna.Descriptor) error {
	if d == nil || d.G == nil || d.C == nil {
		return fmt.Errorf("%w: nil descriptor or matrix; build it with mna.Build", ErrDescriptor)
	}
	n := d.Size()
	if n == 0 {
		return fmt.Errorf("%w: no unknowns (B is empty)", ErrDescriptor)
	}
	for _, m := range []struct {
		name string
		a    *mat.Dense
	}{{"G", d.G}, {"C", d.C}} {
		r, c := m.a.Dims()
		if r != n || c != n {
			return fmt.Errorf("%w: %s is %d×%d but B has %d entries; all must agree", ErrDescriptor, m.name, r, c, n)
		}
		for i := range n {
			for j := range n {
				if v := m.a.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
					return fmt.Errorf("%w: %s[%d][%d] = %v is not finite", ErrDescriptor, m.name, i, j, v)
				}
			}
		}
	}
	for i, v := range d.B {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%w: B[%d] = %v is not finite", ErrDescriptor, i, v)
		}
	}
	if d.Out < 0 || d.Out >= n {
		return fmt.Errorf("%w: output index %d outside 0…%d", ErrDescriptor, d.Out, n-1)
	}
	return nil
}

// reduce turns the descriptor C·x′ + G·x = B·u, y = x[Out] into a model.
//
// With K = G + σC nonsingular, (G + sC)·x = B·u becomes
// (I + (s−σ)·M)·x = b̃·u with M = K⁻¹C and b̃ = K⁻¹B. The eigenvalues of
// σM are λ = σ/(σ − s) for the finite poles s and 0 for the infinite ones.
// A real Schur form of σM (in equilibrated unknowns) ordered with |λ| ≥ fastRadius
// first, and decoupled by a Sylvester equation, splits x into slow
// coordinates ξ with
//
//	(I + (s−σ)/σ·T₁₁)·ξ = b_s·u  ⇒  ξ′ = σ(I − T₁₁⁻¹)·ξ + σT₁₁⁻¹b_s·u
//
// and fast coordinates η with (I + (s−σ)/σ·T₂₂)·η = b_f·u. T₂₂ is nilpotent
// up to rounding (or holds only poles beyond σ/fastRadius), so with
// R = (I − T₂₂)⁻¹ and N = T₂₂R,
//
//	η = Σ_j (−s/σ)ʲ·R·Nʲ·b_f·u,
//
// a polynomial in s: its constant term is the direct feed-through, the
// others are derivatives of the input.
func reduce(d *mna.Descriptor, sigma0 float64) (*model, error) {
	if err := checkDescriptor(d); err != nil {
		return nil, err
	}
	N := d.Size()
	var (
		lu    mat.LU
		sigma float64
		rs    = make([]float64, N)
		cs    = make([]float64, N)
		kh    = mat.NewDense(N, N, nil)
		found bool
	)
	// σ must not be a pole; a pencil that is singular everywhere fails at
	// every shift.
	for _, f := range []float64{1, 1.7, 0.61, 2.9} {
		sigma = sigma0 * f
		for i := range N {
			for j := range N {
				kh.Set(i, j, d.G.At(i, j)+sigma*d.C.At(i, j))
			}
		}
		equilibrate(kh, rs, cs)
		lu.Factorize(kh)
		if c := lu.Cond(); c < singularCond && !math.IsInf(c, 0) && !math.IsNaN(c) {
			found = true
			break
		}
	}
	if !found {
		return nil, fmt.Errorf("%w: G + sC is singular at every trial s — a node with no connection, an element shorting an ideal source, or an op-amp without feedback leaves the unknowns undetermined", ErrSingular)
	}

	// In the equilibrated unknowns x̂ (x = diag(cs)·x̂):
	// σM̂ = σ·K̂⁻¹·diag(rs)·C·diag(cs) and b̂ = K̂⁻¹·diag(rs)·B, as one
	// solve. Equilibration, rather than balancing σM (which drives the
	// scale factors of a nilpotent part towards 0 and ∞ and with them the
	// rounding), keeps the volt and ampere unknowns commensurate.
	rhs := mat.NewDense(N, N+1, nil)
	for i := range N {
		for j := range N {
			rhs.Set(i, j, rs[i]*d.C.At(i, j)*cs[j])
		}
		rhs.Set(i, N, rs[i]*d.B[i])
	}
	var z mat.Dense
	if err := lu.SolveTo(&z, false, rhs); err != nil && !isCondition(err) {
		return nil, fmt.Errorf("%w: %v", ErrSingular, err)
	}
	ms := make([]float64, N*N) // σM̂, row-major
	bh := make([]float64, N)
	for i := range N {
		for j := range N {
			ms[i*N+j] = sigma * z.At(i, j)
		}
		bh[i] = z.At(i, N)
	}
	scale := cs
	// H(σ) = x[Out] at s = σ, a measure of the response's size.
	hSigma := scale[d.Out] * bh[d.Out]

	// Ordered real Schur form σM̂ = Q·T·Qᵀ; h becomes T.
	h := ms
	q, slow, err := orderedSchur(h, N)
	if err != nil {
		return nil, err
	}
	n, nf := slow, N-slow

	// Decouple: T₁₁Y − YT₂₂ = −T₁₂.
	y, err := sylvester(h, N, n)
	if err != nil {
		return nil, err
	}

	// Input in Schur coordinates: b_s = Q₁ᵀb̂ − Y·Q₂ᵀb̂, b_f = Q₂ᵀb̂.
	bsv := make([]float64, n)
	bf := make([]float64, nf)
	for j := range N {
		v := 0.0
		for i := range N {
			v += q[i*N+j] * bh[i]
		}
		if j < n {
			bsv[j] = v
		} else {
			bf[j-n] = v
		}
	}
	for i := range n {
		for j := range nf {
			bsv[i] -= y[i*nf+j] * bf[j]
		}
	}
	// Bases: x = xs·ξ + xf·η with xs = D·Q₁, xf = D·(Q₁Y + Q₂), D = diag(cs).
	xs := make([]float64, N*n)
	xf := make([]float64, N*nf)
	for i := range N {
		for j := range n {
			xs[i*n+j] = scale[i] * q[i*N+j]
		}
		for j := range nf {
			v := q[i*N+n+j]
			for k := range n {
				v += q[i*N+k] * y[k*nf+j]
			}
			xf[i*nf+j] = scale[i] * v
		}
	}

	m := &model{sigma: sigma, n: n, size: N, xs: xs}

	// Slow part: A = σ(I − T₁₁⁻¹), b = σT₁₁⁻¹b_s, c = xs[Out].
	if n > 0 {
		t11 := mat.NewDense(n, n, nil)
		for i := range n {
			for j := range n {
				t11.Set(i, j, h[i*N+j])
			}
		}
		var inv mat.Dense
		if err := inv.Inverse(t11); err != nil && !isCondition(err) {
			return nil, fmt.Errorf("%w: the state matrix is singular: %v", ErrSingular, err)
		}
		m.start = make([]int, n)
		for r := range n {
			m.start[r] = r
			if r > 0 && h[r*N+r-1] != 0 {
				m.start[r] = r - 1
			}
		}
		m.a = make([]float64, n*n)
		m.b = make([]float64, n)
		m.c = make([]float64, n)
		for i := range n {
			for j := m.start[i]; j < n; j++ {
				v := -sigma * inv.At(i, j)
				if i == j {
					v += sigma
				}
				m.a[i*n+j] = v
			}
			for j := range n {
				m.b[i] += sigma * inv.At(i, j) * bsv[j]
			}
			m.c[i] = xs[d.Out*n+i]
		}
		// Poles s = σ(λ − 1)/λ from the diagonal blocks of T₁₁.
		for k := 0; k < n; {
			bs := blockSize(h, N, k)
			a := h[k*N+k]
			if bs == 1 {
				m.poles = append(m.poles, complex(sigma*(a-1)/a, 0))
			} else {
				im := math.Sqrt(math.Abs(h[k*N+k+1] * h[(k+1)*N+k]))
				for _, lam := range []complex128{complex(a, im), complex(a, -im)} {
					m.poles = append(m.poles, complex(sigma, 0)*(lam-1)/lam)
				}
			}
			k += bs
		}
		var grow []complex128
		for _, s := range m.poles {
			if real(s) > unstableTol*sigma {
				grow = append(grow, s)
			}
		}
		if len(grow) > 0 {
			slowest := grow[0]
			for _, s := range grow {
				if cmplx.Abs(s) < cmplx.Abs(slowest) {
					slowest = s
				}
			}
			if cmplx.Abs(slowest) > spuriousPole*sigma {
				// A Jordan block of order k at infinity splits under
				// rounding into k eigenvalues around a circle of radius
				// ε^{1/k}; from k = 4 on they pass fastRadius and show
				// as fast poles on both sides of the axis.
				return nil, fmt.Errorf("%w: the equations show growing poles far beyond the sample rate (%.3g Hz); this is the mark of an output that follows the input's third or higher derivative, such as three ideal differentiators in a row — limit their gain with a resistor in series with each input capacitor",
					ErrImproper, cmplx.Abs(slowest)/(2*math.Pi))
			}
			return nil, fmt.Errorf("%w: pole at %.6g%+.6gj rad/s (%.4g Hz) grows with time; the simulation would diverge — check the sign of the feedback and the op-amp inputs",
				ErrUnstable, real(slowest), imag(slowest), cmplx.Abs(slowest)/(2*math.Pi))
		}
	}

	// Fast part: R = (I − T₂₂)⁻¹, N = T₂₂R, v_j = (−N)ʲRb_f, p_j = c_f·v_j.
	m.xf0 = make([]float64, N)
	m.p = []float64{0}
	if nf > 0 {
		t22 := mat.NewDense(nf, nf, nil)
		imt := mat.NewDense(nf, nf, nil)
		for i := range nf {
			for j := range nf {
				v := h[(n+i)*N+n+j]
				t22.Set(i, j, v)
				if i == j {
					imt.Set(i, j, 1-v)
				} else {
					imt.Set(i, j, -v)
				}
			}
		}
		var r mat.Dense
		if err := r.Inverse(imt); err != nil && !isCondition(err) {
			return nil, fmt.Errorf("%w: algebraic part singular: %v", ErrSingular, err)
		}
		var nm mat.Dense
		nm.Mul(t22, &r)
		v := mat.NewVecDense(nf, nil)
		v.MulVec(&r, mat.NewVecDense(nf, bf))
		cf := make([]float64, nf)
		for j := range nf {
			cf[j] = xf[d.Out*nf+j]
		}
		for i := range N {
			for j := range nf {
				m.xf0[i] += xf[i*nf+j] * v.AtVec(j)
			}
		}
		// Size of the response, for judging which terms are rounding.
		size := math.Abs(hSigma) + norm(cf)*mat.Norm(v, 2) + norm(m.c)*norm(bsv)
		coef := []float64{dot(cf, v.RawVector().Data)}
		size += math.Abs(coef[0])
		next := mat.NewVecDense(nf, nil)
		for j := 1; j <= nf+1; j++ {
			next.MulVec(&nm, v)
			next.ScaleVec(-1, next)
			v, next = next, v
			pj := dot(cf, v.RawVector().Data)
			atNyquist := math.Abs(pj) * math.Pow(0.5, float64(j)) // |s/σ| = ½ at half the rate
			switch {
			case j > maxDerivative && atNyquist > improperTol*size:
				return nil, fmt.Errorf("%w: the output depends on the input's derivative of order %d (a network with a gain rising as f^%d, like cascaded ideal differentiators); at most %d is simulated — add the source's or the amplifier's resistance, or a capacitor that limits the gain",
					ErrImproper, j, j, maxDerivative)
			case j <= maxDerivative && atNyquist > keepTol*size:
				for len(coef) <= j {
					coef = append(coef, 0)
				}
				coef[j] = pj
			}
		}
		m.p = coef
	}

	// pinv = (C·xs)⁺·C: the slow state that best reproduces C·x.
	if n > 0 {
		cx := mat.NewDense(N, n, nil)
		cx.Mul(d.C, mat.NewDense(N, n, xs))
		var pinv mat.Dense
		if err := pinv.Solve(cx, d.C); err != nil && !isCondition(err) {
			return nil, fmt.Errorf("%w: state map: %v", ErrSingular, err)
		}
		m.pinv = make([]float64, n*N)
		for i := range n {
			for j := range N {
				m.pinv[i*N+j] = pinv.At(i, j)
			}
		}
	}
	return m, nil
}

// orderedSchur overwrites h (N×N, row-major) with its real Schur form T,
// h = Q·T·Qᵀ, ordered so that the diagonal blocks with eigenvalues of
// magnitude at least fastRadius come first, and returns Q and the size of
// that leading part.
func orderedSchur(h []float64, N int) (q []float64, slow int, err error) {
	impl := gonum.Implementation{}
	tau := make([]float64, N-1)
	work := make([]float64, 1)
	impl.Dgehrd(N, 0, N-1, h, N, tau, work, -1)
	lwork := max(int(work[0]), N)
	work = make([]float64, lwork)
	impl.Dgehrd(N, 0, N-1, h, N, tau, work, lwork)
	q = make([]float64, N*N)
	copy(q, h)
	impl.Dorghr(N, 0, N-1, q, N, tau, work[:1], -1)
	if l := int(work[0]); l > len(work) {
		work = make([]float64, l)
	}
	impl.Dorghr(N, 0, N-1, q, N, tau, work, len(work))
	for i := 2; i < N; i++ {
		for j := range i - 1 {
			h[i*N+j] = 0
		}
	}
	wr := make([]float64, N)
	wi := make([]float64, N)
	impl.Dhseqr(lapack.EigenvaluesAndSchur, lapack.SchurOrig, N, 0, N-1, h, N, wr, wi, q, N, work[:1], -1)
	if l := int(work[0]); l > len(work) {
		work = make([]float64, l)
	}
	if bad := impl.Dhseqr(lapack.EigenvaluesAndSchur, lapack.SchurOrig, N, 0, N-1, h, N, wr, wi, q, N, work, len(work)); bad > 0 {
		return nil, 0, fmt.Errorf("%w: the eigenvalue iteration did not converge", ErrSingular)
	}

	// Order the slow blocks (|λ| ≥ fastRadius) first.
	for k := 0; k < N; {
		bs := blockSize(h, N, k)
		if blockMag(h, N, k, bs) >= fastRadius {
			if k != slow {
				_, _, ok := impl.Dtrexc(lapack.UpdateSchur, N, h, N, q, N, k, slow, work[:N])
				if !ok {
					return nil, 0, fmt.Errorf("%w: could not separate the network's poles from its algebraic part (ill-conditioned equations)", ErrSingular)
				}
			}
			slow += bs
		}
		k += bs
	}
	// Check the split (a swap may change a block's shape but not its
	// eigenvalues).
	for k := 0; k < N; {
		bs := blockSize(h, N, k)
		if (blockMag(h, N, k, bs) >= fastRadius) != (k < slow) || (k < slow && k+bs > slow) {
			return nil, 0, fmt.Errorf("%w: could not separate the network's poles from its algebraic part (ill-conditioned equations)", ErrSingular)
		}
		k += bs
	}
	return q, slow, nil
}

// equilibrate scales the rows and then the columns of k by powers of two so
// that each has its largest magnitude in [½, 1), returning the factors:
// k ← diag(rs)·k·diag(cs). Rows or columns of zeros keep a factor of 1.
func equilibrate(k *mat.Dense, rs, cs []float64) {
	n, _ := k.Dims()
	pow2 := func(m float64) float64 {
		if m == 0 {
			return 1
		}
		_, e := math.Frexp(m)
		return math.Ldexp(1, -e)
	}
	for i := range n {
		m := 0.0
		for j := range n {
			m = math.Max(m, math.Abs(k.At(i, j)))
		}
		rs[i] = pow2(m)
		for j := range n {
			k.Set(i, j, k.At(i, j)*rs[i])
		}
	}
	for j := range n {
		m := 0.0
		for i := range n {
			m = math.Max(m, math.Abs(k.At(i, j)))
		}
		cs[j] = pow2(m)
		for i := range n {
			k.Set(i, j, k.At(i, j)*cs[j])
		}
	}
}

// blockSize returns 2 when row k of the quasi-triangular h (n×n, row-major)
// starts a 2×2 diagonal block, else 1.
func blockSize(h []float64, n, k int) int {
	if k+1 < n && h[(k+1)*n+k] != 0 {
		return 2
	}
	return 1
}

// blockMag returns the magnitude of the eigenvalues of the diagonal block
// of h at k of size bs.
func blockMag(h []float64, n, k, bs int) float64 {
	if bs == 1 {
		return math.Abs(h[k*n+k])
	}
	det := h[k*n+k]*h[(k+1)*n+k+1] - h[k*n+k+1]*h[(k+1)*n+k]
	return math.Sqrt(math.Abs(det))
}

// sylvester solves T₁₁Y − YT₂₂ = −T₁₂ for Y (n×nf, row-major), where
// T₁₁ = h[:n,:n], T₁₂ = h[:n,n:], T₂₂ = h[n:,n:] of the quasi-triangular
// h (N×N), column block by column block of the upper quasi-triangular T₂₂
// (Bartels–Stewart).
func sylvester(h []float64, N, n int) ([]float64, error) {
	nf := N - n
	y := make([]float64, n*nf)
	if n == 0 || nf == 0 {
		return y, nil
	}
	t22 := func(i, j int) float64 { return h[(n+i)*N+n+j] }
	for j := 0; j < nf; {
		bs := 1
		if j+1 < nf && t22(j+1, j) != 0 {
			bs = 2
		}
		// rhs_c = −T₁₂[:, c] + Σ_{i<j} y_i·T₂₂[i][c] for c in the block.
		rhs := mat.NewDense(n*bs, 1, nil)
		for c := range bs {
			for r := range n {
				v := -h[r*N+n+j+c]
				for i := range j {
					v += y[r*nf+i] * t22(i, j+c)
				}
				rhs.Set(c*n+r, 0, v)
			}
		}
		sys := mat.NewDense(n*bs, n*bs, nil)
		for c := range bs {
			for e := range bs {
				for r := range n {
					if c == e {
						for k := range n {
							sys.Set(c*n+r, e*n+k, h[r*N+k])
						}
					}
					// −Y·T₂₂ block: column c gets −y_e·t(e, c).
					sys.Set(c*n+r, e*n+r, sys.At(c*n+r, e*n+r)-t22(j+e, j+c))
				}
			}
		}
		var sol mat.Dense
		if err := sol.Solve(sys, rhs); err != nil && !isCondition(err) {
			return nil, fmt.Errorf("%w: decoupling the poles from the algebraic part failed: %v", ErrSingular, err)
		}
		for c := range bs {
			for r := range n {
				y[r*nf+j+c] = sol.At(c*n+r, 0)
			}
		}
		j += bs
	}
	return y, nil
}

// isCondition reports whether err is gonum's warning that a matrix is
// ill-conditioned (the result is still computed).
func isCondition(err error) bool {
	var c mat.Condition
	return errors.As(err, &c)
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

func norm(a []float64) float64 { return math.Sqrt(dot(a, a)) }
