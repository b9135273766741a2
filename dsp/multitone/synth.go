package multitone

import (
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
)

// SchroederPhases returns the phases, in radians, that Schroeder (1970)
// gives n equal-amplitude tones for a low crest factor:
//
//	φ_k = −π·k·(k−1)/n,  k = 1 … n,
//
// with φ_k stored at dst[k−1]. dst is reused when it has the capacity.
// n must not be negative.
func SchroederPhases(dst []float64, n int) []float64 {
	if n < 0 {
		panic("multitone: negative tone count")
	}
	dst = resizeFloat(dst, n)
	for i := range dst {
		// Reduce k(k−1)/n modulo 2 exactly in integers first, so large n
		// keeps full precision.
		num := (int64(i+1) * int64(i)) % (2 * int64(n))
		dst[i] = -math.Pi * float64(num) / float64(n)
	}
	return dst
}

// schroederWeighted returns Schroeder's phases for tones of unequal power:
//
//	φ_k = −2π·Σ_{l<k} (k−l)·p_l,  p_l = power_l / Σ power,
//
// (Schroeder 1970, eq. for an arbitrary power spectrum), which reduces to
// −π·k(k−1)/n for equal powers.
func schroederWeighted(dst, power []float64) []float64 {
	n := len(power)
	dst = resizeFloat(dst, n)
	total := 0.0
	for _, p := range power {
		total += p
	}
	// φ_k = −2π Σ_{l<k} (k−l) p_l, built incrementally:
	// S_k = Σ_{l<k} p_l, T_k = Σ_{l<k} (k−l) p_l = T_{k−1} + S_k.
	s, t := 0.0, 0.0
	for k := 0; k < n; k++ {
		if k > 0 {
			s += power[k-1] / total
			t += s
		}
		dst[k] = -2 * math.Pi * math.Mod(t, 1)
	}
	return dst
}

// Synthesize writes one period of n samples of the sum of cosines
//
//	x[i] = Σ_k amp[k]·cos(2π·bins[k]·i/n + phase[k])
//
// into dst (reused when it has the capacity) by one inverse real FFT
// (gonum dsp/fourier) and returns it. Each bin must lie in 1 … n/2−1 and
// occur once; amp is in full-scale units (1 = 0 dBFS peak for one tone),
// phase in radians. It panics when the slices differ in length or a bin is
// out of range, which are programmer mistakes.
func Synthesize(dst []float64, n int, bins []int, amp, phase []float64) []float64 {
	if len(bins) != len(amp) || len(bins) != len(phase) {
		panic("multitone: Synthesize slice lengths differ")
	}
	dst = resizeFloat(dst, n)
	fft := fourier.NewFFT(n)
	coef := make([]complex128, n/2+1)
	synthInto(fft, coef, dst, bins, amp, phase)
	return dst
}

// synthInto fills coef with the half-spectrum of the tones and transforms
// it into x with fft. gonum's unnormalised inverse gives
// x[i] = c₀ + 2·Σ Re(c_k·e^{j2πki/n}) (+ Nyquist), so c_k = A/2·e^{jφ}
// yields A·cos(2πki/n + φ).
func synthInto(fft *fourier.FFT, coef []complex128, x []float64, bins []int, amp, phase []float64) {
	n := len(x)
	for i := range coef {
		coef[i] = 0
	}
	for k, b := range bins {
		if b < 1 || 2*b >= n {
			panic("multitone: bin outside 1 … n/2−1")
		}
		coef[b] = cmplx.Rect(amp[k]/2, phase[k])
	}
	fft.Sequence(x, coef)
}

// CrestFactorDB returns the crest factor 20·log10(peak/rms) of x in dB:
// 3.01 dB for a whole number of cycles of one sine. It returns NaN for an
// empty or all-zero x.
func CrestFactorDB(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	peak, ss := 0.0, 0.0
	for _, v := range x {
		if a := math.Abs(v); a > peak {
			peak = a
		}
		ss += v * v
	}
	if ss == 0 {
		return math.NaN()
	}
	return 20 * math.Log10(peak/math.Sqrt(ss/float64(len(x))))
}

func peakAbs(x []float64) float64 {
	p := 0.0
	for _, v := range x {
		if a := math.Abs(v); a > p {
			p = a
		}
	}
	return p
}

func resizeFloat(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}
