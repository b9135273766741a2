// Package eseries gives the IEC 60063 preferred number series E6, E12, E24,
// E48, E96 and E192 used for resistor, capacitor and inductor values, and
// finds the preferred value nearest to a computed or fitted one.
//
// A series En has n values per decade, roughly 10^(i/n) for i = 0 … n−1,
// rounded to two significant digits (E6, E12, E24) or three (E48, E96,
// E192), and repeats in every decade: E12 holds 4.7 Ω, 47 Ω, 470 Ω, 4.7 kΩ
// and 4.7 nF alike.
//
// The tables here are the standard's tables (IEC 60063:2015, written out
// from memory and cross-checked as below), not the formula. The standard
// kept the older two-digit values where they differ from the rounded
// formula. Comparing every table entry with 10^(i/n) rounded to the
// series' significant digits gives exactly these differences:
//
//	E24 (and so E12, E6 where they share the value):
//	  2.7 (formula 2.6), 3.0 (2.9), 3.3 (3.2), 3.6 (3.5), 3.9 (3.8),
//	  4.3 (4.2), 4.7 (4.6), 8.2 (8.3)
//	E48, E96: none
//	E192: 9.20 (formula 9.19, from 10^(185/192) = 9.1948)
//
// Structurally, each series with two significant digits is every second
// value of the next (E6 ⊂ E12 ⊂ E24), and likewise E48 ⊂ E96 ⊂ E192; the
// three-digit series do not contain the two-digit ones (E96 has 4.75, not
// 4.7).
//
// Nearest and Neighbours work in every decade of the float64 range; a value
// within a relative 1e-9 of a preferred value counts as that value, so that
// 4.7e-9 computed as 47·1e-10 still matches 4.7 nF.
package eseries

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Series is one of the IEC 60063 preferred number series. Its numeric
// value is the number of values per decade (E12 = 12). The zero Series is
// not valid.
type Series int

// The IEC 60063 series.
const (
	E6   Series = 6   // ±20 % tolerance class; 2 significant digits
	E12  Series = 12  // ±10 %; 2 significant digits
	E24  Series = 24  // ±5 %; 2 significant digits
	E48  Series = 48  // ±2 %; 3 significant digits
	E96  Series = 96  // ±1 %; 3 significant digits
	E192 Series = 192 // ±0.5 % and better; 3 significant digits
)

// all lists every series, coarsest first.
var all = [...]Series{E6, E12, E24, E48, E96, E192}

// All returns every IEC 60063 series, coarsest first (E6 … E192), in a
// new slice.
func All() []Series {
	s := make([]Series, len(all))
	copy(s, all[:])
	return s
}

// exactTol is the relative distance within which a value counts as equal
// to a preferred value.
const exactTol = 1e-9

// Tables of the standard, as integers of the series' significant digits:
// 47 is 4.7 (two digits), 475 is 4.75 (three digits). E6 and E12 are every
// second value of E24; E48 and E96 every fourth and second value of E192.
var (
	tableE24 = [...]int{
		10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
		33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
	}
	tableE192 = [...]int{
		100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114,
		115, 117, 118, 120, 121, 123, 124, 126, 127, 129, 130, 132,
		133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
		154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
		178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203,
		205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
		237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271,
		274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
		316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
		365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417,
		422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481,
		487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
		562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642,
		649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741,
		750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
		866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
	}
)

// The coarser series, derived once from the tables above and never
// changed.
var (
	tableE6  = every(tableE24[:], 4)
	tableE12 = every(tableE24[:], 2)
	tableE48 = every(tableE192[:], 4)
	tableE96 = every(tableE192[:], 2)
)

func every(t []int, step int) []int {
	out := make([]int, 0, len(t)/step)
	for i := 0; i < len(t); i += step {
		out = append(out, t[i])
	}
	return out
}

// table returns the significant-digit integers of s for one decade and
// the number of significant digits; callers must not change t. It panics
// for an invalid series.
func (s Series) table() (t []int, digits int) {
	switch s {
	case E6:
		return tableE6, 2
	case E12:
		return tableE12, 2
	case E24:
		return tableE24[:], 2
	case E48:
		return tableE48, 3
	case E96:
		return tableE96, 3
	case E192:
		return tableE192[:], 3
	}
	panic(fmt.Sprintf("eseries: invalid series %d; use one of E6, E12, E24, E48, E96, E192", int(s)))
}

// Valid reports whether s is one of E6, E12, E24, E48, E96, E192.
func (s Series) Valid() bool {
	switch s {
	case E6, E12, E24, E48, E96, E192:
		return true
	}
	return false
}

// Digits returns the number of significant digits of the series' values:
// 2 for E6, E12, E24 and 3 for E48, E96, E192; 0 for an invalid series.
func (s Series) Digits() int {
	switch s {
	case E6, E12, E24:
		return 2
	case E48, E96, E192:
		return 3
	}
	return 0
}

// String returns the series' name, "E12"; an invalid series prints as
// "Series(7)".
func (s Series) String() string {
	if !s.Valid() {
		return "Series(" + strconv.Itoa(int(s)) + ")"
	}
	return "E" + strconv.Itoa(int(s))
}

// Parse reads a series name: "E6", "E12", "E24", "E48", "E96" or "E192",
// in either case and with surrounding spaces ignored.
func Parse(text string) (Series, error) {
	t := strings.TrimSpace(text)
	if len(t) >= 2 && (t[0] == 'E' || t[0] == 'e') {
		if n, err := strconv.Atoi(t[1:]); err == nil && t[1] != '+' && t[1] != '-' {
			if s := Series(n); s.Valid() {
				return s, nil
			}
		}
	}
	return 0, fmt.Errorf("eseries: unknown series %q; use one of E6, E12, E24, E48, E96, E192", text)
}

// MarshalText returns the series' name; it fails for an invalid series.
func (s Series) MarshalText() ([]byte, error) {
	if !s.Valid() {
		return nil, fmt.Errorf("eseries: invalid series %d; use one of E6, E12, E24, E48, E96, E192", int(s))
	}
	return []byte(s.String()), nil
}

// UnmarshalText sets s from a name accepted by [Parse].
func (s *Series) UnmarshalText(text []byte) error {
	v, err := Parse(string(text))
	if err != nil {
		return err
	}
	*s = v
	return nil
}

// Values returns the series' values in the decade [1, 10), ascending
// (E12: 1.0, 1.2, 1.5 … 8.2). dst is reused when it has the capacity. It
// panics for an invalid series.
func (s Series) Values(dst []float64) []float64 {
	t, digits := s.table()
	if cap(dst) < len(t) {
		dst = make([]float64, len(t))
	}
	dst = dst[:len(t)]
	for i, v := range t {
		dst[i] = scale10(float64(v), -(digits - 1))
	}
	return dst
}

// Nearest returns the preferred value of series s nearest to v, in any
// decade. Nearness is by ratio (the distance of logarithms), which is how
// the series are spaced: in E12, 1.1 lies at equal differences from 1.0
// and 1.2 but nearer 1.2 in ratio, so Nearest gives 1.2. Across a decade
// boundary the first value of the next decade counts (9.6 in E24 gives
// 10). An exact tie in ratio goes to the larger value.
//
// v must be positive and finite; otherwise Nearest returns NaN. Nearest
// panics for an invalid series.
func Nearest(v float64, s Series) float64 {
	below, above := Neighbours(v, s)
	if below == above || math.IsNaN(below) {
		return below
	}
	// Compare v/below with above/v without overflow: v² against below·above
	// after scaling both by below.
	if (v/below)*(v/below) < above/below {
		return below
	}
	return above
}

// Neighbours returns the preferred values of series s on either side of v:
// below is the largest value ≤ v and above the smallest value ≥ v. When v
// is itself a preferred value (within a relative 1e-9) both are that
// value. Past a decade's last value, above is the next decade's first
// (E24: Neighbours(9.5) = 9.1, 10).
//
// v must be positive and finite; otherwise both are NaN. Neighbours
// panics for an invalid series.
func Neighbours(v float64, s Series) (below, above float64) {
	t, digits := s.table()
	if !(v > 0) || math.IsInf(v, 1) {
		return math.NaN(), math.NaN()
	}
	x, e := split(v, digits)
	top := int(math.Round(math.Pow10(digits)))
	// i is the first table entry greater than x.
	i := sort.Search(len(t), func(k int) bool { return float64(t[k]) > x })
	lo := t[i-1] // t[0] = 10^(digits−1) ≤ x, so i ≥ 1
	hi := top
	if i < len(t) {
		hi = t[i]
	}
	switch {
	case x-float64(lo) <= exactTol*x:
		v := scale10(float64(lo), e)
		return v, v
	case float64(hi)-x <= exactTol*x:
		v := scale10(float64(hi), e)
		return v, v
	}
	return scale10(float64(lo), e), scale10(float64(hi), e)
}

// split writes v = x·10^e with x in [10^(digits−1), 10^digits).
func split(v float64, digits int) (x float64, e int) {
	e = int(math.Floor(math.Log10(v))) - (digits - 1)
	x = scale10(v, -e)
	lo, hi := math.Pow10(digits-1), math.Pow10(digits)
	for x >= hi {
		e++
		x = scale10(v, -e)
	}
	for x < lo {
		e--
		x = scale10(v, -e)
	}
	return x, e
}

// scale10 returns v·10^k, correctly rounded when 10^|k| is exact in
// float64 (|k| ≤ 22): it divides by 10^−k rather than multiplying by an
// inexact 10^k, so that scale10(47, −10) is the float64 nearest 4.7e-9.
func scale10(v float64, k int) float64 {
	for k > 300 {
		v *= 1e300
		k -= 300
	}
	for k < -300 {
		v /= 1e300
		k += 300
	}
	if k >= 0 {
		return v * math.Pow10(k)
	}
	return v / math.Pow10(-k)
}
