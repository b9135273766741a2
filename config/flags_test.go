package config

import (
	"strings"
	"testing"

	"github.com/spf13/pflag"
)

// newFlags returns a flag set like main's: unit-bearing flags as strings,
// plain numbers as numbers; defaults deliberately unlike the settings'
// defaults, so that applying an unchanged flag would show.
func newFlags() (*pflag.FlagSet, map[string]string) {
	fs := pflag.NewFlagSet("tonetrace", pflag.ContinueOnError)
	fs.String("to", "1k", Doc("sweep.to_hz"))
	fs.String("from", "5", Doc("sweep.from_hz"))
	fs.Int("rate", 8000, Doc("audio.rate"))
	fs.Float64P("level", "l", -60, Doc("output.level_dbfs"))
	fs.String("device", "x", Doc("audio.device"))
	fs.String("load", "1k", Doc("fixture.load_ohms"))
	return fs, map[string]string{
		"to": "sweep.to_hz", "from": "sweep.from_hz", "rate": "audio.rate",
		"level": "output.level_dbfs", "device": "audio.device", "load": "fixture.load_ohms",
	}
}

func TestApplyFlags(t *testing.T) {
	cases := []struct {
		name    string
		args    []string
		check   func(*Settings) bool
		origins map[string]string
		wantErr []string // fragments of ApplyFlags' error
		invalid []string // fragments of Validate's error afterwards
	}{
		{name: "no flags keeps the file's say", args: nil,
			check:   func(s *Settings) bool { return s.Sweep.ToHz == 12000 && s.Audio.Rate == 48000 && s.Audio.Device == "" },
			origins: map[string]string{"sweep.to_hz": "bench.toml:2", "audio.rate": OriginDefault}},
		{name: "units in flags", args: []string{"--to", "30k", "--rate=96000", "-l", "-30", "--load", "4k7"},
			check: func(s *Settings) bool {
				return s.Sweep.ToHz == 30000 && s.Audio.Rate == 96000 && s.Output.LevelDBFS == -30 && s.Fixture.LoadOhms == 4700
			},
			origins: map[string]string{"sweep.to_hz": "--to", "audio.rate": "--rate", "output.level_dbfs": "--level", "fixture.load_ohms": "--load", "sweep.from_hz": OriginDefault}},
		{name: "flag set to its own default still counts", args: []string{"--from=5"},
			check:   func(s *Settings) bool { return s.Sweep.FromHz == 5 },
			origins: map[string]string{"sweep.from_hz": "--from"}},
		{name: "validation names the flag", args: []string{"--to", "30 kHz"},
			check:   func(s *Settings) bool { return s.Sweep.ToHz == 30000 },
			invalid: []string{"sweep.to_hz = 30000 (from --to): must be at most the Nyquist frequency 24000 Hz (audio.rate 48000 from default); lower --to or raise audio.rate"}},
		{name: "bad unit names the flag", args: []string{"--to", "20 kV", "--load", "4k7F2"},
			wantErr: []string{`fixture.load_ohms = "4k7F2" (from --load)`, `sweep.to_hz = "20 kV" (from --to): unknown unit "kV"`}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			fs, bind := newFlags()
			if err := fs.Parse(c.args); err != nil {
				t.Fatal(err)
			}
			s, err := Parse([]byte("[sweep]\nto_hz = 12000\n"), "bench.toml")
			if err != nil {
				t.Fatal(err)
			}
			err = s.ApplyFlags(fs, bind)
			if c.wantErr != nil {
				if err == nil {
					t.Fatal("ApplyFlags succeeded")
				}
				for _, f := range c.wantErr {
					if !strings.Contains(err.Error(), f) {
						t.Errorf("error %q lacks %q", err, f)
					}
				}
				return
			}
			if err != nil {
				t.Fatalf("ApplyFlags: %v", err)
			}
			if !c.check(s) {
				t.Errorf("settings after %v: %+v", c.args, *s)
			}
			for k, want := range c.origins {
				if got := s.Origin(k); got != want {
					t.Errorf("Origin(%s) = %q, want %q", k, got, want)
				}
			}
			err = s.Validate()
			if c.invalid == nil {
				if err != nil {
					t.Errorf("Validate: %v", err)
				}
				return
			}
			for _, f := range c.invalid {
				if err == nil || !strings.Contains(err.Error(), f) {
					t.Errorf("Validate() = %v, want %q", err, f)
				}
			}
		})
	}
}

func TestApplyFlagsBindingMistakes(t *testing.T) {
	fs, _ := newFlags()
	s := Defaults()
	err := s.ApplyFlags(fs, map[string]string{"to": "sweep.to", "nosuch": "audio.rate"})
	if err == nil {
		t.Fatal("ApplyFlags with bad bindings succeeded")
	}
	for _, f := range []string{`--to is bound to "sweep.to", which is not a setting`, "--nosuch is bound to audio.rate but not defined"} {
		if !strings.Contains(err.Error(), f) {
			t.Errorf("error %q lacks %q", err, f)
		}
	}
}
