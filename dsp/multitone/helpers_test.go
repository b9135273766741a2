package multitone

import (
	"math"
	"math/cmplx"
	"math/rand/v2"

	iir "tonetrace/dsp/biquad"
)

// biquad is a second-order section from the W3C Audio EQ Cookbook (2021,
// after R. Bristow-Johnson; REFERENCES §7, [S]), designed by package
// dsp/biquad (independent of the analyzer) and held as b and a with a0 = 1.
type biquad struct{ b, a [3]float64 }

// rbj returns the cookbook section of the given type at f0 Hz, quality q
// and (for "peak") gain in dB, for sample rate fs:
// w0 = 2πf0/fs, c = cos w0, s = sin w0, A = 10^(gain/40), α = s/(2Q).
func rbj(kind string, fs, f0, q, gainDB float64) biquad {
	var k iir.Kind
	switch kind {
	case "lpf":
		k = iir.LowPass
	case "hpf":
		k = iir.HighPass
	case "bpf":
		k = iir.BandPass
	case "notch":
		k = iir.Notch
	case "apf":
		k = iir.AllPass
	case "peak":
		k = iir.Peaking
	default:
		panic("unknown biquad " + kind)
	}
	c := iir.Design(k, f0, q, gainDB, fs)
	return biquad{[3]float64{c.B0, c.B1, c.B2}, [3]float64{1, c.A1, c.A2}}
}

// normalised returns the section with a0 = 1.
func (q biquad) normalised() biquad {
	a0 := q.a[0]
	for i := range 3 {
		q.b[i] /= a0
		q.a[i] /= a0
	}
	return q
}

// coeffs returns the section, normalised, as package biquad's Coeffs.
func (q biquad) coeffs() iir.Coeffs {
	q = q.normalised()
	return iir.Coeffs{B0: q.b[0], B1: q.b[1], B2: q.b[2], A1: q.a[1], A2: q.a[2]}
}

// response is H(e^{jω}) = Σb_k e^{−jkω} / Σa_k e^{−jkω} at f Hz
// (REFERENCES §7).
func (q biquad) response(f, fs float64) complex128 { return q.coeffs().Response(f, fs) }

// filter runs the section over x (direct form I, zero initial state) into
// a new slice.
func (q biquad) filter(x []float64) []float64 {
	y := make([]float64, len(x))
	f := iir.Filter{Coeffs: q.coeffs()}
	f.Process(y, x)
	return y
}

// loop returns k periods of p back to back, as a player looping it sends.
func loop(p []float64, k int) []float64 {
	out := make([]float64, 0, len(p)*k)
	for range k {
		out = append(out, p...)
	}
	return out
}

// delay returns x delayed by d samples (zeros first).
func delay(x []float64, d int) []float64 {
	y := make([]float64, len(x))
	copy(y[d:], x)
	return y
}

// addNoise returns x plus white Gaussian noise of standard deviation
// sigma drawn from rng.
func addNoise(dst, x []float64, sigma float64, rng *rand.Rand) []float64 {
	dst = resizeFloat(dst, len(x))
	for i, v := range x {
		dst[i] = v + sigma*rng.NormFloat64()
	}
	return dst
}

// dbDiff returns the gain difference in dB and the phase difference in
// degrees (wrapped) of a against b.
func dbDiff(a, b complex128) (float64, float64) {
	g := 20 * math.Log10(cmplx.Abs(a)/cmplx.Abs(b))
	ph := cmplx.Phase(a/b) * 180 / math.Pi
	return g, ph
}
