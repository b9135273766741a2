package extract

import (
	"math"
	"math/cmplx"
	"math/rand/v2"

	iir "tonetrace/dsp/biquad"
	"tonetrace/dsp/trace"
)

// Analytic transfer functions of the networks in REFERENCES.md §5, as
// functions of frequency in hertz. The formulas are the ones given there;
// the check values they produce were verified against ngspice-39 [V].

// Component values of REFERENCES.md §5.
const (
	rcR  = 10e3  // Ω
	rcC  = 15e-9 // F
	rlcL = 10e-3 // H
	rlcC = 100e-9
	rlcR = 100.0
	skR1 = 10e3
	skR2 = 10e3
	skC1 = 22e-9
	skC2 = 10e-9
)

func jw(f float64) complex128 { return complex(0, 2*math.Pi*f) }

// rcLowpass is 1/(1 + sRC).
func rcLowpass(f float64) complex128 { return 1 / (1 + jw(f)*rcR*rcC) }

// rcHighpass is sRC/(1 + sRC).
func rcHighpass(f float64) complex128 {
	s := jw(f) * rcR * rcC
	return s / (1 + s)
}

// rlcBandpass is the series RLC with the output across R:
// R/(R + sL + 1/(sC)).
func rlcBandpass(f float64) complex128 {
	s := jw(f)
	return rlcR / (rlcR + s*rlcL + 1/(s*rlcC))
}

// twinT returns the twin-T notch (s² + 2ζω₀s + ω₀²)/(s² + 4ω₀s + ω₀²),
// ω₀ = 1/(RC); ζ = 0 is the ideal network of REFERENCES.md §5, ζ > 0 adds
// damping to the numerator so that the notch has a finite depth.
func twinT(zeta float64) func(float64) complex128 {
	w0 := 1 / (rcR * rcC)
	return func(f float64) complex128 {
		s := jw(f)
		return (s*s + complex(2*zeta*w0, 0)*s + complex(w0*w0, 0)) / (s*s + complex(4*w0, 0)*s + complex(w0*w0, 0))
	}
}

// sallenKey is the unity-gain Sallen-Key low-pass
// 1/(1 + s·C2(R1+R2) + s²R1R2C1C2).
func sallenKey(f float64) complex128 {
	s := jw(f)
	return 1 / (1 + s*skC2*(skR1+skR2) + s*s*skR1*skR2*skC1*skC2)
}

// butterworth returns the order-n Butterworth low-pass with corner fc from
// the normalised prototypes of REFERENCES.md §5 (Carter & Mancini, Tables
// 16.6–16.8 [S]).
func butterworth(n int, fc float64) func(float64) complex128 {
	return func(f float64) complex128 {
		s := complex(0, f/fc)
		var d complex128
		switch n {
		case 1:
			d = s + 1
		case 2:
			d = s*s + 1.4142135623730951*s + 1
		case 3:
			d = s*s*s + 2*s*s + 2*s + 1
		case 4:
			d = (s*s + 0.7653668647301796*s + 1) * (s*s + 1.8477590650225735*s + 1)
		}
		return 1 / d
	}
}

// Audio EQ Cookbook analog prototypes (W3C Working Group Note 2021, after
// R. Bristow-Johnson) [S], with A = 10^(dBgain/40) and s normalised to f0.

// cookbookPeaking is H(s) = (s² + s·A/Q + 1)/(s² + s/(A·Q) + 1).
func cookbookPeaking(f0, dBgain, q float64) func(float64) complex128 {
	a := math.Pow(10, dBgain/40)
	return func(f float64) complex128 {
		s := complex(0, f/f0)
		return (s*s + s*complex(a/q, 0) + 1) / (s*s + s*complex(1/(a*q), 0) + 1)
	}
}

// cookbookLowShelf is H(s) = A·(s² + (√A/Q)s + A)/(A·s² + (√A/Q)s + 1).
func cookbookLowShelf(f0, dBgain, q float64) func(float64) complex128 {
	a := math.Pow(10, dBgain/40)
	k := complex(math.Sqrt(a)/q, 0)
	ac := complex(a, 0)
	return func(f float64) complex128 {
		s := complex(0, f/f0)
		return ac * (s*s + k*s + ac) / (ac*s*s + k*s + 1)
	}
}

// logGrid returns ppd points per decade from lo to hi hertz inclusive.
func logGrid(lo, hi float64, ppd int) []float64 {
	n := int(math.Round(math.Log10(hi/lo)*float64(ppd))) + 1
	f := make([]float64, n)
	for i := range f {
		f[i] = lo * math.Pow(10, float64(i)/float64(ppd))
	}
	return f
}

// sample evaluates h at each frequency.
func sample(h func(float64) complex128, freqs []float64) []trace.Point {
	pts := make([]trace.Point, len(freqs))
	for i, f := range freqs {
		pts[i] = trace.NewPoint(f, h(f))
	}
	return pts
}

// noisy returns a copy of pts with Gaussian errors of standard deviation
// gainSD (dB) and phaseSD (degrees) added to each point.
func noisy(pts []trace.Point, rng *rand.Rand, gainSD, phaseSD float64) []trace.Point {
	out := make([]trace.Point, len(pts))
	for i, p := range pts {
		g := p.GainDB() + gainSD*rng.NormFloat64()
		ph := cmplx.Phase(p.H)*180/math.Pi + phaseSD*rng.NormFloat64()
		out[i] = trace.FromPolar(p.Freq, g, ph)
	}
	return out
}

// minimumOf returns the frequency and gain in dB of the minimum of |h| in
// [lo, hi] hertz, found on the analytic function by a fine scan and a
// golden-section refinement — the "true" notch of a network.
func minimumOf(h func(float64) complex128, lo, hi float64) (f, db float64) {
	obj := func(u float64) float64 { return cmplx.Abs(h(math.Pow(10, u))) }
	ul, uh := math.Log10(lo), math.Log10(hi)
	const n = 20000
	best := ul
	for i := 0; i <= n; i++ {
		u := ul + (uh-ul)*float64(i)/n
		if obj(u) < obj(best) {
			best = u
		}
	}
	step := (uh - ul) / n
	a, b := best-step, best+step
	for range 200 {
		m1 := a + (b-a)/3
		m2 := b - (b-a)/3
		if obj(m1) < obj(m2) {
			b = m2
		} else {
			a = m1
		}
	}
	u := 0.5 * (a + b)
	return math.Pow(10, u), 20 * math.Log10(obj(u))
}

// crossingOf returns the frequency in [lo, hi] hertz where the gain of h
// crosses level dB, by bisection in log frequency on the analytic
// function; the gain must cross exactly once in the interval.
func crossingOf(h func(float64) complex128, level, lo, hi float64) float64 {
	g := func(f float64) float64 { return 20*math.Log10(cmplx.Abs(h(f))) - level }
	above := g(lo) > 0
	for range 200 {
		m := math.Sqrt(lo * hi)
		if (g(m) > 0) == above {
			lo = m
		} else {
			hi = m
		}
	}
	return math.Sqrt(lo * hi)
}

// Digital Audio EQ Cookbook biquads (W3C Working Group Note 2021, after
// R. Bristow-Johnson) [S], designed by package dsp/biquad: w0 = 2πf0/fs,
// c = cos w0, s = sin w0, A = 10^(dBgain/40), α = s/(2Q). The rows "lpf",
// "hpf", "bpf" (0 dB peak), "notch" and "peaking" are the table of
// REFERENCES.md §7; "lowshelf" and "highshelf" are the Cookbook's shelving
// filters, which §7 does not tabulate. Coefficients are returned
// normalised to a0 = 1.
func cookbookCoeffs(kind string, f0, dBgain, q, fs float64) (b, a [3]float64) {
	c := cookbookDesign(kind, f0, dBgain, q, fs)
	return [3]float64{c.B0, c.B1, c.B2}, [3]float64{1, c.A1, c.A2}
}

// cookbookDesign maps this file's filter names to package biquad's kinds.
func cookbookDesign(kind string, f0, dBgain, q, fs float64) iir.Coeffs {
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
	case "peaking":
		k = iir.Peaking
	case "lowshelf":
		k = iir.LowShelf
	case "highshelf":
		k = iir.HighShelf
	default:
		panic("cookbookCoeffs: unknown kind " + kind)
	}
	return iir.Design(k, f0, q, dBgain, fs)
}

// cookbookDigital returns the frequency response of a Cookbook biquad,
// H(e^{jω}) = Σb_k e^{−jkω} / Σa_k e^{−jkω}, ω = 2πf/fs (REFERENCES.md
// §7), as a function of frequency in hertz.
func cookbookDigital(kind string, f0, dBgain, q, fs float64) func(float64) complex128 {
	c := cookbookDesign(kind, f0, dBgain, q, fs)
	return func(f float64) complex128 { return c.Response(f, fs) }
}

// bandGrid returns the centres 10^(k/ppd) Hz of a trace banded at ppd
// bands per decade that lie between lo and hi hertz — for lo = 21.5 Hz
// and hi = 17.8 kHz at 12 per decade, the 36 bands from 21.54 Hz to
// 17.78 kHz of a banded Welch estimate.
func bandGrid(lo, hi float64, ppd int) []float64 {
	var f []float64
	for k := int(math.Ceil(math.Log10(lo) * float64(ppd))); ; k++ {
		v := math.Pow(10, float64(k)/float64(ppd))
		if v > hi {
			return f
		}
		f = append(f, v)
	}
}
