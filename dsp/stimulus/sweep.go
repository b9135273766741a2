package stimulus

import (
	"fmt"
	"math"
	"math/cmplx"
)

// MaxSamples is the longest whole-file stimulus this package renders,
// 2^28 samples (93 minutes at 48 kHz).
const MaxSamples = 1 << 28

// LogSweep is Farina's exponential sine sweep (A. Farina, "Simultaneous
// measurement of impulse response and distortion with a swept-sine
// technique", 108th AES Convention, 2000, preprint 5093):
//
//	x(t) = sin[2π·f1·L·(e^{t/L} − 1)],  L = T / ln(f2/f1),  0 ≤ t < T
//
// whose instantaneous frequency f1·e^{t/L} rises from f1 to f2 in T
// seconds, an equal time per octave. Deconvolving a recording with the
// inverse filter ([LogSweep.Inverse]) gives the linear impulse response,
// and the response of the N-th harmonic arrives [LogSweep.HarmonicAdvance]
// = L·ln N earlier, so distortion products separate in time.
//
// Sample i is taken at t = i/Rate; raised-cosine fades of FadeSeconds at
// each end (Hann half-windows, see [FadeGain]) avoid clicks. Field values
// are checked by [LogSweep.Validate].
type LogSweep struct {
	// Rate is the sample rate in Hz.
	Rate float64
	// F1 and F2 are the start and end frequencies in Hz,
	// 0 < F1 < F2 ≤ Rate/2.
	F1, F2 float64
	// Seconds is the duration T in seconds; the sweep has
	// round(Seconds·Rate) samples, at least 2 and at most [MaxSamples].
	Seconds float64
	// FadeSeconds is the length of each fade in seconds, 0 for none, at
	// most Seconds/2.
	FadeSeconds float64
}

// Validate reports the first invalid field, with the fix.
func (s LogSweep) Validate() error {
	switch {
	case !(s.Rate > 0) || math.IsInf(s.Rate, 1):
		return fmt.Errorf("stimulus: sweep sample rate %v Hz must be positive and finite", s.Rate)
	case !(s.F1 > 0) || !(s.F2 > s.F1) || s.F2 > s.Rate/2:
		return fmt.Errorf("stimulus: sweep from %v Hz to %v Hz must have 0 < start < stop ≤ half the sample rate (%g Hz)", s.F1, s.F2, s.Rate/2)
	case !(s.Seconds > 0) || math.IsInf(s.Seconds, 1):
		return fmt.Errorf("stimulus: sweep duration %v s must be positive and finite", s.Seconds)
	case !(s.FadeSeconds >= 0) || s.FadeSeconds > s.Seconds/2:
		return fmt.Errorf("stimulus: sweep fade %v s must be between 0 and half the duration (%g s)", s.FadeSeconds, s.Seconds/2)
	}
	if n := s.Seconds * s.Rate; n < 1.5 || n > MaxSamples {
		return fmt.Errorf("stimulus: sweep of %g s at %g Hz is %.0f samples; it must have 2 to %d", s.Seconds, s.Rate, n, MaxSamples)
	}
	return nil
}

// L returns the sweep's time constant L = T/ln(f2/f1) in seconds (the
// time the instantaneous frequency takes to grow by a factor e).
func (s LogSweep) L() float64 { return s.Seconds / math.Log(s.F2/s.F1) }

// HarmonicAdvance returns L·ln n, how many seconds before the linear
// response the response of the n-th harmonic appears after
// deconvolution (Farina 2000). It is 0 for n = 1 and NaN for n < 1.
func (s LogSweep) HarmonicAdvance(n int) float64 {
	if n < 1 {
		return math.NaN()
	}
	return s.L() * math.Log(float64(n))
}

// InstantFreq returns the instantaneous frequency f1·e^{t/L} in Hz at t
// seconds from the start.
func (s LogSweep) InstantFreq(t float64) float64 { return s.F1 * math.Exp(t/s.L()) }

// Len returns the number of samples, round(Seconds·Rate).
func (s LogSweep) Len() int { return int(math.Round(s.Seconds * s.Rate)) }

func (s LogSweep) fadeLen() int {
	return min(int(math.Round(s.FadeSeconds*s.Rate)), s.Len()/2)
}

// unit fills dst (of length Len) with the faded sweep at amplitude 1.
func (s LogSweep) unit(dst []float64) {
	l := s.L()
	for i := range dst {
		t := float64(i) / s.Rate
		c := s.F1 * l * math.Expm1(t/l) // phase in cycles
		dst[i] = math.Sin(2 * math.Pi * (c - math.Floor(c)))
	}
	Fade(dst, s.fadeLen())
}

// Render returns the sweep at levelDBFS (peak) under capDBFS, reusing dst
// when it has the capacity. Errors from [LogSweep.Validate] and
// [CheckLevel].
func (s LogSweep) Render(dst []float64, levelDBFS, capDBFS float64) ([]float64, error) {
	amp, capAmp, err := CheckLevel(levelDBFS, capDBFS)
	if err != nil {
		return nil, err
	}
	if err := s.Validate(); err != nil {
		return nil, err
	}
	dst = resize(dst, s.Len())
	s.unit(dst)
	for i := range dst {
		dst[i] *= amp
	}
	limit(dst, capAmp)
	return dst, nil
}

// Inverse returns Farina's inverse filter for the sweep as rendered at
// levelDBFS, reusing dst when it has the capacity: the time-reversed
// (faded) sweep with an exponential envelope falling 6 dB/octave,
//
//	f[i] = k·x[N−1−i]·e^{−(i/Rate)/L},  i = 0 … N−1,
//
// which flattens the sweep's pink (−3 dB/octave) spectrum. k is chosen so
// that the rendered sweep convolved with f has unit gain (0 dB) at the
// geometric centre frequency √(f1·f2): then a recording of a system's
// output convolved with f is the system's impulse response (gain 1 for a
// wire), its linear part peaking at lag N−1 samples and the n-th
// harmonic's HarmonicAdvance(n) earlier. Errors as for
// [LogSweep.Render], with the cap taken as 0 dBFS.
func (s LogSweep) Inverse(dst []float64, levelDBFS float64) ([]float64, error) {
	amp, _, err := CheckLevel(levelDBFS, 0)
	if err != nil {
		return nil, err
	}
	if err := s.Validate(); err != nil {
		return nil, err
	}
	n := s.Len()
	x := make([]float64, n)
	s.unit(x)
	dst = resize(dst, n)
	l := s.L()
	for i := range dst {
		dst[i] = x[n-1-i] * math.Exp(-float64(i)/s.Rate/l)
	}
	w := 2 * math.Pi * math.Sqrt(s.F1*s.F2) / s.Rate
	g := amp * cmplx.Abs(dtft(x, w)) * cmplx.Abs(dtft(dst, w))
	if g == 0 || math.IsNaN(g) {
		return nil, fmt.Errorf("stimulus: sweep has no energy at its centre frequency; lengthen it")
	}
	for i := range dst {
		dst[i] /= g
	}
	return dst, nil
}

// dtft returns Σ x[n]·e^{−jωn}.
func dtft(x []float64, w float64) complex128 {
	var re, im float64
	for n, v := range x {
		s, c := math.Sincos(w * float64(n))
		re += v * c
		im -= v * s
	}
	return complex(re, im)
}

func resize(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}
