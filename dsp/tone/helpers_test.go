package tone

import (
	"math"
	"math/cmplx"
)

// testRate is the sample rate of most tests, in Hz.
const testRate = 48000

// synth returns n samples of dc + Σ_k |p[k−1]|·cos(2π·k·freq·i/rate +
// arg p[k−1]), with the phase reduced in cycles before scaling by 2π so
// that long blocks keep full precision.
func synth(n int, rate, freq, dc float64, p ...complex128) []float64 {
	x := make([]float64, n)
	for i := range x {
		v := dc
		for k, pk := range p {
			if pk == 0 {
				continue
			}
			cyc := float64(k+1) * freq * float64(i) / rate
			cyc -= math.Floor(cyc)
			v += cmplx.Abs(pk) * math.Cos(2*math.Pi*cyc+cmplx.Phase(pk))
		}
		x[i] = v
	}
	return x
}

// polar returns a·e^{j·deg°}.
func polar(a, deg float64) complex128 { return cmplx.Rect(a, deg*math.Pi/180) }

// wrap returns an angle in radians wrapped to (−π, π].
func wrap(a float64) float64 {
	w := math.Remainder(a, 2*math.Pi)
	if w <= -math.Pi {
		w += 2 * math.Pi
	}
	return w
}

// moments returns the mean and the (population) variance of v.
func moments(v []float64) (mean, variance float64) {
	for _, x := range v {
		mean += x
	}
	mean /= float64(len(v))
	for _, x := range v {
		variance += (x - mean) * (x - mean)
	}
	return mean, variance / float64(len(v))
}
