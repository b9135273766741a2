// Package stimulus synthesises the test signals tonetrace plays: stepped
// sines, white and pink noise, and Farina's exponential sine sweep, all
// under a hard level cap.
//
// # Level convention
//
// Every level in this package is in dBFS and means the PEAK sample
// magnitude relative to full scale, where full scale is a sample value of
// ±1.0:
//
//	amplitude = 10^(level/20)      0 dBFS → peak ±1.0
//	                               −6.02 dBFS → peak ±0.5
//	                               −40 dBFS → peak ±0.01
//
// So a full-scale sine is 0 dBFS (its RMS is −3.01 dBFS), and a noise at
// −20 dBFS has its largest sample at ±0.1 whatever its RMS. Because the
// convention is peak, a noise's RMS lies well below its level (12 to 14 dB
// for the noises here), which is what protects the output stage.
//
// Every generator takes a level and a cap, both in dBFS. The cap is the
// safety limit the user set; it must be at most 0 dBFS, the level must be
// finite and at most the cap, or the generator returns an error wrapping
// [ErrLevel] that names both values. No sample produced by this package
// ever exceeds the cap's amplitude: outputs are scaled to the level, and a
// final hard limit at the cap amplitude catches rounding (and, for
// streamed pink noise only, the rare excursion of a Gaussian signal; see
// [PinkNoise]).
//
// # Streaming and whole files
//
// Generators meant for a live output ([SteppedSine], [WhiteNoise],
// [PinkNoise]) have a Read(dst []float64) int method that fills a
// caller-owned buffer without allocating. Whole-file signals come from
// [Render] and [LogSweep.Render]. Everything is deterministic: the same
// parameters and seed give the same samples, however the reads are
// chunked. Noise uses a PCG generator (math/rand/v2) seeded by the caller.
package stimulus

import (
	"errors"
	"fmt"
	"math"
)

// ErrLevel is wrapped by every error about a level or cap, so callers can
// test for it with errors.Is.
var ErrLevel = errors.New("stimulus: level not allowed")

// Amplitude returns the peak sample magnitude of a level in dBFS:
// 10^(level/20).
func Amplitude(levelDBFS float64) float64 { return math.Pow(10, levelDBFS/20) }

// CheckLevel validates a level against a cap, both in dBFS (peak, see the
// package doc), and returns their amplitudes. Errors (wrapping
// [ErrLevel]): a cap that is not finite or above 0 dBFS, a level that is
// not finite, or a level above the cap.
func CheckLevel(levelDBFS, capDBFS float64) (amp, capAmp float64, err error) {
	switch {
	case math.IsNaN(capDBFS) || math.IsInf(capDBFS, 0):
		return 0, 0, fmt.Errorf("%w: cap %v dBFS is not a number; set a cap between −120 and 0 dBFS", ErrLevel, capDBFS)
	case capDBFS > 0:
		return 0, 0, fmt.Errorf("%w: cap %.2f dBFS is above full scale; set a cap of at most 0 dBFS", ErrLevel, capDBFS)
	case math.IsNaN(levelDBFS) || math.IsInf(levelDBFS, 0):
		return 0, 0, fmt.Errorf("%w: level %v dBFS is not a number; give a finite level at most the cap %.2f dBFS", ErrLevel, levelDBFS, capDBFS)
	case levelDBFS > capDBFS:
		return 0, 0, fmt.Errorf("%w: level %.2f dBFS is above the cap %.2f dBFS; lower the level or raise the cap (at most 0 dBFS)", ErrLevel, levelDBFS, capDBFS)
	}
	return Amplitude(levelDBFS), Amplitude(capDBFS), nil
}

// limit clamps every sample of x to ±a.
func limit(x []float64, a float64) {
	for i, v := range x {
		x[i] = math.Max(-a, math.Min(a, v))
	}
}

// ScalePeak scales x in place so its largest magnitude is the amplitude of
// levelDBFS, then clamps it to the cap's amplitude (a guard against
// rounding). An all-zero x stays zero. Errors as for [CheckLevel]; x is
// unchanged on error.
func ScalePeak(x []float64, levelDBFS, capDBFS float64) error {
	amp, capAmp, err := CheckLevel(levelDBFS, capDBFS)
	if err != nil {
		return err
	}
	peak := 0.0
	for _, v := range x {
		peak = math.Max(peak, math.Abs(v))
	}
	if peak == 0 || math.IsInf(peak, 0) || math.IsNaN(peak) {
		if peak != 0 {
			return fmt.Errorf("stimulus: cannot scale a signal whose peak is %v", peak)
		}
		return nil
	}
	g := amp / peak
	for i := range x {
		x[i] *= g
	}
	limit(x, capAmp)
	return nil
}

// CrestFactorDB returns the crest factor of x in dB, 20·log10(peak/RMS):
// 3.01 dB for a sine, 0 dB for a square wave. It returns NaN for an empty
// or all-zero x.
func CrestFactorDB(x []float64) float64 {
	peak, sum := 0.0, 0.0
	for _, v := range x {
		peak = math.Max(peak, math.Abs(v))
		sum += v * v
	}
	if len(x) == 0 || sum == 0 {
		return math.NaN()
	}
	return 20 * math.Log10(peak/math.Sqrt(sum/float64(len(x))))
}

// FadeGain returns the gain of a raised-cosine (Hann half-window) fade-in
// of n samples at sample k: (1 − cos(πk/n))/2, which is 0 at k = 0 and
// reaches 1 at k = n; 1 for k ≥ n (so always 1 when n ≤ 0) and 0 for
// k < 0. A fade-out uses the
// same gain counted back from the last sample, so the last sample is 0.
func FadeGain(k, n int) float64 {
	switch {
	case k < 0:
		return 0
	case k >= n:
		return 1
	}
	return 0.5 * (1 - math.Cos(math.Pi*float64(k)/float64(n)))
}

// Fade applies a raised-cosine fade-in to the first n samples of x and a
// fade-out to the last n (see [FadeGain]). It panics if 2n > len(x).
func Fade(x []float64, n int) {
	if n < 0 || 2*n > len(x) {
		panic(fmt.Sprintf("stimulus: fade of %d samples at each end of %d samples", n, len(x)))
	}
	for k := 0; k < n; k++ {
		g := FadeGain(k, n)
		x[k] *= g
		x[len(x)-1-k] *= g
	}
}

// Ramp multiplies x in place by a gain that moves from fromGain to toGain
// along a raised cosine over len(x) samples, for a click-free level
// change: sample k gets fromGain + (toGain − fromGain)·(1 − cos(π(k+1)/
// len(x)))/2, so the last sample is at toGain exactly. Gains are linear
// factors in [0, 1], so a ramp can only lower a signal that already
// respects its cap; anything else is an error wrapping [ErrLevel] and x
// is left unchanged.
func Ramp(x []float64, fromGain, toGain float64) error {
	for _, g := range [2]float64{fromGain, toGain} {
		if !(g >= 0 && g <= 1) {
			return fmt.Errorf("%w: ramp gain %v is outside 0…1; ramps only attenuate, so change the level at the generator instead", ErrLevel, g)
		}
	}
	n := float64(len(x))
	for k := range x {
		w := 0.5 * (1 - math.Cos(math.Pi*float64(k+1)/n))
		x[k] *= fromGain + (toGain-fromGain)*w
	}
	return nil
}
