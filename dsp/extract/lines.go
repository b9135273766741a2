package extract

import (
	"fmt"
	"math"
	"strings"
)

// Lines returns the readings as short human-readable lines for a status
// pane or a report, in this order: shape and passband, each corner, the
// peak, the notch, the shelf midpoint, the slopes, the passband delay.
// Readings that are NaN are left out. Negative numbers use the Unicode
// minus sign (U+2212); frequencies and delays have four significant
// digits. For example:
//
//	low-pass, passband 0.00 dB
//	−3 dB at 1.061 kHz (−45.0°)
//	slope −20.0 dB/decade at the high end
//	group delay 149.9 µs in the passband
func (p Params) Lines() []string {
	var out []string
	if isNum(p.PassbandGainDB) {
		out = append(out, fmt.Sprintf("%s, passband %s dB", p.Shape, signed(p.PassbandGainDB, 2)))
	} else {
		out = append(out, p.Shape.String())
	}
	for _, c := range p.Corners {
		if isNum(c.PhaseDeg) {
			out = append(out, fmt.Sprintf("−3 dB at %s (%s°)", hertz(c.Freq), signed(c.PhaseDeg, 1)))
		} else {
			out = append(out, fmt.Sprintf("−3 dB at %s", hertz(c.Freq)))
		}
	}
	if p.Peak.Found() {
		line := fmt.Sprintf("peak %s dB at %s", signed(p.Peak.GainDB, 2), hertz(p.Peak.Freq))
		if isNum(p.Peak.Q) {
			line += fmt.Sprintf(", Q %s (bandwidth %s)", sig(p.Peak.Q), hertz(p.Peak.Bandwidth))
		}
		out = append(out, line)
	}
	if p.Notch.Found() {
		line := fmt.Sprintf("notch at %s, %s dB deep", hertz(p.Notch.Freq), depth(p.Notch.DepthDB))
		if isNum(p.Notch.Q) {
			line += fmt.Sprintf(", Q %s (bandwidth %s)", sig(p.Notch.Q), hertz(p.Notch.Bandwidth))
		}
		out = append(out, line)
	}
	if isNum(p.ShelfMidFreq) {
		out = append(out, fmt.Sprintf("shelf midpoint at %s, step %s dB", hertz(p.ShelfMidFreq), signed(p.HighLevelDB-p.LowLevelDB, 2)))
	}
	if isNum(p.SlopeLow) {
		out = append(out, fmt.Sprintf("slope %s dB/decade at the low end", signed(p.SlopeLow, 1)))
	}
	if isNum(p.SlopeHigh) {
		out = append(out, fmt.Sprintf("slope %s dB/decade at the high end", signed(p.SlopeHigh, 1)))
	}
	if isNum(p.PassbandDelay) {
		out = append(out, fmt.Sprintf("group delay %s in the passband", seconds(p.PassbandDelay)))
	}
	return out
}

func isNum(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// signed formats v with prec decimals, a Unicode minus for negative values
// and a plus for positive ones; a value that rounds to zero has no sign.
func signed(v float64, prec int) string {
	s := fmt.Sprintf("%+.*f", prec, v)
	if strings.Trim(s[1:], "0.") == "" {
		return s[1:]
	}
	if s[0] == '-' {
		return "−" + s[1:]
	}
	return s
}

// minus replaces ASCII hyphen-minus signs with the Unicode minus.
func minus(s string) string { return strings.ReplaceAll(s, "-", "−") }

// depth formats a notch depth in dB; an ideal notch is infinitely deep.
func depth(v float64) string {
	if math.IsInf(v, 1) {
		return "∞"
	}
	return minus(fmt.Sprintf("%.1f", v))
}

// sig formats v with three significant digits, keeping trailing zeros
// ("1.00", not "1", for a Q of 1.0003).
func sig(v float64) string {
	return minus(strings.TrimSuffix(fmt.Sprintf("%#.3g", v), "."))
}

// hertz formats a frequency with four significant digits and an SI prefix.
func hertz(f float64) string { return withPrefix(f, "Hz") }

// seconds formats a time with four significant digits and an SI prefix.
func seconds(t float64) string { return withPrefix(t, "s") }

func withPrefix(v float64, unit string) string {
	switch {
	case !isNum(v):
		return "—"
	case v == 0:
		return "0 " + unit
	}
	prefixes := [...]struct {
		scale float64
		name  string
	}{{1e9, "G"}, {1e6, "M"}, {1e3, "k"}, {1, ""}, {1e-3, "m"}, {1e-6, "µ"}, {1e-9, "n"}, {1e-12, "p"}}
	// Round to four significant digits first, so that 999.96 becomes
	// "1.000 k" and 9.9996 becomes "10.00".
	e := math.Floor(math.Log10(math.Abs(v)))
	scale := math.Pow(10, 3-e)
	r := math.Round(v*scale) / scale
	a := math.Abs(r)
	for i, p := range prefixes {
		if a >= p.scale || i == len(prefixes)-1 {
			x := r / p.scale
			dec := max(0, min(3, 3-int(math.Floor(math.Log10(math.Abs(x))+1e-9))))
			return minus(fmt.Sprintf("%.*f", dec, x)) + " " + p.name + unit
		}
	}
	panic("unreachable")
}
