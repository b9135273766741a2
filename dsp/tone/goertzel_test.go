package tone

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

const (
	// refCoefTol bounds the difference from the printed 2cos ω of the
	// REFERENCES §1 check. The printed 1.9828897227476203 lies 5e−16 (one
	// unit in the last place) below the exact 2cos(π/24) =
	// 1.98288972274762082… (bc -l, 30 digits), which float64 rounds to
	// 1.9828897227476208; the tolerance admits both.
	refCoefTol = 1e-15
	// refAmpTol and refPhaseTolDeg are half a unit in the last printed
	// digit of the REFERENCES §1 check values Â = 0.5000000, φ̂ = 30.0000°.
	refAmpTol      = 5e-8
	refPhaseTolDeg = 5e-5
	// directTol bounds |Goertzel − direct sum| relative to Σ|x[n]|.
	// REFERENCES §1 reports agreement to 6e−12 [V]; the chunked recurrence
	// does better, and this leaves room for the 20 Hz, 10 s case.
	directTol = 1e-12
	// fftTol bounds |Goertzel − FFT bin| relative to Σ|x[n]|.
	fftTol = 1e-12
)

// TestGoertzelReferenceCheck reproduces the check value of REFERENCES §1
// [V]: fs = 48000, N = 4800, f = 1 kHz, x = 0.5·cos(ωn + 30°).
func TestGoertzelReferenceCheck(t *testing.T) {
	const fs, n, f = 48000.0, 4800, 1000.0
	w := 2 * math.Pi * f / fs
	// REFERENCES §1 [V]: 2cos ω = 1.9828897227476203.
	if got := 2 * math.Cos(w); math.Abs(got-1.9828897227476203) > refCoefTol {
		t.Errorf("2cos ω = %.17g, want 1.9828897227476203 (REFERENCES §1 [V])", got)
	}
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.5 * math.Cos(w*float64(i)+30*math.Pi/180)
	}
	X := Goertzel(x, f, fs)
	// REFERENCES §1 [V]: Â = 2|X|/N = 0.5000000, φ̂ = arg X = 30.0000°.
	if a := 2 * cmplx.Abs(X) / n; math.Abs(a-0.5) > refAmpTol {
		t.Errorf("Â = %.9f, want 0.5000000 (REFERENCES §1 [V])", a)
	}
	if p := cmplx.Phase(X) * 180 / math.Pi; math.Abs(p-30) > refPhaseTolDeg {
		t.Errorf("φ̂ = %.6f°, want 30.0000° (REFERENCES §1 [V])", p)
	}
	// REFERENCES §1 [V]: X(ω) equals the direct sum Σ x[n]e^{−jωn}.
	if d := directSum(x, f, fs); cmplx.Abs(X-d) > directTol*l1(x) {
		t.Errorf("Goertzel %v differs from the direct sum %v by %.3g", X, d, cmplx.Abs(X-d))
	}
}

// directSum evaluates Σ x[n]·e^{−j2π·freq·n/rate} term by term with the
// phase reduced in cycles and Neumaier-compensated sums: the definition
// that REFERENCES §1 checks the recurrence against [V].
func directSum(x []float64, freq, rate float64) complex128 {
	var re, im, cre, cim float64
	add := func(s, c *float64, v float64) {
		t := *s + v
		if math.Abs(*s) >= math.Abs(v) {
			*c += (*s - t) + v
		} else {
			*c += (v - t) + *s
		}
		*s = t
	}
	for i, v := range x {
		cyc := freq * float64(i) / rate
		cyc -= math.Floor(cyc)
		s, c := math.Sincos(2 * math.Pi * cyc)
		add(&re, &cre, v*c)
		add(&im, &cim, -v*s)
	}
	return complex(re+cre, im+cim)
}

func l1(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += math.Abs(v)
	}
	return s
}

// TestGoertzelDirectSum checks X(ω) at arbitrary frequencies, on and off
// the DFT bins and outside (0, rate/2), against the defining sum
// (REFERENCES §1 [V]).
func TestGoertzelDirectSum(t *testing.T) {
	cases := []struct {
		name       string
		n          int
		freq, rate float64
	}{
		{"bin-exact", 4800, 1000, 48000},
		{"between bins", 4800, 1003.37, 48000},
		{"above Nyquist", 1000, 30017, 48000},
		{"negative frequency", 1000, -1234.5, 48000},
		{"single sample", 1, 1000, 48000},
		{"tail shorter than a chunk", 1029, 5000, 44100},
		{"20 Hz over 10 s", 480000, 20, 48000},
		{"near Nyquist", 9999, 23999, 48000},
	}
	rng := rand.New(rand.NewPCG(1, 1))
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x := make([]float64, c.n)
			for i := range x {
				x[i] = 0.3 + 2*rng.Float64() - 1
			}
			got := Goertzel(x, c.freq, c.rate)
			want := directSum(x, c.freq, c.rate)
			if d := cmplx.Abs(got - want); d > directTol*l1(x) {
				t.Errorf("Goertzel = %v, direct sum = %v: |Δ| = %.3g > %.3g",
					got, want, d, directTol*l1(x))
			}
		})
	}
}

// TestGoertzelFFT compares bin-exact Goertzel values with gonum's FFT
// (gonum.org/v1/gonum/dsp/fourier, unnormalised, same sign convention).
func TestGoertzelFFT(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 3))
	for _, n := range []int{16, 100, 255, 1024, 4800} {
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64() + 0.2
		}
		coef := fourier.NewFFT(n).Coefficients(nil, x)
		for _, bin := range []int{0, 1, 7, n / 3, n / 2} {
			t.Run(fmt.Sprintf("N=%d/bin=%d", n, bin), func(t *testing.T) {
				got := Goertzel(x, float64(bin)*testRate/float64(n), testRate)
				// gonum fourier.FFT.Coefficients: X[k] = Σ x[n]e^{−2πikn/N}.
				if d := cmplx.Abs(got - coef[bin]); d > fftTol*l1(x) {
					t.Errorf("Goertzel = %v, gonum FFT = %v: |Δ| = %.3g", got, coef[bin], d)
				}
			})
		}
	}
}

func TestGoertzelEdges(t *testing.T) {
	if got := Goertzel(nil, 1000, 48000); got != 0 {
		t.Errorf("empty block: got %v, want 0", got)
	}
	if got := Goertzel([]float64{1, 2}, 1000, 0); !cmplx.IsNaN(got) {
		t.Errorf("rate 0: got %v, want NaN", got)
	}
	// A single sample at n = 0 has X(ω) = x[0] for every ω (definition).
	if got := Goertzel([]float64{0.75}, 1234, 48000); cmplx.Abs(got-0.75) > 1e-15 {
		t.Errorf("single sample: got %v, want 0.75", got)
	}
}
