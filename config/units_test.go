package config

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// The parsers rebuild the text as one decimal number and round once, so
// every expected value below is compared exactly (==) with the Go literal
// of the same decimal.

// unitCase is one parser case: the text, the value expected, or the
// fragments the error message must contain.
type unitCase struct {
	name    string
	in      string
	want    float64
	wantErr []string // nil: must parse
}

func runUnitCases(t *testing.T, parse func(string) (float64, error), quantity string, cases []unitCase) {
	t.Helper()
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := parse(c.in)
			if c.wantErr == nil {
				if err != nil {
					t.Fatalf("parse(%q): %v", c.in, err)
				}
				if got != c.want {
					t.Fatalf("parse(%q) = %v, want %v", c.in, got, c.want)
				}
				return
			}
			if err == nil {
				t.Fatalf("parse(%q) = %v, want an error", c.in, got)
			}
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("parse(%q): error %T, want *ParseError", c.in, err)
			}
			if pe.Input != c.in || pe.Quantity != quantity {
				t.Errorf("ParseError{Input: %q, Quantity: %q}, want %q and %q", pe.Input, pe.Quantity, c.in, quantity)
			}
			msg := err.Error()
			for _, frag := range append([]string{`"` + c.in + `"`, "expected"}, c.wantErr...) {
				if !strings.Contains(msg, frag) {
					t.Errorf("error %q lacks %q", msg, frag)
				}
			}
		})
	}
}

func TestParseFrequency(t *testing.T) {
	// SI prefixes k = 10^3 and M = 10^6: SI Brochure, 9th ed. (BIPM 2019),
	// Table 7 — from memory. Writing "K" for kilo is common practice.
	runUnitCases(t, ParseFrequency, "frequency", []unitCase{
		{name: "integer", in: "1000", want: 1000},
		{name: "decimal", in: "0.5", want: 0.5},
		{name: "leading point", in: ".25", want: 0.25},
		{name: "trailing point", in: "20.", want: 20},
		{name: "exponent", in: "1.5e3", want: 1500},
		{name: "negative exponent", in: "25E-1", want: 2.5},
		{name: "kilo", in: "1k", want: 1000},
		{name: "kilo with fraction and unit", in: "1.5 kHz", want: 1500},
		{name: "kilo no space", in: "20kHz", want: 20000},
		{name: "capital K", in: "20K", want: 20000},
		{name: "unit only", in: "20000 Hz", want: 20000},
		{name: "unit lower case", in: "440hz", want: 440},
		{name: "mega", in: "2.2M", want: 2.2e6},
		{name: "mega with unit", in: "1 MHz", want: 1e6},
		{name: "exponent and prefix", in: "1e2 kHz", want: 1e5},
		{name: "surrounding space", in: "  50 Hz\t", want: 50},
		{name: "no-break space", in: "20\u00a0kHz", want: 20000},
		{name: "sign kept", in: "-20 Hz", want: -20},
		{name: "plus sign", in: "+20", want: 20},
		{name: "unicode minus", in: "\u221220", want: -20},
		{name: "zero", in: "0", want: 0},
		{name: "negative zero is zero", in: "-0", want: 0},
		{name: "underflow to zero", in: "1e-400", want: 0},
		{name: "many digits", in: "1000.000000000000000000000001", want: 1000},

		{name: "wrong unit", in: "20 kV", wantErr: []string{`unknown unit "kV"`, "Hz", "kHz"}},
		{name: "ohms", in: "20 ohm", wantErr: []string{`unknown unit "ohm"`}},
		{name: "millihertz", in: "1 mHz", wantErr: []string{`"mHz"`, "MHz"}},
		{name: "RKM is not for frequencies", in: "1k5", wantErr: []string{`unknown unit "k5"`}},
		{name: "empty", in: "", wantErr: []string{"empty"}},
		{name: "blank", in: "   ", wantErr: []string{"empty"}},
		{name: "unit alone", in: "Hz", wantErr: []string{"no number"}},
		{name: "sign alone", in: "-", wantErr: []string{"no number"}},
		{name: "point alone", in: ".", wantErr: []string{"no number"}},
		{name: "inf", in: "inf", wantErr: []string{"no number"}},
		{name: "NaN", in: "NaN", wantErr: []string{"no number"}},
		{name: "hex float", in: "0x1p4", wantErr: []string{`unknown unit "x1p4"`}},
		{name: "overflow", in: "1e400", wantErr: []string{"too large"}},
		{name: "overflow by prefix", in: "1.7e308 MHz", wantErr: []string{"too large"}},
		{name: "huge exponent", in: "1e999999", wantErr: []string{"out of range"}},
		{name: "two numbers", in: "20 20", wantErr: []string{`unknown unit "20"`}},
		{name: "text after unit", in: "20 Hz x", wantErr: []string{`unknown unit "Hz x"`}},
		{name: "comma decimal", in: "1,5k", wantErr: []string{`unknown unit ",5k"`}},
	})
}

func TestParseLevel(t *testing.T) {
	// dBFS is the level relative to digital full scale (AES17 — from
	// memory); dBu and dBV are analog levels referred to 0.7746 V and 1 V
	// (REFERENCES §10, common practice) and so depend on calibration.
	runUnitCases(t, ParseLevel, "level", []unitCase{
		{name: "number", in: "-20", want: -20},
		{name: "with unit", in: "-20 dBFS", want: -20},
		{name: "no space", in: "-20dBFS", want: -20},
		{name: "unicode minus", in: "\u221220 dBFS", want: -20},
		{name: "unit case", in: "-6.5 dbfs", want: -6.5},
		{name: "spaced unit", in: "-3 dB FS", want: -3},
		{name: "full scale", in: "0 dBFS", want: 0},

		{name: "dBu", in: "-20 dBu", wantErr: []string{`"dBu"`, "calibration", "dBFS"}},
		{name: "dBV", in: "-10dBV", wantErr: []string{`"dBV"`, "dBFS"}},
		{name: "volts", in: "0.1 V", wantErr: []string{`"V"`, "dBFS"}},
		{name: "plain dB", in: "-20 dB", wantErr: []string{"ratio", "dBFS"}},
		{name: "prefix", in: "-20 kdBFS", wantErr: []string{`unknown unit "kdBFS"`}},
		{name: "empty", in: "", wantErr: []string{"empty"}},
	})
}

func TestParseResistance(t *testing.T) {
	// RKM codes, where the prefix letter (R for none) stands for the
	// decimal point: IEC 60062 (REFERENCES §9) — from memory. SI prefixes:
	// SI Brochure, 9th ed., Table 7 — from memory.
	runUnitCases(t, ParseResistance, "resistance", []unitCase{
		{name: "RKM 4k7", in: "4k7", want: 4700},
		{name: "RKM 4K7", in: "4K7", want: 4700},
		{name: "RKM R47", in: "R47", want: 0.47},
		{name: "RKM 4R7", in: "4R7", want: 4.7},
		{name: "RKM 1M5", in: "1M5", want: 1.5e6},
		{name: "RKM 2G2", in: "2G2", want: 2.2e9},
		{name: "RKM 1T5", in: "1T5", want: 1.5e12},
		{name: "RKM 100R", in: "100R", want: 100},
		{name: "RKM 0R", in: "0R", want: 0},
		{name: "RKM with unit", in: "4k7 Ω", want: 4700},
		{name: "bare", in: "100", want: 100},
		{name: "prefix", in: "47k", want: 47000},
		{name: "prefix and unit", in: "4.7 kΩ", want: 4700},
		{name: "ohm sign U+2126", in: "4.7k\u2126", want: 4700},
		{name: "ohm word", in: "100 ohm", want: 100},
		{name: "ohms word", in: "1 Mohms", want: 1e6},
		{name: "milliohm", in: "50m", want: 0.05},
		{name: "exponent", in: "1e3", want: 1000},

		{name: "farads", in: "10 F", wantErr: []string{`unknown unit "F"`, "4k7"}},
		{name: "two points", in: "4k7k", wantErr: []string{`unknown unit "k"`}},
		{name: "RKM after point", in: "4.7k7", wantErr: []string{`unknown unit "k7"`}},
		{name: "letter alone", in: "R", wantErr: []string{"no number"}},
		{name: "pico is not for ohms", in: "10p", wantErr: []string{`unknown unit "p"`}},
	})
}

func TestParseCapacitance(t *testing.T) {
	// RKM codes: IEC 60062 (REFERENCES §9) — from memory; SI prefixes p, n,
	// µ, m: SI Brochure, 9th ed., Table 7 — from memory. "u" for µ is
	// common practice.
	runUnitCases(t, ParseCapacitance, "capacitance", []unitCase{
		{name: "RKM 2n2", in: "2n2", want: 2.2e-9},
		{name: "RKM 4p7", in: "4p7", want: 4.7e-12},
		{name: "RKM 4µ7", in: "4\u00b57", want: 4.7e-6},
		{name: "RKM 4μ7 greek mu", in: "4\u03bc7", want: 4.7e-6},
		{name: "RKM 4u7", in: "4u7", want: 4.7e-6},
		{name: "RKM with unit", in: "2n2F", want: 2.2e-9},
		{name: "micro", in: "10u", want: 10e-6},
		{name: "micro with unit", in: "4.7uF", want: 4.7e-6},
		{name: "micro sign with unit", in: "4.7 µF", want: 4.7e-6},
		{name: "nano spaced", in: "15 nF", want: 15e-9},
		{name: "pico", in: "100p", want: 100e-12},
		{name: "pico upper case", in: "100PF", want: 100e-12},
		{name: "lower-case unit", in: "100pf", want: 100e-12},
		{name: "milli", in: "1 mF", want: 1e-3},
		{name: "bare farads", in: "1e-10", want: 1e-10},

		{name: "ohms", in: "100 ohm", wantErr: []string{`unknown unit "ohm"`, "2n2"}},
		{name: "mega is not for farads", in: "1M", wantErr: []string{`unknown unit "M"`}},
		{name: "henry", in: "10 mH", wantErr: []string{`unknown unit "mH"`}},
	})
}

func TestParseInductance(t *testing.T) {
	// SI prefixes p, n, µ, m: SI Brochure, 9th ed., Table 7 — from memory.
	// RKM codes: IEC 60062 (REFERENCES §9) — from memory. "u" for µ is
	// common practice; SPICE reading M as milli is from memory.
	runUnitCases(t, ParseInductance, "inductance", []unitCase{
		{name: "milli", in: "10m", want: 10e-3},
		{name: "milli with unit", in: "10mH", want: 10e-3},
		{name: "milli spaced unit", in: "10 mH", want: 10e-3},
		{name: "lower-case unit", in: "10mh", want: 10e-3},
		{name: "micro", in: "4.7uH", want: 4.7e-6},
		{name: "micro sign", in: "4.7 µH", want: 4.7e-6},
		{name: "upper-case U", in: "22UH", want: 22e-6},
		{name: "nano", in: "100n", want: 100e-9},
		{name: "pico", in: "100p", want: 100e-12},
		{name: "RKM 4m7", in: "4m7", want: 4.7e-3},
		{name: "RKM 2u2", in: "2u2", want: 2.2e-6},
		{name: "RKM 4n7 with unit", in: "4n7H", want: 4.7e-9},
		{name: "bare henries", in: "1.5", want: 1.5},
		{name: "henries", in: "2 H", want: 2},
		{name: "exponent", in: "1e-3", want: 1e-3},

		{name: "mega", in: "1M", wantErr: []string{`"M"`, "mega", "milli"}},
		{name: "megahenry", in: "10MH", wantErr: []string{`"MH"`, "mega", "milli"}},
		{name: "SPICE meg", in: "1meg", wantErr: []string{`unknown unit "meg"`}},
		{name: "farads", in: "10nF", wantErr: []string{`unknown unit "nF"`, "4m7"}},
		{name: "RKM R is not for henries", in: "4R7", wantErr: []string{`unknown unit "R7"`}},
		{name: "empty", in: "", wantErr: []string{"empty"}},
	})
}

func TestParseGain(t *testing.T) {
	// SI prefixes: SI Brochure, 9th ed., Table 7 — from memory. SPICE's
	// "meg" = 10^6 and its reading of M as milli: ngspice manual §2.3.5
	// (scale factors) — from memory. 20 dB = ×10 is 20·log10(10), common
	// practice.
	runUnitCases(t, ParseGain, "gain", []unitCase{
		{name: "integer", in: "2", want: 2},
		{name: "negative", in: "-1", want: -1},
		{name: "unicode minus", in: "\u22123.3", want: -3.3},
		{name: "fraction", in: "0.5", want: 0.5},
		{name: "zero", in: "0", want: 0},
		{name: "exponent", in: "1e6", want: 1e6},
		{name: "kilo", in: "100k", want: 100e3},
		{name: "capital K", in: "100K", want: 100e3},
		{name: "SI mega", in: "1M", want: 1e6},
		{name: "SPICE meg", in: "1meg", want: 1e6},
		{name: "SPICE MEG", in: "2.5MEG", want: 2.5e6},
		{name: "SPICE Meg spaced", in: "1 Meg", want: 1e6},
		{name: "milli", in: "2.5m", want: 2.5e-3},
		{name: "micro sign", in: "10µ", want: 10e-6},
		{name: "giga", in: "1G", want: 1e9},

		{name: "decibels", in: "20 dB", wantErr: []string{`"dB"`, "ratio", "10"}},
		{name: "volts per volt", in: "2 V/V", wantErr: []string{`unknown unit "V/V"`, "1meg"}},
		{name: "RKM is not for gains", in: "4k7", wantErr: []string{`unknown unit "k7"`}},
		{name: "meg then junk", in: "1megx", wantErr: []string{`unknown unit "megx"`}},
		{name: "two prefixes", in: "1kk", wantErr: []string{`unknown unit "kk"`}},
		{name: "empty", in: " ", wantErr: []string{"empty"}},
		{name: "NaN", in: "NaN", wantErr: []string{"no number"}},
	})
}

// TestMegOnlyForGain checks that SPICE's "meg" stays an error for the
// quantities that did not accept it before ParseGain existed.
func TestMegOnlyForGain(t *testing.T) {
	for name, parse := range map[string]func(string) (float64, error){
		"frequency": ParseFrequency, "resistance": ParseResistance, "capacitance": ParseCapacitance,
	} {
		if v, err := parse("1meg"); err == nil {
			t.Errorf("%s: parse(\"1meg\") = %v, want an error", name, v)
		}
	}
}

func FuzzParseInductance(f *testing.F) {
	for _, s := range []string{"10m", "10 mH", "4m7", "2u2", "4.7 µH", "1M", "10MH", "1meg", "100n", "4R7"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fuzzQuantity(t, s, "inductance", ParseInductance, func(v float64) string { return num(v) + " H" })
	})
}

func FuzzParseGain(f *testing.F) {
	for _, s := range []string{"2", "-1", "0.5", "1meg", "1MEG", "100k", "1M", "20 dB", "1e6", "2.5m"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fuzzQuantity(t, s, "gain", ParseGain, func(v float64) string { return num(v) })
	})
}

func ExampleParseGain() {
	for _, s := range []string{"2", "-0.5", "100k", "1meg", "1M", "2.5m"} {
		g, _ := ParseGain(s)
		fmt.Println(s, "=", g)
	}
	// Output:
	// 2 = 2
	// -0.5 = -0.5
	// 100k = 100000
	// 1meg = 1e+06
	// 1M = 1e+06
	// 2.5m = 0.0025
}

func ExampleParseInductance() {
	for _, s := range []string{"10mH", "4m7", "2u2", "100 nH"} {
		h, _ := ParseInductance(s)
		fmt.Println(s, "=", h, "H")
	}
	_, err := ParseInductance("10MH")
	fmt.Println(err != nil)
	// Output:
	// 10mH = 0.01 H
	// 4m7 = 0.0047 H
	// 2u2 = 2.2e-06 H
	// 100 nH = 1e-07 H
	// true
}

func TestParseMillis(t *testing.T) {
	// SI prefixes m and µ: SI Brochure, 9th ed., Table 7 — from memory.
	runUnitCases(t, parseMillis, "duration", []unitCase{
		{name: "bare is ms", in: "20", want: 20},
		{name: "ms", in: "20 ms", want: 20},
		{name: "seconds", in: "0.5 s", want: 500},
		{name: "microseconds", in: "500 us", want: 0.5},
		{name: "micro sign", in: "1500µs", want: 1.5},
		{name: "minutes are not accepted", in: "1 min", wantErr: []string{`unknown unit "min"`}},
		{name: "hertz", in: "20 Hz", wantErr: []string{`unknown unit "Hz"`}},
	})
}

func TestParseTolerance(t *testing.T) {
	runUnitCases(t, parseTolerance, "tolerance", []unitCase{
		{name: "number", in: "0.5", want: 0.5},
		{name: "dB", in: "0.25 dB", want: 0.25},
		{name: "off", in: "off", want: 0},
		{name: "OFF", in: " OFF ", want: 0},
		{name: "dBFS", in: "1 dBFS", wantErr: []string{`unknown unit "dBFS"`}},
	})
}

func TestFormat(t *testing.T) {
	// Prefix choice and digits; SI Brochure, 9th ed., Table 7 (from
	// memory) for the prefixes.
	cases := []struct {
		name   string
		format func(float64) string
		in     float64
		want   string
	}{
		{"hertz", FormatFrequency, 20, "20 Hz"},
		{"sub-hertz", FormatFrequency, 0.5, "0.5 Hz"},
		{"kilohertz", FormatFrequency, 1500, "1.5 kHz"},
		{"kilohertz round", FormatFrequency, 20000, "20 kHz"},
		{"megahertz", FormatFrequency, 2.2e6, "2.2 MHz"},
		{"beyond the largest prefix", FormatFrequency, 1e21, "1e15 MHz"},
		{"negative", FormatFrequency, -1000, "-1 kHz"},
		{"zero", FormatFrequency, 0, "0 Hz"},
		{"kilohm", FormatResistance, 4700, "4.7 kΩ"},
		{"milliohm", FormatResistance, 0.47, "470 mΩ"},
		{"ohm", FormatResistance, 100, "100 Ω"},
		{"megohm", FormatResistance, 1.5e6, "1.5 MΩ"},
		{"teraohm", FormatResistance, 1e12, "1 TΩ"},
		{"nanofarad", FormatCapacitance, 2.2e-9, "2.2 nF"},
		{"picofarad", FormatCapacitance, 1e-10, "100 pF"},
		{"microfarad", FormatCapacitance, 4.7e-6, "4.7 µF"},
		{"below a picofarad", FormatCapacitance, 1e-13, "0.1 pF"},
		{"far below", FormatCapacitance, 1e-20, "1e-8 pF"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.format(c.in); got != c.want {
				t.Errorf("format(%v) = %q, want %q", c.in, got, c.want)
			}
		})
	}
}

// TestFormatRoundTrip checks that formatted values parse back exactly,
// over random values spread across 40 decades.
func TestFormatRoundTrip(t *testing.T) {
	const trials = 20000
	rng := rand.New(rand.NewPCG(1, 2))
	pairs := []struct {
		name   string
		format func(float64) string
		parse  func(string) (float64, error)
	}{
		{"frequency", FormatFrequency, ParseFrequency},
		{"resistance", FormatResistance, ParseResistance},
		{"capacitance", FormatCapacitance, ParseCapacitance},
	}
	for _, p := range pairs {
		t.Run(p.name, func(t *testing.T) {
			for range trials {
				v := (rng.Float64() + 0.1) * math.Pow(10, float64(rng.IntN(40)-20))
				if rng.IntN(4) == 0 {
					v = math.Round(v*1000) / 1000 // short decimals too
				}
				if rng.IntN(2) == 0 {
					v = -v
				}
				text := p.format(v)
				got, err := p.parse(text)
				if err != nil || got != v {
					t.Fatalf("parse(format(%v) = %q) = %v, %v", v, text, got, err)
				}
			}
		})
	}
}
