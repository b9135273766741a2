package config

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzLoad feeds arbitrary file content to Parse. It must never panic; it
// returns either settings that write out and read back unchanged, or
// problems that each name a position in the file (*FileError) or a
// setting and its origin in the file (*SettingError), one line each.
// Settings that parse are validated too, with the same demands on the
// problems found.
func FuzzLoad(f *testing.F) {
	files, _ := filepath.Glob("testdata/*.toml")
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(data)
		}
	}
	for _, s := range []string{
		"", "[audio]\nrate = 1\nrate = 2\n", "audio.rate = \"96k\"\nsweep = { to_hz = \"30k\" }\n",
		"[[audio]]\n", "[audio.rate]\n", "\"audio.rate\" = 5", "[x]\ny.z = 1\n", "a = [1, [2, {b = 3}]]\n",
		"[fixture]\nload_ohms = \"4k7\"\nload_farads = 2.2e-9\n", "\ufeff[audio]\r\nrate = 44100\r\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		const name = "fuzz.toml"
		s, err := Parse(data, name)
		if err != nil {
			if s != nil {
				t.Fatal("settings returned with an error")
			}
			for _, e := range unjoin(err) {
				checkProblem(t, e, name, true)
			}
			return
		}
		for _, e := range unjoin(s.Validate()) {
			checkProblem(t, e, name, false)
		}
		var b bytes.Buffer
		if err := s.WriteTOML(&b); err != nil {
			t.Fatal(err)
		}
		back, err := Parse(b.Bytes(), "back.toml")
		if err != nil {
			t.Fatalf("written settings do not read back: %v\n%s", err, b.String())
		}
		if ok, diff := sameValues(back, s); !ok {
			t.Fatalf("round trip differs: %s", diff)
		}
	})
}

// unjoin splits an errors.Join result.
func unjoin(err error) []error {
	if err == nil {
		return nil
	}
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		return j.Unwrap()
	}
	return []error{err}
}

// checkProblem demands that e names a position or a setting. Problems
// from the file (fromFile) carry the file name in their origin; problems
// from Validate may also come from the defaults.
func checkProblem(t *testing.T, e error, name string, fromFile bool) {
	t.Helper()
	msg := e.Error()
	if msg == "" || strings.Contains(msg, "\n") {
		t.Fatalf("problem %q is empty or not one line", msg)
	}
	var fe *FileError
	var se *SettingError
	switch {
	case errors.As(e, &fe):
		if !fromFile || fe.Path != name || fe.Line < 1 || fe.Column < 1 {
			t.Fatalf("file problem %q lacks a position", msg)
		}
	case errors.As(e, &se):
		if _, ok := lookup(se.Key); !ok || se.Allowed == "" {
			t.Fatalf("setting problem %q names no setting or rule", msg)
		}
		if fromFile && !strings.HasPrefix(se.Origin, name+":") {
			t.Fatalf("setting problem %q has origin %q, not in %s", msg, se.Origin, name)
		}
		if !fromFile && se.Origin != OriginDefault && !strings.HasPrefix(se.Origin, name+":") {
			t.Fatalf("setting problem %q has origin %q", msg, se.Origin)
		}
	default:
		t.Fatalf("problem %T %q is neither a FileError nor a SettingError", e, msg)
	}
}

// fuzzQuantity checks one parser: no panic; an error is a *ParseError
// about the input; a value is finite and reads back exactly from its
// formatted text, with and without prefix.
func fuzzQuantity(t *testing.T, in, quantity string, parse func(string) (float64, error), format func(float64) string) {
	v, err := parse(in)
	if err != nil {
		var pe *ParseError
		if !errors.As(err, &pe) || pe.Input != in || pe.Quantity != quantity || pe.Reason == "" {
			t.Fatalf("parse(%q): error %#v is not a *ParseError about the input", in, err)
		}
		if !strings.Contains(err.Error(), quantity) {
			t.Fatalf("error %q does not say a %s was expected", err, quantity)
		}
		return
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		t.Fatalf("parse(%q) = %v", in, v)
	}
	for _, text := range []string{format(v), num(v)} {
		back, err := parse(text)
		if err != nil || back != v {
			t.Fatalf("parse(%q) = %v; its text %q reads back as %v, %v", in, v, text, back, err)
		}
	}
}

func FuzzParseFrequency(f *testing.F) {
	for _, s := range []string{"1k", "1.5 kHz", "20kHz", "20000 Hz", "2.2M", "20 kV", "1 mHz", "-1e-3", "1e400", ".5", "20K"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fuzzQuantity(t, s, "frequency", ParseFrequency, FormatFrequency)
	})
}

func FuzzParseLevel(f *testing.F) {
	for _, s := range []string{"-20", "-20 dBFS", "−20dBFS", "-20 dBu", "0 dB", "-3 dB FS"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fuzzQuantity(t, s, "level", ParseLevel, func(v float64) string { return num(v) + " dBFS" })
	})
}

func FuzzParseResistance(f *testing.F) {
	for _, s := range []string{"4k7", "R47", "1M5", "100", "100R", "4.7 kΩ", "10 ohm", "2G2", "50m", "4K7", "1 F"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fuzzQuantity(t, s, "resistance", ParseResistance, FormatResistance)
	})
}

func FuzzParseCapacitance(f *testing.F) {
	for _, s := range []string{"2n2", "10u", "4.7uF", "15 nF", "4µ7", "100p", "1e-10", "4p7F", "1 M"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fuzzQuantity(t, s, "capacitance", ParseCapacitance, FormatCapacitance)
	})
}
