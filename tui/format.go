package tui

import (
	"math"
	"strconv"
	"strings"

	"github.com/charmbracelet/x/ansi"
)

// minus is the Unicode minus sign used for negative numbers on screen,
// as in the parameter lines of package extract.
const minus = "−"

// fixed formats v with prec decimals, a Unicode minus, "—" for NaN and
// "∞" for infinities. plus adds a "+" to positive values.
func fixed(v float64, prec int, plus bool) string {
	switch {
	case math.IsNaN(v):
		return "—"
	case math.IsInf(v, 1):
		if plus {
			return "+∞"
		}
		return "∞"
	case math.IsInf(v, -1):
		return minus + "∞"
	}
	s := strconv.FormatFloat(v, 'f', prec, 64)
	if strings.HasPrefix(s, "-") {
		if strings.Trim(s[1:], "0.") == "" {
			return s[1:] // no "−0.0"
		}
		return minus + s[1:]
	}
	if plus && strings.Trim(s, "0.") != "" {
		return "+" + s
	}
	return s
}

// sig formats |v| ≥ 0 with four significant digits and no exponent.
func sig(v float64) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return fixed(v, 0, false)
	}
	digits := 3 - int(math.Floor(math.Log10(math.Abs(v))))
	if digits < 0 {
		digits = 0
	}
	// Rounding may carry into a new digit (9.9996 → 10.000): recheck.
	s := strconv.FormatFloat(v, 'f', digits, 64)
	if r, err := strconv.ParseFloat(s, 64); err == nil && digits > 0 && math.Abs(r) >= math.Pow(10, float64(4-digits)) {
		s = strconv.FormatFloat(v, 'f', digits-1, 64)
	}
	if strings.HasPrefix(s, "-") {
		return minus + s[1:]
	}
	return s
}

// hz formats a frequency with four significant digits: "20.00 Hz",
// "1.061 kHz", "20.00 kHz".
func hz(f float64) string {
	switch {
	case math.IsNaN(f) || f <= 0:
		return "— Hz"
	case f >= 1e6:
		return sig(f/1e6) + " MHz"
	case f >= 1e3:
		return sig(f/1e3) + " kHz"
	}
	return sig(f) + " Hz"
}

// seconds formats a time with four significant digits in s, ms, µs or ns.
func seconds(t float64) string {
	a := math.Abs(t)
	switch {
	case math.IsNaN(t) || math.IsInf(t, 0):
		return fixed(t, 0, false) + " s"
	case a == 0:
		return "0 s"
	case a >= 1:
		return sig(t) + " s"
	case a >= 1e-3:
		return sig(t*1e3) + " ms"
	case a >= 1e-6:
		return sig(t*1e6) + " µs"
	}
	return sig(t*1e9) + " ns"
}

// siValue formats a component value with an SI prefix and four
// significant digits: 1.5e-8 F → "15.00 nF".
func siValue(v float64, unit string) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return fixed(v, 0, false) + " " + unit
	}
	prefixes := []struct {
		scale float64
		p     string
	}{{1e9, "G"}, {1e6, "M"}, {1e3, "k"}, {1, ""}, {1e-3, "m"}, {1e-6, "µ"}, {1e-9, "n"}, {1e-12, "p"}, {1e-15, "f"}}
	a := math.Abs(v) * (1 + 1e-12)
	for _, p := range prefixes {
		if a >= p.scale {
			return sig(v/p.scale) + " " + p.p + unit
		}
	}
	return sig(v/1e-15) + " f" + unit
}

// padRight pads s with spaces to w columns, or cuts it to w columns with
// "…" when it is wider. s may hold escape sequences.
func padRight(s string, w int) string {
	if w <= 0 {
		return ""
	}
	n := ansi.StringWidth(s)
	if n > w {
		return ansi.Truncate(s, w, "…")
	}
	return s + strings.Repeat(" ", w-n)
}

// wrapWords breaks plain text into lines of at most w columns at spaces,
// the first line indented by first and the others by rest (both counted
// in w).
func wrapWords(text string, w int, first, rest string) []string {
	var lines []string
	line := first
	empty := true
	for _, word := range strings.Fields(text) {
		if !empty && ansi.StringWidth(line)+1+ansi.StringWidth(word) > w {
			lines = append(lines, line)
			line, empty = rest, true
		}
		if !empty {
			line += " "
		}
		line += word
		empty = false
	}
	if !empty || len(lines) == 0 {
		lines = append(lines, line)
	}
	return lines
}
