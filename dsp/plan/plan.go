// Package plan chooses the frequencies a measurement visits.
//
// Three kinds of plan are offered:
//
//   - [PerDecade]: n logarithmically spaced points per decade on a grid
//     anchored at exact decades, 10^(k/n) Hz for integer k, so that 100 Hz,
//     1 kHz and 10 kHz are always on the grid whatever n is.
//   - [ThirdOctave] and [Octave]: the ISO 266:1997 preferred bands. Each
//     [Band] carries the exact base-10 midband 1000·10^(x/10) Hz, which is
//     where the measurement is made, and the nominal preferred frequency
//     (20, 25, 31.5 … 16k, 20k), which is only a label.
//   - [Adaptive]: starts on a coarse log grid and adds points where the
//     measured curve bends, until the piecewise-linear curve through the
//     measured points (gain in dB and phase in degrees over log f) is
//     within a tolerance or a point budget is spent. It is an iterator the
//     measurement engine drives with real measurements.
//
// All frequencies are in hertz. Nothing here touches audio; every function
// is pure apart from the state an [Adaptive] keeps between calls.
package plan

import (
	"errors"
	"fmt"
	"math"
)

// MaxGridPoints is the largest number of frequencies [PerDecade] returns;
// a request for more is an error (lower n or narrow the range).
const MaxGridPoints = 1 << 20

// sameFreqRel is the relative distance under which two frequencies are
// treated as the same point (a grid point this close to from or to is
// replaced by the caller's value).
const sameFreqRel = 1e-9

// ErrRange is wrapped by every error about an invalid frequency range or
// density, so callers can test for it with errors.Is.
var ErrRange = errors.New("plan: invalid frequency plan")

// PerDecade returns frequencies from from to to (hertz, both inclusive) in
// ascending order, with n points per decade.
//
// The grid is anchored at exact decades: its points are 10^(k/n) Hz for
// integer k, computed as 10^⌊k/n⌋·10^((k mod n)/n) so every decade is exact.
// The result holds every grid point inside [from, to], plus from and to
// themselves when they are not on the grid; a grid point within a relative
// 1e−9 of from or to is taken to be that end and appears once, with the
// caller's value. So PerDecade(20, 20000, 3) gives 20, 21.54, 46.42, 100,
// … 10000, 20000, and PerDecade(10, 1000, 1) gives 10, 100, 1000.
//
// Errors (wrapping [ErrRange]): from or to not finite, from ≤ 0, to ≤ from,
// n < 1, or more than [MaxGridPoints] points.
func PerDecade(from, to float64, n int) ([]float64, error) {
	if err := checkRange(from, to); err != nil {
		return nil, err
	}
	if n < 1 {
		return nil, fmt.Errorf("%w: %d points per decade; use at least 1", ErrRange, n)
	}
	decades := math.Log10(to / from)
	if est := decades*float64(n) + 3; est > MaxGridPoints {
		return nil, fmt.Errorf("%w: %d points per decade over %.3g decades makes about %.0f points, more than %d; lower the density or narrow the range",
			ErrRange, n, decades, est, MaxGridPoints)
	}
	kLo := int(math.Floor(math.Log10(from)*float64(n))) - 1
	kHi := int(math.Ceil(math.Log10(to)*float64(n))) + 1
	out := make([]float64, 0, kHi-kLo+3)
	out = append(out, from)
	for k := kLo; k <= kHi; k++ {
		f := gridPoint(k, n)
		if f <= from || f >= to || near(f, from) || near(f, to) {
			continue
		}
		out = append(out, f)
	}
	out = append(out, to)
	return out, nil
}

// gridPoint returns 10^(k/n), exact at whole decades.
func gridPoint(k, n int) float64 {
	d := floorDiv(k, n)
	r := k - d*n
	if r == 0 {
		return math.Pow10(d)
	}
	return math.Pow10(d) * math.Pow(10, float64(r)/float64(n))
}

// floorDiv returns ⌊a/b⌋ for b > 0.
func floorDiv(a, b int) int {
	q := a / b
	if a%b != 0 && a < 0 {
		q--
	}
	return q
}

func near(a, b float64) bool {
	return math.Abs(a-b) <= sameFreqRel*math.Max(math.Abs(a), math.Abs(b))
}

func checkRange(from, to float64) error {
	switch {
	case math.IsNaN(from) || math.IsInf(from, 0) || math.IsNaN(to) || math.IsInf(to, 0):
		return fmt.Errorf("%w: range %g Hz to %g Hz is not finite; give finite frequencies", ErrRange, from, to)
	case from <= 0:
		return fmt.Errorf("%w: start frequency %g Hz must be above 0 Hz on a log axis", ErrRange, from)
	case to <= from:
		return fmt.Errorf("%w: stop frequency %g Hz must be above the start frequency %g Hz", ErrRange, to, from)
	}
	return nil
}
