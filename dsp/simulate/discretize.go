package simulate

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// stepper holds the per-sample recursion of a model driven by the kernel's
// interpolation of the input:
//
//	y[n]   = c·ξ[n] + Σ_m taps[m]·u[n−m],    m = 0 … 2·half
//	ξ[n+1] = Φ·ξ[n] + Σ_m Γ[·][m]·u[n−m],   m = 0 … 2·half−1.
type stepper struct {
	n, w   int
	phi    []float64 // n×n, rows start at start[r]
	start  []int
	gamma  []float64 // n×w
	c      []float64 // n
	taps   []float64 // w+1
	direct bool      // taps is p0 at m = half and zero elsewhere
	p0     float64
}

// discretize computes the stepper of m at the sample interval T = 1/rate.
//
// Between samples the input is ũ(t) = Σ_k u[k]·κ(t/T − k − half), so over
// [nT, (n+1)T] it is Σ_m u[n−m]·κ(θ + m − half), θ = t/T − n, each term a
// polynomial in θ. With the augmented matrix
//
//	Z = [ A·T  b·T·e₀ᵀ ]      (S: ones on the superdiagonal,
//	    [  0      S    ]       size kernelDegree+1)
//
// e^Z holds Φ = e^{AT} and the columns Ψ_j = ∫₀ᵀ e^{A(T−τ)}·b·(τ/T)ʲ/j! dτ
// (Van Loan's method), so Γ[·][m] = Σ_j coef_{m−half, j}·j!·Ψ_j exactly for
// the polynomial segments, stiff poles included. The output's derivative
// terms p_j·(σ⁻¹ d/dt)ʲ ũ at t = nT become p_j·(σT)^{−j} times the taps of
// a filter fitted to the j-th derivative over the passband (derivFIR).
func discretize(m *model, rate float64, k *kernel) *stepper {
	n, w := m.n, 2*k.half
	T := 1 / rate
	st := &stepper{n: n, w: w, c: m.c, start: m.start}
	st.phi = make([]float64, n*n)
	st.gamma = make([]float64, n*w)
	if n > 0 {
		const P = kernelDegree
		size := n + P + 1
		z := mat.NewDense(size, size, nil)
		for i := range n {
			for j := m.start[i]; j < n; j++ {
				z.Set(i, j, m.a[i*n+j]*T)
			}
			z.Set(i, n, m.b[i]*T)
		}
		for j := range P {
			z.Set(n+j, n+j+1, 1)
		}
		var e mat.Dense
		e.Exp(z)
		for i := range n {
			for j := m.start[i]; j < n; j++ { // Φ is block upper triangular like A
				st.phi[i*n+j] = e.At(i, j)
			}
		}
		fact := 1.0
		for j := 0; j <= P; j++ {
			if j > 0 {
				fact *= float64(j)
			}
			for mm := range w {
				cj := k.coef[mm][j] * fact
				if cj == 0 {
					continue
				}
				for i := range n {
					st.gamma[i*w+mm] += cj * e.At(i, n+j)
				}
			}
		}
	}
	st.p0 = m.p[0]
	st.taps = make([]float64, w+1)
	st.taps[k.half] = m.p[0]
	st.direct = true
	sT := m.sigma * T
	for j := 1; j < len(m.p); j++ {
		if m.p[j] == 0 {
			continue
		}
		st.direct = false
		g := m.p[j] * math.Pow(sT, -float64(j))
		for mm, v := range derivFIR(k.half, j, k.passband) {
			st.taps[mm] += g * v
		}
	}
	return st
}
