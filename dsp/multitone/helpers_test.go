package multitone

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
)

// biquad is a second-order section from the W3C Audio EQ Cookbook (2021,
// after R. Bristow-Johnson; REFERENCES §7, [S]), computed here in the test
// so the analyzer is checked against an independent filter.
type biquad struct{ b, a [3]float64 }

// rbj returns the cookbook section of the given type at f0 Hz, quality q
// and (for "peak") gain in dB, for sample rate fs:
// w0 = 2πf0/fs, c = cos w0, s = sin w0, A = 10^(gain/40), α = s/(2Q).
func rbj(kind string, fs, f0, q, gainDB float64) biquad {
	w0 := 2 * math.Pi * f0 / fs
	c, s := math.Cos(w0), math.Sin(w0)
	alpha := s / (2 * q)
	A := math.Pow(10, gainDB/40)
	switch kind {
	case "lpf":
		return biquad{[3]float64{(1 - c) / 2, 1 - c, (1 - c) / 2}, [3]float64{1 + alpha, -2 * c, 1 - alpha}}
	case "hpf":
		return biquad{[3]float64{(1 + c) / 2, -(1 + c), (1 + c) / 2}, [3]float64{1 + alpha, -2 * c, 1 - alpha}}
	case "bpf":
		return biquad{[3]float64{alpha, 0, -alpha}, [3]float64{1 + alpha, -2 * c, 1 - alpha}}
	case "notch":
		return biquad{[3]float64{1, -2 * c, 1}, [3]float64{1 + alpha, -2 * c, 1 - alpha}}
	case "apf":
		return biquad{[3]float64{1 - alpha, -2 * c, 1 + alpha}, [3]float64{1 + alpha, -2 * c, 1 - alpha}}
	case "peak":
		return biquad{[3]float64{1 + alpha*A, -2 * c, 1 - alpha*A}, [3]float64{1 + alpha/A, -2 * c, 1 - alpha/A}}
	}
	panic("unknown biquad " + kind)
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

// response is H(e^{jω}) = Σb_k e^{−jkω} / Σa_k e^{−jkω} at f Hz
// (REFERENCES §7).
func (q biquad) response(f, fs float64) complex128 {
	w := 2 * math.Pi * f / fs
	z1, z2 := cmplx.Rect(1, -w), cmplx.Rect(1, -2*w)
	num := complex(q.b[0], 0) + complex(q.b[1], 0)*z1 + complex(q.b[2], 0)*z2
	den := complex(q.a[0], 0) + complex(q.a[1], 0)*z1 + complex(q.a[2], 0)*z2
	return num / den
}

// filter runs the section over x (direct form I, zero initial state) into
// a new slice.
func (q biquad) filter(x []float64) []float64 {
	q = q.normalised()
	y := make([]float64, len(x))
	var x1, x2, y1, y2 float64
	for i, v := range x {
		o := q.b[0]*v + q.b[1]*x1 + q.b[2]*x2 - q.a[1]*y1 - q.a[2]*y2
		x2, x1 = x1, v
		y2, y1 = y1, o
		y[i] = o
	}
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
