package simulate

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// kernelDegree is the degree of the polynomial that stands for the kernel
// on each one-sample segment. The kernel is an entire function inside its
// support whose fastest component (the sinc at half the rate) turns half a
// revolution per segment; degree 16 reproduces it to about 1e−15.
const kernelDegree = 16

// kernel is the band-limited interpolation kernel κ(t), t in samples: a
// sinc cut off at half the rate under a Kaiser window of half-length half,
//
//	κ(t) = sinc(t)·I₀(β·√(1 − (t/half)²))/I₀(β)  for |t| < half, 0 beyond.
//
// Since sinc vanishes at the non-zero integers, κ(k) = δ_k: the
// interpolated signal passes through the samples. Its Fourier transform is
// the ideal low-pass (1 below rate/2, 0 above) smoothed by the window's
// transform: flat to within δ = 10^(−atten/20) below passband·rate and
// below δ above (1 − passband)·rate.
//
// For the state update the kernel is cut into the 2·half segments
// [k, k+1], k = −half … half−1, each held as a polynomial in θ ∈ [0, 1]
// and scaled to unit area: κ(k + θ)/area = Σ_j coef[k+half][j]·θʲ. The
// scaling makes the 0 Hz gain exact; it moves κ(0) from 1 by
// 1 − area (2e−6 with the defaults), well inside the ripple.
type kernel struct {
	half     int
	passband float64
	atten    float64 // design stopband attenuation in dB
	beta     float64
	area     float64 // ∫κ before scaling
	coef     [][kernelDegree + 1]float64
}

// newKernel designs the kernel of half-length half samples (the delay it
// introduces) flat below passband·rate. The attenuation follows Kaiser's
// design formula for a transition band from passband to 1 − passband
// (in units of the rate): atten = 8 + 2.285·Δω·span dB with
// Δω = 2π·(1 − 2·passband) and span = 2·half, and β from atten by
// Kaiser's β formula.
func newKernel(half int, passband float64) *kernel {
	dw := 2 * math.Pi * (1 - 2*passband)
	atten := 8 + 2.285*dw*float64(2*half)
	k := &kernel{half: half, passband: passband, atten: atten, beta: kaiserBeta(atten)}
	k.coef = make([][kernelDegree + 1]float64, 2*half)
	area := 0.0
	for s := range k.coef {
		seg := float64(s - half)
		k.coef[s] = chebFit(func(th float64) float64 { return k.eval(seg + th) })
		for j, c := range k.coef[s] {
			area += c / float64(j+1) // ∫₀¹ θʲ dθ
		}
	}
	// Scale the segments to unit area, K(0) = 1, so that the 0 Hz gain is
	// exact (the window leaves it 1 − 2e−6 at the default).
	k.area = area
	for s := range k.coef {
		for j := range k.coef[s] {
			k.coef[s][j] /= area
		}
	}
	return k
}

// kaiserBeta returns the Kaiser window parameter β for a stopband
// attenuation of atten dB (Kaiser's empirical formula).
func kaiserBeta(atten float64) float64 {
	switch {
	case atten > 50:
		return 0.1102 * (atten - 8.7)
	case atten >= 21:
		return 0.5842*math.Pow(atten-21, 0.4) + 0.07886*(atten-21)
	default:
		return 0
	}
}

// eval returns κ(t) for t in samples.
func (k *kernel) eval(t float64) float64 {
	h := float64(k.half)
	if t <= -h || t >= h {
		return 0
	}
	r := t / h
	w := besselI0(k.beta*math.Sqrt(1-r*r)) / besselI0(k.beta)
	return sinc(t) * w
}

// sinc returns sin(πt)/(πt), 1 at t = 0.
func sinc(t float64) float64 {
	if t == 0 {
		return 1
	}
	return math.Sin(math.Pi*t) / (math.Pi * t)
}

// besselI0 returns the modified Bessel function of the first kind of order
// zero, I₀(x) = Σ (x/2)^{2m}/(m!)², summed until the terms stop
// contributing. All terms are positive, so the sum is accurate to a few
// ulps for the arguments used here (|x| ≤ 40).
func besselI0(x float64) float64 {
	q := x * x / 4
	sum, term := 1.0, 1.0
	for m := 1; m < 500; m++ {
		term *= q / float64(m*m)
		sum += term
		if term < sum*1e-17 {
			break
		}
	}
	return sum
}

// chebFit interpolates f on [0, 1] at the kernelDegree+1 Chebyshev points
// of the first kind and returns the interpolant's coefficients in powers of
// θ. The Chebyshev series is converted to powers of v = 2θ − 1 and then
// shifted to θ; for the smooth, slowly turning segments of the kernel the
// coefficients stay of order one and the conversion loses no more than a
// few ulps.
func chebFit(f func(float64) float64) [kernelDegree + 1]float64 {
	const n = kernelDegree + 1
	var vals [n]float64
	for i := range vals {
		v := math.Cos(math.Pi * (float64(i) + 0.5) / n)
		vals[i] = f((v + 1) / 2)
	}
	// Chebyshev coefficients c_j = (2/n)·Σ_i f(v_i)·cos(jπ(i+½)/n).
	var cheb [n]float64
	for j := range cheb {
		s := 0.0
		for i := range vals {
			s += vals[i] * math.Cos(math.Pi*float64(j)*(float64(i)+0.5)/n)
		}
		cheb[j] = 2 * s / n
	}
	cheb[0] /= 2
	// Powers of v: accumulate c_j·T_j(v) with T_{j+1} = 2v·T_j − T_{j−1}.
	var pv, tPrev, tCur, tNext [n]float64
	tPrev[0] = 1 // T_0
	tCur[1] = 1  // T_1
	pv[0] += cheb[0]
	for i := range pv {
		pv[i] += cheb[1] * tCur[i]
	}
	for j := 2; j < n; j++ {
		for i := range tNext {
			tNext[i] = -tPrev[i]
			if i > 0 {
				tNext[i] += 2 * tCur[i-1]
			}
		}
		for i := range pv {
			pv[i] += cheb[j] * tNext[i]
		}
		tPrev, tCur = tCur, tNext
	}
	// Substitute v = 2θ − 1 by Horner's rule on polynomials in θ.
	var out [n]float64
	for i := n - 1; i >= 0; i-- {
		// out ← out·(2θ − 1) + pv[i]
		var next [n]float64
		for m := range out {
			next[m] -= out[m]
			if m+1 < n {
				next[m+1] += 2 * out[m]
			}
		}
		next[0] += pv[i]
		out = next
	}
	return out
}

// segment returns κ(k + θ)/area from the stored polynomial of segment k;
// k must lie in [−half, half).
func (k *kernel) segment(seg int, th float64) float64 {
	c := &k.coef[seg+k.half]
	s := 0.0
	for j := kernelDegree; j >= 0; j-- {
		s = s*th + c[j]
	}
	return s
}

// derivFIR designs the filter that stands for the j-th derivative
// (j = 1 or 2) of the interpolated input, in units of the sample interval:
// taps t[m], m = 0 … 2·half, whose response Σ_m t[m]·e^{−jΩm} approximates
// (jΩ)ʲ·e^{−jΩ·half} for Ω up to 2π·passband.
//
// Sampling κ^{(j)} would give the right response only up to the kernel's
// images near multiples of the rate, which a derivative weighs by
// (2πk/Ω)ʲ against the wanted (small) response at low frequencies. The
// taps are instead fitted by least squares to the relative response:
// (anti)symmetric taps a_k = t[half+k] = ∓t[half−k] turn the response into
// Σ_k a_k·b_k(Ω) with b_k = −2·sin(kΩ)/Ω (j = 1) or
// b_k = 4·sin²(kΩ/2)/Ω² (j = 2, centre tap −2·Σa_k so that 0 Hz gives 0),
// fitted to 1 on a fine grid of the band, near-minimax by Lawson's
// reweighting. With the defaults the relative error is 1.5e−5 for the
// first derivative (whose antisymmetric taps must give 0 at half the
// rate) and 5e−7 for the second.
func derivFIR(half, j int, passband float64) []float64 {
	const grid, rounds = 600, 40
	wp := 2 * math.Pi * passband
	basis := mat.NewDense(grid, half, nil)
	for i := range grid {
		w := wp * (float64(i) + 0.5) / grid
		for k := 1; k <= half; k++ {
			var b float64
			if j == 1 {
				b = -2 * math.Sin(float64(k)*w) / w
			} else {
				s := math.Sin(float64(k) * w / 2)
				b = 4 * s * s / (w * w)
			}
			basis.Set(i, k-1, b)
		}
	}
	// Lawson's iteration: reweighting the least-squares fit by the error
	// moves it towards the minimax (equiripple) fit.
	weight := make([]float64, grid)
	for i := range weight {
		weight[i] = 1.0 / grid
	}
	a := mat.NewDense(grid, half, nil)
	rhs := mat.NewVecDense(grid, nil)
	var sol, fit mat.VecDense
	for range rounds {
		for i := range grid {
			sw := math.Sqrt(weight[i])
			for k := range half {
				a.Set(i, k, sw*basis.At(i, k))
			}
			rhs.SetVec(i, sw)
		}
		_ = sol.SolveVec(a, rhs) // full column rank; a Condition warning leaves a usable fit
		fit.MulVec(basis, &sol)
		sum := 0.0
		for i := range grid {
			weight[i] *= math.Abs(fit.AtVec(i) - 1)
			sum += weight[i]
		}
		if !(sum > 0) {
			break
		}
		for i := range weight {
			weight[i] /= sum
		}
	}
	t := make([]float64, 2*half+1)
	for k := 1; k <= half; k++ {
		ak := sol.AtVec(k - 1)
		t[half+k] = ak
		if j == 1 {
			t[half-k] = -ak
		} else {
			t[half-k] = ak
			t[half] -= 2 * ak
		}
	}
	return t
}
