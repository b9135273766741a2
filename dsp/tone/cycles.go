package tone

import (
	"fmt"
	"math"
)

// Cycles returns how many cycles of freq a block of n samples at rate
// holds, n·freq/rate, fraction included.
func Cycles(n int, freq, rate float64) float64 {
	return float64(n) * freq / rate
}

// WholeCycles returns the whole number of cycles of freq nearest to what a
// block of n samples at rate holds, and the remainder frac = Cycles − whole
// in [−0.5, 0.5]. A block holds a whole number of cycles when frac is zero
// (to rounding; [Estimator.Fit] allows [Estimator.CycleTol]).
func WholeCycles(n int, freq, rate float64) (whole int, frac float64) {
	c := Cycles(n, freq, rate)
	r := math.Round(c)
	return int(r), c - r
}

// cycleSearchFrac is the share of the requested length by which
// [CycleLength] may lengthen a block when that is more than one period.
const cycleSearchFrac = 1.0 / 8

// maxCycleLength caps the block lengths CycleLength returns (2³¹ − 1
// samples, over 12 hours at 48 kHz).
const maxCycleLength = math.MaxInt32

// CycleLength returns the length in samples of the shortest block of at
// least minSeconds (and at least one period) that holds a whole number of
// cycles of freq at rate as nearly as possible.
//
// It searches the lengths N from Nmin = max(⌈minSeconds·rate⌉, ⌈rate/freq⌉)
// to Nmin + max(⌈rate/freq⌉, ⌈Nmin/8⌉): the block grows by at most one
// period or an eighth, whichever is more. It returns the N whose cycle
// count N·freq/rate lies nearest to a whole number (the shortest on a tie),
// stopping at the first N within 1e−12 cycles of one. Since the window
// spans at least one period, the remainder is at most freq/(2·rate)
// cycles; it is zero when freq·N/rate is an integer for some N in the
// window (e.g. 1 kHz at 48 kHz: N a multiple of 48). Compare [WholeCycles]
// with [Estimator.CycleTol] to see whether [Estimator.Fit] will take its
// fast path; other blocks are fitted exactly by the general path.
//
// Errors: rate not positive and finite, freq outside (0, rate/2),
// minSeconds negative or NaN, or a block longer than 2³¹ − 1 samples.
func CycleLength(freq, rate, minSeconds float64) (int, error) {
	if !(rate > 0) || math.IsInf(rate, 0) {
		return 0, fmt.Errorf("%w: %v Hz; give the sample rate in Hz, e.g. 48000", ErrRate, rate)
	}
	if !(freq > 0 && freq < rate/2) {
		return 0, fmt.Errorf("%w: %v Hz; it must lie strictly between 0 and half the sample rate (%v Hz)", ErrFreq, freq, rate/2)
	}
	if !(minSeconds >= 0) {
		return 0, fmt.Errorf("tone: block duration %v s is not a non-negative number; give the minimum block length in seconds", minSeconds)
	}
	period := math.Ceil(rate / freq)
	lo := math.Max(math.Ceil(minSeconds*rate), period)
	hi := lo + math.Max(period, math.Ceil(lo*cycleSearchFrac))
	if hi > maxCycleLength {
		return 0, fmt.Errorf("tone: a block of %.0f samples is too long; ask for less than %.0f s", hi, maxCycleLength/rate/(1+cycleSearchFrac))
	}
	best, bestErr := int(lo), math.Inf(1)
	for n := int(lo); n <= int(hi); n++ {
		_, frac := WholeCycles(n, freq, rate)
		if f := math.Abs(frac); f < bestErr {
			best, bestErr = n, f
			if f <= 1e-12 {
				break
			}
		}
	}
	return best, nil
}
