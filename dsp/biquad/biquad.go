// Package biquad designs and runs the second-order digital filters of the
// W3C Working Group Note "Audio EQ Cookbook" (2021, after R. Bristow-Johnson;
// REFERENCES.md §7).
//
// A design starts from the centre or corner frequency f0 in hertz, the
// quality Q, the gain in dB (peaking and shelving filters only) and the
// sample rate in hertz:
//
//	w0 = 2π·f0/rate, c = cos w0, s = sin w0, A = 10^(gain/40), α = s/(2Q)
//
// and returns the coefficients b0, b1, b2, a0, a1, a2 of
//
//	H(z) = (b0 + b1·z⁻¹ + b2·z⁻²) / (a0 + a1·z⁻¹ + a2·z⁻²)
//
// divided by a0, so that a0 = 1. The package is used as an outside,
// independent filter by the tests of the estimators.
package biquad

import (
	"fmt"
	"math"
	"math/cmplx"
)

// Kind is a filter type of the Audio EQ Cookbook.
type Kind int

// The Cookbook filter types. BandPass is the Cookbook's "constant 0 dB peak
// gain" band-pass. The gain in dB is used only by Peaking, LowShelf and
// HighShelf; for the shelves Q is the Cookbook's Q (1/√2 is its steepest
// shelf without overshoot).
const (
	LowPass Kind = iota
	HighPass
	BandPass
	Notch
	AllPass
	Peaking
	LowShelf
	HighShelf
)

var kindNames = [...]string{"LowPass", "HighPass", "BandPass", "Notch", "AllPass", "Peaking", "LowShelf", "HighShelf"}

// String returns the name of k, or "Kind(n)" for an unknown value.
func (k Kind) String() string {
	if k >= 0 && int(k) < len(kindNames) {
		return kindNames[k]
	}
	return fmt.Sprintf("Kind(%d)", int(k))
}

// Coeffs are the coefficients of one second-order section normalised so
// that a0 = 1: y[n] = B0·x[n] + B1·x[n−1] + B2·x[n−2] − A1·y[n−1] − A2·y[n−2].
type Coeffs struct {
	B0, B1, B2, A1, A2 float64
}

// Design returns the Cookbook filter of the given kind at f0 Hz with
// quality q and (Peaking and the shelves only) gain gainDB in dB, for the
// sample rate rate in Hz, normalised by a0. f0 should lie in (0, rate/2)
// and q be positive; other values give coefficients without meaning.
// Design panics for an unknown kind (a programmer mistake).
//
// The rows are those of the Cookbook (REFERENCES.md §7 tabulates all but
// the shelves), with k = 2·√A·α:
//
//	LowPass    b = (1−c)/2, 1−c, (1−c)/2          a = 1+α, −2c, 1−α
//	HighPass   b = (1+c)/2, −(1+c), (1+c)/2       a = 1+α, −2c, 1−α
//	BandPass   b = α, 0, −α                       a = 1+α, −2c, 1−α
//	Notch      b = 1, −2c, 1                      a = 1+α, −2c, 1−α
//	AllPass    b = 1−α, −2c, 1+α                  a = 1+α, −2c, 1−α
//	Peaking    b = 1+αA, −2c, 1−αA                a = 1+α/A, −2c, 1−α/A
//	LowShelf   b = A((A+1)−(A−1)c+k), 2A((A−1)−(A+1)c), A((A+1)−(A−1)c−k)
//	           a = (A+1)+(A−1)c+k, −2((A−1)+(A+1)c), (A+1)+(A−1)c−k
//	HighShelf  b = A((A+1)+(A−1)c+k), −2A((A−1)+(A+1)c), A((A+1)+(A−1)c−k)
//	           a = (A+1)−(A−1)c+k, 2((A−1)−(A+1)c), (A+1)−(A−1)c−k
func Design(kind Kind, f0, q, gainDB, rate float64) Coeffs {
	w0 := 2 * math.Pi * f0 / rate
	c, s := math.Cos(w0), math.Sin(w0)
	alpha := s / (2 * q)
	A := math.Pow(10, gainDB/40)
	var b0, b1, b2, a0, a1, a2 float64
	a0, a1, a2 = 1+alpha, -2*c, 1-alpha
	switch kind {
	case LowPass:
		b0, b1, b2 = (1-c)/2, 1-c, (1-c)/2
	case HighPass:
		b0, b1, b2 = (1+c)/2, -(1 + c), (1+c)/2
	case BandPass:
		b0, b1, b2 = alpha, 0, -alpha
	case Notch:
		b0, b1, b2 = 1, -2*c, 1
	case AllPass:
		b0, b1, b2 = 1-alpha, -2*c, 1+alpha
	case Peaking:
		b0, b1, b2 = 1+alpha*A, -2*c, 1-alpha*A
		a0, a2 = 1+alpha/A, 1-alpha/A
	case LowShelf:
		k := 2 * math.Sqrt(A) * alpha
		b0, b1, b2 = A*((A+1)-(A-1)*c+k), 2*A*((A-1)-(A+1)*c), A*((A+1)-(A-1)*c-k)
		a0, a1, a2 = (A+1)+(A-1)*c+k, -2*((A-1)+(A+1)*c), (A+1)+(A-1)*c-k
	case HighShelf:
		k := 2 * math.Sqrt(A) * alpha
		b0, b1, b2 = A*((A+1)+(A-1)*c+k), -2*A*((A-1)+(A+1)*c), A*((A+1)+(A-1)*c-k)
		a0, a1, a2 = (A+1)-(A-1)*c+k, 2*((A-1)-(A+1)*c), (A+1)-(A-1)*c-k
	default:
		panic("biquad: unknown filter kind " + kind.String() + "; use one of the Kind constants")
	}
	return Coeffs{B0: b0 / a0, B1: b1 / a0, B2: b2 / a0, A1: a1 / a0, A2: a2 / a0}
}

// Response returns the digital frequency response at f Hz for sample rate
// rate Hz (REFERENCES.md §7):
//
//	H(e^{jω}) = Σ b_k e^{−jkω} / Σ a_k e^{−jkω},  ω = 2π·f/rate.
func (c Coeffs) Response(f, rate float64) complex128 {
	z1 := cmplx.Exp(complex(0, -2*math.Pi*f/rate))
	z2 := z1 * z1
	num := complex(c.B0, 0) + complex(c.B1, 0)*z1 + complex(c.B2, 0)*z2
	den := 1 + complex(c.A1, 0)*z1 + complex(c.A2, 0)*z2
	return num / den
}

// Filter runs one section in direct form I, keeping its memory between
// blocks so that a signal can be streamed through it in pieces. The zero
// Filter has all-zero coefficients; set Coeffs (for example
// Filter{Coeffs: Design(...)}) before use. Changing Coeffs keeps the memory.
type Filter struct {
	Coeffs
	x1, x2, y1, y2 float64
}

// Reset clears the filter's memory, as if it had only ever seen zeros.
func (f *Filter) Reset() { f.x1, f.x2, f.y1, f.y2 = 0, 0, 0, 0 }

// Step filters one sample and returns the output.
func (f *Filter) Step(x float64) float64 {
	y := f.B0*x + f.B1*f.x1 + f.B2*f.x2 - f.A1*f.y1 - f.A2*f.y2
	f.x2, f.x1 = f.x1, x
	f.y2, f.y1 = f.y1, y
	return y
}

// Process filters src into dst, continuing from the memory left by the
// previous call. dst may be src (in place). Process panics if the lengths
// differ (a programmer mistake).
func (f *Filter) Process(dst, src []float64) {
	if len(dst) != len(src) {
		panic(fmt.Sprintf("biquad: Process with len(dst) = %d, len(src) = %d; they must be equal", len(dst), len(src)))
	}
	x1, x2, y1, y2 := f.x1, f.x2, f.y1, f.y2
	b0, b1, b2, a1, a2 := f.B0, f.B1, f.B2, f.A1, f.A2
	for i, x := range src {
		y := b0*x + b1*x1 + b2*x2 - a1*y1 - a2*y2
		x2, x1 = x1, x
		y2, y1 = y1, y
		dst[i] = y
	}
	f.x1, f.x2, f.y1, f.y2 = x1, x2, y1, y2
}
