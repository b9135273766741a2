package config

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
)

// ParseError reports text that is not a valid quantity. It is returned by
// [ParseFrequency], [ParseLevel], [ParseResistance], [ParseCapacitance],
// [ParseInductance] and [ParseGain], and wrapped in a [SettingError] when the text was meant for a setting.
type ParseError struct {
	// Input is the text as given.
	Input string
	// Quantity names what was expected: "frequency", "level", ….
	Quantity string
	// Reason says what is wrong, e.g. `unknown unit "kV"`.
	Reason string
	// Accepted describes the forms that are accepted, with examples.
	Accepted string
}

// Error reads like
// `"20 kV" is not a frequency: unknown unit "kV"; expected a number in Hz, …`.
func (e *ParseError) Error() string {
	return fmt.Sprintf("%q is not a %s: %s; expected %s", e.Input, e.Quantity, e.Reason, e.Accepted)
}

// quantity describes one kind of value written as a number, an optional SI
// prefix and an optional unit.
type quantity struct {
	name     string
	accepted string
	// units are the accepted unit spellings, compared without regard to
	// case (prefix letters are case-sensitive).
	units []string
	// prefixes maps a prefix letter to its power of ten.
	prefixes map[byte]int
	// rkm maps the letters that may stand for the decimal point in an
	// IEC 60062 RKM code (4k7, R47, 2n2) to their power of ten; nil
	// disables RKM codes.
	rkm map[byte]int
	// bareScale is the power of ten that turns a bare number into the
	// result unit; unitScale the power of ten that turns the unit (after
	// its prefix) into the result unit. Frequencies use 0 and 0 (Hz);
	// durations return milliseconds, so a bare number is already in ms
	// (0) and a number in seconds needs 3.
	bareScale, unitScale int
	// meg, when set, also accepts SPICE's "meg" (any case, optionally
	// followed by a unit) as the prefix 10^6.
	meg bool
	// explain, when set, returns a sentence for a rejected unit, or "".
	explain func(unit string) string
}

var (
	qFrequency = &quantity{
		name:     "frequency",
		accepted: `a number in Hz, or text with an optional k or M prefix and Hz, e.g. "1.5 kHz", "20kHz", "2.2M" or "20000 Hz"`,
		units:    []string{"Hz"},
		prefixes: map[byte]int{'k': 3, 'K': 3, 'M': 6},
		explain: func(u string) string {
			if strings.EqualFold(u, "mhz") && u[0] == 'm' {
				return `"mHz" would be millihertz; write "MHz" for megahertz`
			}
			return ""
		},
	}
	qLevel = &quantity{
		name:     "level",
		accepted: `a number in dBFS (0 dBFS = digital full scale), or text such as "-20 dBFS" or "-20dBFS"`,
		units:    []string{"dBFS", "dB FS"},
		explain: func(u string) string {
			switch strings.ToLower(u) {
			case "dbu", "dbv", "v", "mv", "dbm":
				return fmt.Sprintf("%s is an analog level that depends on the interface's calibration; give the digital level in dBFS", u)
			case "db":
				return `plain "dB" is a ratio, not a level; write dBFS`
			}
			return ""
		},
	}
	qTolerance = &quantity{
		name:     "tolerance",
		accepted: `a number in dB, or text such as "0.5 dB"`,
		units:    []string{"dB"},
	}
	qDuration = &quantity{
		name:      "duration",
		accepted:  `a number in milliseconds, or text such as "20 ms", "0.5 s" or "500 us"`,
		units:     []string{"s"},
		prefixes:  map[byte]int{'m': -3, 'u': -6},
		bareScale: 0,
		unitScale: 3,
	}
	qResistance = &quantity{
		name:     "resistance",
		accepted: `a number in ohms, text with an SI prefix (m, k, M, G, T) and an optional unit (Ω, ohm), e.g. "4.7k", "4.7 kΩ", "100 ohm", or an IEC 60062 code such as "4k7", "R47" or "1M5"`,
		units:    []string{"Ω", "Ω", "ohm", "ohms", "R"},
		prefixes: map[byte]int{'m': -3, 'k': 3, 'K': 3, 'M': 6, 'G': 9, 'T': 12},
		rkm:      map[byte]int{'R': 0, 'r': 0, 'm': -3, 'k': 3, 'K': 3, 'M': 6, 'G': 9, 'T': 12},
	}
	qCapacitance = &quantity{
		name:     "capacitance",
		accepted: `a number in farads, text with an SI prefix (p, n, u or µ, m) and an optional F, e.g. "100p", "15 nF", "4.7uF", or an IEC 60062 code such as "2n2" or "4µ7"`,
		units:    []string{"F"},
		prefixes: map[byte]int{'p': -12, 'P': -12, 'n': -9, 'N': -9, 'u': -6, 'U': -6, 'm': -3},
		rkm:      map[byte]int{'p': -12, 'n': -9, 'u': -6, 'm': -3},
	}
	qInductance = &quantity{
		name:     "inductance",
		accepted: `a number in henries, text with an SI prefix (p, n, u or µ, m) and an optional H, e.g. "10m", "10 mH", "4.7uH", or an IEC 60062 code such as "4m7" or "2u2"`,
		units:    []string{"H"},
		prefixes: map[byte]int{'p': -12, 'P': -12, 'n': -9, 'N': -9, 'u': -6, 'U': -6, 'm': -3},
		rkm:      map[byte]int{'p': -12, 'n': -9, 'u': -6, 'm': -3},
		explain: func(u string) string {
			if u == "M" || (strings.EqualFold(u, "mh") && u[0] == 'M') {
				return `"M" would be mega; write "m" for millihenries (SPICE reads M as milli)`
			}
			return ""
		},
	}
	qGain = &quantity{
		name:     "gain",
		accepted: `a plain number (a voltage ratio, not dB), optionally with an SI prefix (p, n, u or µ, m, k, M or meg, G, T), e.g. "2", "-1", "0.5", "100k", "1meg" or "1e6"`,
		prefixes: map[byte]int{'p': -12, 'n': -9, 'u': -6, 'm': -3, 'k': 3, 'K': 3, 'M': 6, 'G': 9, 'T': 12},
		meg:      true,
		explain: func(u string) string {
			if strings.EqualFold(u, "db") {
				return "give the gain as a ratio: 20 dB is 10, 6 dB about 2, -6 dB about 0.5"
			}
			return ""
		},
	}
)

// ParseFrequency parses a frequency and returns it in hertz.
//
// Accepted: a decimal number in Hz ("1500", "1.5e3"), optionally followed by
// a k (or K) or M prefix and an optional unit Hz, with or without a space:
// "1k", "1.5 kHz", "20kHz", "20000 Hz", "2.2M". The unit is matched without
// regard to case, prefixes with it ("mHz" is rejected, not read as MHz).
// The sign is kept; range checks are the caller's. Infinities, NaN and
// overflowing values are errors. Errors are *[ParseError].
func ParseFrequency(s string) (float64, error) { return qFrequency.parse(s) }

// ParseLevel parses a digital signal level and returns it in dBFS (decibels
// relative to digital full scale, 0 dBFS being the largest sine the
// converter can carry).
//
// Accepted: a decimal number ("-20") optionally followed by dBFS ("-20 dBFS",
// "-20dBFS", "−20 dBFS" with a Unicode minus). Analog units (dBu, dBV, V)
// and a bare "dB" are rejected with an explanation. Errors are
// *[ParseError].
func ParseLevel(s string) (float64, error) { return qLevel.parse(s) }

// ParseResistance parses a resistance and returns it in ohms.
//
// Accepted: a decimal number in Ω, optionally with an SI prefix m, k (or K),
// M, G or T and a unit Ω, ohm or ohms ("4.7k", "4.7 kΩ", "100 ohm"), or an
// IEC 60062 RKM code where the prefix letter (or R for none) stands for the
// decimal point: "4k7" = 4700, "R47" = 0.47, "4R7" = 4.7, "1M5" = 1.5e6,
// "100R" = 100. Errors are *[ParseError].
func ParseResistance(s string) (float64, error) { return qResistance.parse(s) }

// ParseCapacitance parses a capacitance and returns it in farads.
//
// Accepted: a decimal number in F, optionally with an SI prefix p, n, u (or
// µ) or m and an optional unit F ("100p", "15 nF", "4.7uF", "10u"), or an
// IEC 60062 RKM code: "2n2" = 2.2e-9, "4µ7" = 4.7e-6, "4p7" = 4.7e-12.
// Errors are *[ParseError].
func ParseCapacitance(s string) (float64, error) { return qCapacitance.parse(s) }

// ParseInductance parses an inductance and returns it in henries.
//
// Accepted: a decimal number in H, optionally with an SI prefix p, n, u (or
// µ) or m and an optional unit H ("10m", "10 mH", "4.7uH", "100 nH"), or an
// IEC 60062 RKM code: "4m7" = 4.7e-3, "2u2" = 2.2e-6. The unit is matched
// without regard to case, prefixes with it: "M" (mega) is rejected with an
// explanation, since SPICE reads it as milli. Errors are *[ParseError].
func ParseInductance(s string) (float64, error) { return qInductance.parse(s) }

// ParseGain parses a dimensionless voltage gain and returns it as a ratio.
//
// Accepted: a decimal number ("2", "-1", "0.5", "1e6"), optionally followed
// by an SI prefix p, n, u (or µ), m, k (or K), M, G or T, or SPICE's "meg"
// in any case ("100k", "1meg", "2.5m"); no unit. Prefixes are
// case-sensitive as in SI: "1M" is 10^6 and "1m" is 10^-3, whereas SPICE
// reads both as milli. The sign is kept and zero is accepted; range checks
// are the caller's. A gain in dB is rejected with an explanation. Errors
// are *[ParseError].
func ParseGain(s string) (float64, error) { return qGain.parse(s) }

// parseMillis parses a duration and returns it in milliseconds: a bare
// number is in ms; "20 ms", "0.5 s", "500 us" carry their unit.
func parseMillis(s string) (float64, error) { return qDuration.parse(s) }

// parseTolerance parses a tolerance in dB: "0.5", "0.5 dB" or "off" (0).
func parseTolerance(s string) (float64, error) {
	if strings.EqualFold(strings.TrimSpace(s), "off") {
		return 0, nil
	}
	return qTolerance.parse(s)
}

// normalize trims white space and replaces the Unicode minus sign and the
// micro signs with their ASCII stand-ins.
func normalize(s string) string {
	s = strings.TrimFunc(s, unicode.IsSpace)
	if strings.ContainsAny(s, "\u2212\u00b5\u03bc") {
		s = strings.NewReplacer("\u2212", "-", "\u00b5", "u", "\u03bc", "u").Replace(s)
	}
	return s
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

// maxExpDigits bounds the digits of an explicit exponent so that adding the
// prefix exponent cannot overflow; 1e99999 is already far out of range.
const maxExpDigits = 5

// parse reads a quantity; see ParseFrequency for the grammar. The number
// is rebuilt as one decimal "digits e exponent" string so that the prefix
// is applied exactly: "4k7" is parsed as 47e2, not 4.7 × 1000.
func (q *quantity) parse(in string) (float64, error) {
	fail := func(format string, args ...any) error {
		return &ParseError{Input: in, Quantity: q.name, Reason: fmt.Sprintf(format, args...), Accepted: q.accepted}
	}
	s := normalize(in)
	if s == "" {
		return 0, fail("empty text")
	}
	i := 0
	neg := false
	if s[0] == '+' || s[0] == '-' {
		neg = s[0] == '-'
		i++
	}
	start := i
	for i < len(s) && isDigit(s[i]) {
		i++
	}
	intPart := s[start:i]
	frac := ""
	point := false
	if i < len(s) && s[i] == '.' {
		point = true
		i++
		fs := i
		for i < len(s) && isDigit(s[i]) {
			i++
		}
		frac = s[fs:i]
	}
	exp := 0
	hasExp := false
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') && (intPart != "" || frac != "") {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		ds := j
		for j < len(s) && isDigit(s[j]) {
			j++
		}
		if j > ds {
			if j-ds > maxExpDigits {
				return 0, fail("exponent %q is out of range", s[i:j])
			}
			e, err := strconv.Atoi(s[i+1 : j])
			if err != nil {
				return 0, fail("bad exponent %q", s[i:j])
			}
			exp, hasExp, i = e, true, j
		}
	}
	rest := s[i:]

	scale := q.bareScale
	withUnit := false
	// IEC 60062 RKM code: digits, a letter standing for the decimal point,
	// digits ("4k7", "R47", "2n2").
	if q.rkm != nil && !point && !hasExp && len(rest) >= 2 && isDigit(rest[1]) {
		if p, ok := q.rkm[rest[0]]; ok {
			j := 1
			for j < len(rest) && isDigit(rest[j]) {
				j++
			}
			frac = rest[1:j]
			rest = rest[j:]
			scale, withUnit = q.unitScale+p, true
		}
	}
	if intPart == "" && frac == "" {
		return 0, fail("no number")
	}
	rest = strings.TrimLeftFunc(rest, unicode.IsSpace)
	if rest != "" {
		switch {
		case q.isUnit(rest):
			if !withUnit {
				scale = q.unitScale
			}
			withUnit = true
		case !withUnit && q.prefixes != nil && (len(rest) == 1 || q.isUnit(rest[1:])) && q.prefixes[rest[0]] != 0:
			scale, withUnit = q.unitScale+q.prefixes[rest[0]], true
		case !withUnit && q.meg && len(rest) >= 3 && strings.EqualFold(rest[:3], "meg") && (len(rest) == 3 || q.isUnit(rest[3:])):
			scale, withUnit = q.unitScale+6, true
		default:
			if q.explain != nil {
				if why := q.explain(rest); why != "" {
					return 0, fail("unit %q is not accepted: %s", rest, why)
				}
			}
			return 0, fail("unknown unit %q", rest)
		}
	}

	digits := strings.TrimLeft(intPart+frac, "0")
	if digits == "" {
		return 0, nil
	}
	e := exp - len(frac) + scale
	v, err := strconv.ParseFloat(digits+"e"+strconv.Itoa(e), 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, fail("the value is too large")
	}
	if neg {
		v = -v
	}
	return v, nil
}

// isUnit reports whether u is one of q's unit spellings, ignoring case.
func (q *quantity) isUnit(u string) bool {
	for _, name := range q.units {
		if strings.EqualFold(u, name) {
			return true
		}
	}
	return false
}

// Prefix is one SI prefix for [SplitSI]: the power of ten it stands for
// and how it is written.
type Prefix struct {
	Exp    int
	Symbol string
}

var (
	frequencyPrefixes   = []Prefix{{0, ""}, {3, "k"}, {6, "M"}}
	resistancePrefixes  = []Prefix{{-3, "m"}, {0, ""}, {3, "k"}, {6, "M"}, {9, "G"}, {12, "T"}}
	capacitancePrefixes = []Prefix{{-12, "p"}, {-9, "n"}, {-6, "µ"}, {-3, "m"}, {0, ""}}
)

// FormatFrequency writes hz with the largest fitting prefix: 20 → "20 Hz",
// 1500 → "1.5 kHz", 2.2e6 → "2.2 MHz". The text parses back to exactly hz
// with [ParseFrequency] (for finite hz).
func FormatFrequency(hz float64) string { return formatSI(hz, "Hz", frequencyPrefixes) }

// FormatResistance writes ohms with an SI prefix: 4700 → "4.7 kΩ",
// 0.47 → "470 mΩ". The text parses back to exactly ohms with
// [ParseResistance] (for finite ohms).
func FormatResistance(ohms float64) string { return formatSI(ohms, "Ω", resistancePrefixes) }

// FormatCapacitance writes farads with an SI prefix: 2.2e-9 → "2.2 nF",
// 1e-10 → "100 pF". The text parses back to exactly farads with
// [ParseCapacitance] (for finite farads).
func FormatCapacitance(farads float64) string { return formatSI(farads, "F", capacitancePrefixes) }

// formatSI writes v, a space, the prefix and the unit.
func formatSI(v float64, unit string, prefixes []Prefix) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'g', -1, 64) + " " + unit
	}
	num, symbol := SplitSI(v, prefixes)
	return num + " " + symbol + unit
}

// SplitSI writes a finite, non-zero v as a number and the largest prefix of
// prefixes (ascending by Exp) not exceeding its magnitude, the smallest
// when none does. The decimal point is moved in the shortest round-trip
// digits of v, so num followed by the prefix denotes exactly the same
// decimal number and parses back to v: 4700 with k → "4.7", "k".
func SplitSI(v float64, prefixes []Prefix) (num, symbol string) {
	sign := ""
	if v < 0 {
		sign, v = "-", -v
	}
	e := strconv.FormatFloat(v, 'e', -1, 64) // d.ddde±XX
	k := strings.IndexByte(e, 'e')
	digits := strings.Replace(e[:k], ".", "", 1)
	exp, _ := strconv.Atoi(e[k+1:]) // v = d.ddd × 10^exp
	p := prefixes[0]
	for _, c := range prefixes {
		if c.Exp <= exp {
			p = c
		}
	}
	shift := exp - p.Exp // number of digits before the point, minus one
	switch {
	case shift >= 0 && shift <= 5:
		if len(digits) <= shift+1 {
			num = digits + strings.Repeat("0", shift+1-len(digits))
		} else {
			num = digits[:shift+1] + "." + digits[shift+1:]
		}
	case shift < 0 && shift >= -3:
		num = "0." + strings.Repeat("0", -shift-1) + digits
	default:
		num = digits[:1]
		if len(digits) > 1 {
			num += "." + digits[1:]
		}
		num += "e" + strconv.Itoa(shift)
	}
	return sign + num, p.Symbol
}
