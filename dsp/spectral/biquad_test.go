package spectral

import (
	"math"
	"math/cmplx"
)

// biquad is a second-order section normalised so that a0 = 1, with
// coefficients from the W3C "Audio EQ Cookbook" (2021, after
// R. Bristow-Johnson; REFERENCES §7 [S]).
type biquad struct {
	b0, b1, b2, a1, a2 float64
}

type biquadKind int

const (
	lowPass biquadKind = iota
	highPass
	bandPass // constant 0 dB peak gain
	notch
	peaking
)

// cookbook returns the cookbook filter of the given kind at f0 Hz, quality
// q and (peaking only) gain in dB, for sample rate fs.
func cookbook(kind biquadKind, f0, q, gainDB, fs float64) biquad {
	w0 := 2 * math.Pi * f0 / fs
	c, s := math.Cos(w0), math.Sin(w0)
	alpha := s / (2 * q)
	A := math.Pow(10, gainDB/40)
	var b0, b1, b2, a0, a1, a2 float64
	a0, a1, a2 = 1+alpha, -2*c, 1-alpha
	switch kind {
	case lowPass:
		b0, b1, b2 = (1-c)/2, 1-c, (1-c)/2
	case highPass:
		b0, b1, b2 = (1+c)/2, -(1 + c), (1+c)/2
	case bandPass:
		b0, b1, b2 = alpha, 0, -alpha
	case notch:
		b0, b1, b2 = 1, -2*c, 1
	case peaking:
		b0, b1, b2 = 1+alpha*A, -2*c, 1-alpha*A
		a0, a2 = 1+alpha/A, 1-alpha/A
	default:
		panic("unknown biquad kind")
	}
	return biquad{b0 / a0, b1 / a0, b2 / a0, a1 / a0, a2 / a0}
}

// response returns the digital response H(e^{jω}) at f Hz:
// Σb_k e^{−jkω} / Σa_k e^{−jkω} (REFERENCES §7).
func (b biquad) response(f, fs float64) complex128 {
	z1 := cmplx.Exp(complex(0, -2*math.Pi*f/fs))
	z2 := z1 * z1
	num := complex(b.b0, 0) + complex(b.b1, 0)*z1 + complex(b.b2, 0)*z2
	den := 1 + complex(b.a1, 0)*z1 + complex(b.a2, 0)*z2
	return num / den
}

// biquadState is the memory of a direct-form I section.
type biquadState struct{ x1, x2, y1, y2 float64 }

// filter runs src through the section (direct form I), writing dst and
// keeping the state for the next block.
func (b biquad) filter(st *biquadState, dst, src []float64) {
	for i, x := range src {
		y := b.b0*x + b.b1*st.x1 + b.b2*st.x2 - b.a1*st.y1 - b.a2*st.y2
		st.x2, st.x1 = st.x1, x
		st.y2, st.y1 = st.y1, y
		dst[i] = y
	}
}
