package config

import (
	"errors"
	"fmt"
	"strings"
	"testing"
)

// sameValues reports whether a and b hold the same settings (origins
// aside), and the first difference.
func sameValues(a, b *Settings) (bool, string) {
	for _, k := range Keys() {
		va, _ := a.Get(k)
		vb, _ := b.Get(k)
		if va != vb {
			return false, fmt.Sprintf("%s: %s != %s", k, va, vb)
		}
	}
	if a.Audio != b.Audio || a.Output != b.Output || a.Sweep != b.Sweep || a.Analyze != b.Analyze || a.Fixture != b.Fixture {
		return false, "struct fields differ"
	}
	return true, ""
}

// settingErrors unpacks a joined error into its *SettingError parts and
// fails on any other kind.
func settingErrors(t *testing.T, err error) []*SettingError {
	t.Helper()
	if err == nil {
		return nil
	}
	var list []error
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		list = j.Unwrap()
	} else {
		list = []error{err}
	}
	out := make([]*SettingError, 0, len(list))
	for _, e := range list {
		var se *SettingError
		if !errors.As(e, &se) {
			t.Fatalf("error %T %q is not a *SettingError", e, e)
		}
		out = append(out, se)
	}
	return out
}

func TestDefaults(t *testing.T) {
	d := Defaults()
	// Defaults as specified for tonetrace (its design brief); the fixture
	// load is a line input, 10–50 kΩ (REFERENCES §10, common practice); a
	// line output is about 100 Ω (REFERENCES §6, common practice).
	checks := []struct {
		key, want string
	}{
		{"audio.rate", "48000"},
		{"audio.period_ms", "20"},
		{"audio.backend", `"auto"`},
		{"audio.device", `""`},
		{"audio.ref_input", "2"},
		{"audio.dut_input", "1"},
		{"output.level_dbfs", "-20"},
		{"output.cap_dbfs", "-6"},
		{"output.fade_ms", "20"},
		{"sweep.from_hz", "20"},
		{"sweep.to_hz", "20000"},
		{"sweep.points_per_decade", "10"},
		{"sweep.adaptive_db", "0"},
		{"sweep.method", `"steps"`},
		{"analyze.segment", "8192"},
		{"analyze.points_per_decade", "0"},
		{"fixture.source_ohms", "100"},
		{"fixture.load_ohms", "20000"},
		{"fixture.load_farads", "1e-10"},
	}
	for _, c := range checks {
		got, err := d.Get(c.key)
		if err != nil || got != c.want {
			t.Errorf("default %s = %s (%v), want %s", c.key, got, err, c.want)
		}
		if o := d.Origin(c.key); o != OriginDefault {
			t.Errorf("Origin(%s) = %q, want %q", c.key, o, OriginDefault)
		}
	}
	if d.Fixture.LoadOhms < 10e3 || d.Fixture.LoadOhms > 50e3 {
		t.Errorf("default load %v Ω is not a line input (10–50 kΩ, REFERENCES §10)", d.Fixture.LoadOhms)
	}
	if err := d.Validate(); err != nil {
		t.Errorf("defaults do not validate: %v", err)
	}
	if d.File() != "" {
		t.Errorf("File() = %q, want empty", d.File())
	}
}

// TestKeysWiring sets every key to a value of its own and checks that the
// value lands in that key alone, catching crossed accessors.
func TestKeysWiring(t *testing.T) {
	keys := Keys()
	seen := map[string]bool{}
	for i, k := range keys {
		if seen[k] {
			t.Fatalf("key %s listed twice", k)
		}
		seen[k] = true
		sp, _ := lookup(k)
		if n := btoi(sp.f != nil) + btoi(sp.n != nil) + btoi(sp.str != nil); n != 1 {
			t.Fatalf("%s has %d accessors, want 1", k, n)
		}
		if !isTable(sp.table()) {
			t.Fatalf("%s is in no known table", k)
		}
		d := Doc(k)
		if !strings.Contains(d, "Default ") || len(d) < 30 {
			t.Errorf("Doc(%s) = %q: no default stated", k, d)
		}
		s := Defaults()
		var text string
		switch sp.kind {
		case kindName, kindChoice:
			text = fmt.Sprintf("name-%d", i)
		default:
			text = fmt.Sprint(1000 + i)
		}
		if err := s.Set(k, text, "--test"); err != nil {
			t.Fatalf("Set(%s, %s): %v", k, text, err)
		}
		for _, other := range keys {
			got, _ := s.Get(other)
			def, _ := Defaults().Get(other)
			if other == k {
				want := text
				if sp.str != nil {
					want = `"` + text + `"`
				}
				if got != want {
					t.Errorf("after Set(%s, %s): Get = %s", k, text, got)
				}
				if s.Origin(k) != "--test" {
					t.Errorf("Origin(%s) = %q", k, s.Origin(k))
				}
			} else if got != def {
				t.Errorf("Set(%s) changed %s from %s to %s", k, other, def, got)
			}
		}
	}
	if Doc("no.such") != "" {
		t.Error(`Doc("no.such") is not empty`)
	}
}

func btoi(b bool) int {
	if b {
		return 1
	}
	return 0
}

func TestSet(t *testing.T) {
	cases := []struct {
		name, key, value, origin string
		check                    func(*Settings) bool
		wantErr                  []string // fragments of the error, nil for success
	}{
		{name: "frequency with unit", key: "sweep.to_hz", value: "20k", origin: "--to",
			check: func(s *Settings) bool { return s.Sweep.ToHz == 20000 }},
		{name: "rate from text", key: "audio.rate", value: "44.1 kHz", origin: "--rate",
			check: func(s *Settings) bool { return s.Audio.Rate == 44100 }},
		{name: "level with unit", key: "output.level_dbfs", value: "-30 dBFS", origin: "--level",
			check: func(s *Settings) bool { return s.Output.LevelDBFS == -30 }},
		{name: "duration in seconds", key: "output.fade_ms", value: "0.1 s", origin: "--fade",
			check: func(s *Settings) bool { return s.Output.FadeMS == 100 }},
		{name: "tolerance off", key: "sweep.adaptive_db", value: "off", origin: "--adaptive",
			check: func(s *Settings) bool { return s.Sweep.AdaptiveDB == 0 }},
		{name: "RKM resistance", key: "fixture.load_ohms", value: "4k7", origin: "--load",
			check: func(s *Settings) bool { return s.Fixture.LoadOhms == 4700 }},
		{name: "RKM capacitance", key: "fixture.load_farads", value: "2n2", origin: "--cload",
			check: func(s *Settings) bool { return s.Fixture.LoadFarads == 2.2e-9 }},
		{name: "count", key: "analyze.segment", value: " 4096 ", origin: "--segment",
			check: func(s *Settings) bool { return s.Analyze.Segment == 4096 }},
		{name: "name verbatim", key: "audio.device", value: " hw:1 ", origin: "--device",
			check: func(s *Settings) bool { return s.Audio.Device == " hw:1 " }},
		{name: "empty origin", key: "sweep.from_hz", value: "10", origin: "",
			check: func(s *Settings) bool { return s.Origin("sweep.from_hz") == "Set" }},

		{name: "wrong unit", key: "sweep.to_hz", value: "20 kV", origin: "--to",
			wantErr: []string{`sweep.to_hz = "20 kV" (from --to): unknown unit "kV"; expected a number in Hz`, "kHz"}},
		{name: "level in dBu", key: "output.level_dbfs", value: "-20 dBu", origin: "--level",
			wantErr: []string{`output.level_dbfs = "-20 dBu" (from --level)`, "dBFS"}},
		{name: "rate not whole", key: "audio.rate", value: "44.1", origin: "--rate",
			wantErr: []string{`audio.rate = "44.1" (from --rate): 44.1 is not a whole number; expected a whole number of Hz`}},
		{name: "count with unit", key: "analyze.segment", value: "8k", origin: "--segment",
			wantErr: []string{`analyze.segment = "8k" (from --segment)`, "not a whole number", "expected a whole number"}},
		{name: "resistance in farads", key: "fixture.source_ohms", value: "10 F", origin: "--source",
			wantErr: []string{`fixture.source_ohms = "10 F" (from --source): unknown unit "F"`, "4k7"}},
		{name: "unknown key", key: "sweep.to", value: "1", origin: "--x",
			wantErr: []string{"sweep.to (from --x): no such setting", "sweep.to_hz", "did you mean sweep.to_hz?"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := Defaults()
			err := s.Set(c.key, c.value, c.origin)
			if c.wantErr == nil {
				if err != nil {
					t.Fatalf("Set: %v", err)
				}
				if !c.check(s) {
					t.Fatalf("Set(%s, %q) did not store the value: %+v", c.key, c.value, s)
				}
				if c.origin != "" && s.Origin(c.key) != c.origin {
					t.Errorf("Origin = %q, want %q", s.Origin(c.key), c.origin)
				}
				return
			}
			if err == nil {
				t.Fatal("Set succeeded, want an error")
			}
			var se *SettingError
			if !errors.As(err, &se) || se.Key != c.key || se.Origin != c.origin {
				t.Fatalf("error %#v: want a *SettingError for %s from %s", err, c.key, c.origin)
			}
			for _, frag := range c.wantErr {
				if !strings.Contains(err.Error(), frag) {
					t.Errorf("error %q lacks %q", err, frag)
				}
			}
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error %q is not one line", err)
			}
			if ok, diff := sameValues(s, Defaults()); !ok {
				t.Errorf("failed Set changed the settings: %s", diff)
			}
			if o := s.Origin(c.key); o != OriginDefault && o != "" {
				t.Errorf("failed Set recorded origin %q", o)
			}
		})
	}
}

func TestOriginAndGet(t *testing.T) {
	s := Defaults()
	if got := s.Origin("no.such"); got != "" {
		t.Errorf(`Origin("no.such") = %q, want ""`, got)
	}
	if _, err := s.Get("no.such"); err == nil {
		t.Error(`Get("no.such") succeeded`)
	}
	var zero Settings
	if err := zero.Set("audio.rate", "96k", "--rate"); err != nil || zero.Audio.Rate != 96000 || zero.Origin("audio.rate") != "--rate" {
		t.Errorf("Set on a zero Settings: %v, rate %d, origin %q", err, zero.Audio.Rate, zero.Origin("audio.rate"))
	}
}

func TestClosest(t *testing.T) {
	cases := []struct {
		word       string
		candidates []string
		want       string
	}{
		{"rat", []string{"rate", "period_ms"}, "rate"},
		{"Rate", []string{"rate", "period_ms"}, "rate"},
		{"pulse", []string{"auto", "pulseaudio", "alsa"}, "pulseaudio"},
		{"sweeep", tables, "sweep"},
		{"x", []string{"rate"}, ""},
		{"frequency", []string{"rate", "period_ms"}, ""},
	}
	for _, c := range cases {
		if got := closest(c.word, c.candidates); got != c.want {
			t.Errorf("closest(%q) = %q, want %q", c.word, got, c.want)
		}
	}
}

func TestClone(t *testing.T) {
	s := Defaults()
	if err := s.Set("audio.rate", "96k", "--rate"); err != nil {
		t.Fatal(err)
	}
	c := s.Clone()
	if err := c.Set("audio.rate", "44.1k", "--other"); err != nil {
		t.Fatal(err)
	}
	if s.Audio.Rate != 96000 || s.Origin("audio.rate") != "--rate" {
		t.Errorf("changing the clone changed the original: %d from %q", s.Audio.Rate, s.Origin("audio.rate"))
	}
	if c.Audio.Rate != 44100 || c.Origin("audio.rate") != "--other" || c.Origin("sweep.to_hz") != OriginDefault {
		t.Errorf("clone: %d from %q", c.Audio.Rate, c.Origin("audio.rate"))
	}
}
