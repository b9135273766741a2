package plan

import (
	"fmt"
	"math"
	"strconv"
)

// Band is one fractional-octave band of the base-10 system (ISO 266:1997,
// IEC 61260-1).
type Band struct {
	// Index is x in the midband formula 1000·10^(x/10) Hz: 0 is the 1 kHz
	// band, −17 the 20 Hz band, 13 the 20 kHz band. Octave bands have
	// indices that are multiples of 3.
	Index int
	// Center is the exact midband frequency in Hz, 1000·10^(x/10). Measure
	// here.
	Center float64
	// Nominal is the ISO 266 preferred frequency in Hz (the R10 series: 20,
	// 25, 31.5, 40 … 16000, 20000 and their decade multiples). Label with
	// it; it differs from Center by up to about 1.3 %.
	Nominal float64
	// Lower and Upper are the band edges in Hz: Center·10^(∓1/20) for a
	// third-octave band, Center·10^(∓3/20) for an octave band.
	Lower, Upper float64
}

// Label returns the nominal frequency as printed on a band chart: "31.5",
// "100", "1k", "1.25k", "12.5k".
func (b Band) Label() string {
	if b.Nominal >= 1000 {
		return strconv.FormatFloat(b.Nominal/1000, 'f', -1, 64) + "k"
	}
	return strconv.FormatFloat(b.Nominal, 'f', -1, 64)
}

// ThirdOctave returns the one-third-octave bands whose nominal frequency
// lies in [from, to] (hertz, both inclusive), in ascending order.
// Selecting by the nominal frequency means ThirdOctave(20, 20000) gives
// the familiar 31 bands 20 … 20k although the exact 20 Hz midband is
// 19.95 Hz. The series continues beyond 20 Hz–20 kHz by decade scaling
// (… 10, 12.5, 16 … and 25k, 31.5k …).
//
// Errors (wrapping [ErrRange]): a bound not finite, from ≤ 0, or to < from.
// A range that holds no nominal frequency gives an empty list and no error.
func ThirdOctave(from, to float64) ([]Band, error) {
	return bands(from, to, 1)
}

// Octave returns the octave bands whose nominal frequency lies in
// [from, to] (hertz, both inclusive), in ascending order: Octave(20, 20000)
// gives 31.5, 63, 125 … 8k, 16k. Octave midbands are every third
// third-octave midband, 1000·10^(3y/10) Hz, with edges Center·10^(∓3/20).
// Errors as for [ThirdOctave].
func Octave(from, to float64) ([]Band, error) {
	return bands(from, to, 3)
}

// Centers returns the exact midband frequencies of bands, reusing dst
// when it has the capacity.
func Centers(dst []float64, bands []Band) []float64 {
	if cap(dst) < len(bands) {
		dst = make([]float64, len(bands))
	}
	dst = dst[:len(bands)]
	for i, b := range bands {
		dst[i] = b.Center
	}
	return dst
}

// bands lists bands with index step (1: third octaves, 3: octaves).
func bands(from, to float64, step int) ([]Band, error) {
	if math.IsNaN(from) || math.IsInf(from, 0) || math.IsNaN(to) || math.IsInf(to, 0) {
		return nil, fmt.Errorf("%w: band range %g Hz to %g Hz is not finite; give finite frequencies", ErrRange, from, to)
	}
	if from <= 0 {
		return nil, fmt.Errorf("%w: lowest band frequency %g Hz must be above 0 Hz", ErrRange, from)
	}
	if to < from {
		return nil, fmt.Errorf("%w: highest band frequency %g Hz is below the lowest %g Hz", ErrRange, to, from)
	}
	// Nominal and exact differ by well under one third-octave, so one
	// index of margin each side is enough.
	xLo := int(math.Floor(10*math.Log10(from/1000))) - 1
	xHi := int(math.Ceil(10*math.Log10(to/1000))) + 1
	if xHi-xLo > 10*MaxGridPoints {
		return nil, fmt.Errorf("%w: band range %g Hz to %g Hz is too wide", ErrRange, from, to)
	}
	var out []Band
	for x := xLo; x <= xHi; x++ {
		if floorDiv(x, step)*step != x {
			continue
		}
		nom := nominal(x)
		if nom < from || nom > to {
			continue
		}
		c := 1000 * math.Pow(10, float64(x)/10)
		half := math.Pow(10, float64(step)/20)
		out = append(out, Band{Index: x, Center: c, Nominal: nom, Lower: c / half, Upper: c * half})
	}
	return out, nil
}

// nominal returns the ISO 266 R10 nominal frequency of third-octave index
// x, rounded so that decade scaling prints cleanly (31.5, not 31.499…).
func nominal(x int) float64 {
	// Mantissas of the ISO 266 R10 preferred series (after ISO 3): the
	// nominal third-octave frequencies are these times a power of ten.
	r10 := [10]float64{1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8}
	d := floorDiv(x, 10)
	m := r10[x-d*10]
	e := d + 3
	if e >= 0 {
		return m * math.Pow10(e)
	}
	// Divide rather than multiply by a negative power of ten so 0.315
	// prints as 0.315.
	return m / math.Pow10(-e)
}
