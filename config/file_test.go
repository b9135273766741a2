package config

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

var update = flag.Bool("update", false, "rewrite golden files under testdata/")

func TestParseFull(t *testing.T) {
	const name = "testdata/full.toml"
	data, err := os.ReadFile(name)
	if err != nil {
		t.Fatal(err)
	}
	s, err := Parse(data, name)
	if err != nil {
		t.Fatalf("Parse: %v", err)
	}
	// Unit conversions: SI prefixes (SI Brochure, 9th ed., Table 7 — from
	// memory); RKM codes R47, 4k7, 2n2 (IEC 60062 — from memory).
	want := Settings{
		Audio:   Audio{Rate: 96000, PeriodMS: 10, Backend: "alsa", Device: "hw:CARD=USB,DEV=0", Playback: "", Capture: "hw:1", RefInput: 1, DUTInput: 2},
		Output:  Output{LevelDBFS: -30, CapDBFS: -10.5, FadeMS: 50},
		Sweep:   Sweep{FromHz: 10, ToHz: 40000, PointsPerDecade: 24, AdaptiveDB: 0.25, Method: "multitone"},
		Analyze: Analyze{Segment: 16384, PointsPerDecade: 48},
		Fixture: Fixture{SourceOhms: 0.47, LoadOhms: 4700, LoadFarads: 2.2e-9},
	}
	if ok, diff := sameValues(s, &want); !ok {
		t.Fatalf("Parse(%s): %s\ngot  %+v\nwant %+v", name, diff, *s, want)
	}
	// Every key of the file is on the line after the previous one, from
	// line 3, with a blank line and a header between tables.
	origins := map[string]int{
		"audio.rate": 3, "audio.dut_input": 10, "output.level_dbfs": 13, "output.fade_ms": 15,
		"sweep.from_hz": 18, "sweep.method": 22, "analyze.segment": 25, "fixture.load_farads": 31,
	}
	for k, line := range origins {
		if got, want := s.Origin(k), fmt.Sprintf("%s:%d", name, line); got != want {
			t.Errorf("Origin(%s) = %q, want %q", k, got, want)
		}
	}
	if s.File() != name {
		t.Errorf("File() = %q", s.File())
	}
	if err := s.Validate(); err != nil {
		t.Errorf("Validate: %v", err)
	}
}

func TestParseDotted(t *testing.T) {
	const name = "testdata/dotted.toml"
	data, err := os.ReadFile(name)
	if err != nil {
		t.Fatal(err)
	}
	s, err := Parse(data, name)
	if err != nil {
		t.Fatalf("Parse: %v", err)
	}
	if s.Audio.Rate != 44100 || s.Sweep.FromHz != 1000 || s.Sweep.ToHz != 2200 ||
		s.Fixture.LoadOhms != 1.5e6 || s.Fixture.LoadFarads != 15e-9 {
		t.Errorf("Parse(%s) = %+v", name, *s)
	}
	for k, want := range map[string]string{
		"audio.rate":          name + ":2",
		"sweep.to_hz":         name + ":3",
		"fixture.load_farads": name + ":7",
		"audio.backend":       OriginDefault,
	} {
		if got := s.Origin(k); got != want {
			t.Errorf("Origin(%s) = %q, want %q", k, got, want)
		}
	}
}

// fileProblem is one expected problem from Parse: fragments that must all
// appear in one message, and, for a *FileError, its line and column.
type fileProblem struct {
	frags     []string
	line, col int // 0: a *SettingError (its origin is among frags)
}

func TestParseErrors(t *testing.T) {
	cases := []struct {
		name string
		in   string
		want []fileProblem
	}{
		{name: "unknown key", in: "[audio]\nrate = 48000\nrat = 44100\n", want: []fileProblem{{line: 3, col: 1, frags: []string{
			`bench.toml:3:1: unknown key "rat" in [audio]`, "known keys there: rate, period_ms, backend, device, playback, capture, stimulus_outputs, ref_input, dut_input", `did you mean "rate"?`}}}},
		{name: "unknown key indented", in: "[sweep]\n  to_hz = 1000\n  tohz = 2\n", want: []fileProblem{{line: 3, col: 3, frags: []string{
			`unknown key "tohz" in [sweep]`, "from_hz, to_hz, points_per_decade", `did you mean "to_hz"?`}}}},
		{name: "keys are case-sensitive", in: "[audio]\nRate = 5\n", want: []fileProblem{{line: 2, col: 1, frags: []string{
			`unknown key "Rate" in [audio]`, `did you mean "rate"?`}}}},
		{name: "unknown table", in: "\n[sweeep]\nto_hz = 1\nfrom_hz = 2\n", want: []fileProblem{{line: 2, col: 2, frags: []string{
			`unknown table "sweeep"`, "known tables: audio, output, sweep, analyze, fixture", "did you mean [sweep]?"}}}},
		{name: "unknown subtable", in: "[audio.extra]\ny = 1\n", want: []fileProblem{{line: 1, col: 2, frags: []string{
			`unknown table "extra" in [audio]`}}}},
		{name: "unknown inline table", in: "[audio]\nx = {a = 1, b = 2}\n", want: []fileProblem{{line: 2, col: 1, frags: []string{
			`unknown table "x" in [audio]`}}}},
		{name: "key outside any table", in: "rate = 5\n", want: []fileProblem{{line: 1, col: 1, frags: []string{
			`unknown key "rate" outside any table`, "rate belongs under [audio]"}}}},
		{name: "quoted dotted key is one key", in: "\"audio.rate\" = 5\n", want: []fileProblem{{line: 1, col: 1, frags: []string{
			`unknown key "audio.rate" outside any table`}}}},
		{name: "table as value", in: "audio = 5\n", want: []fileProblem{{line: 1, col: 1, frags: []string{
			"audio must be a table of settings such as [audio], not a value"}}}},
		{name: "setting as table", in: "[audio.rate]\n", want: []fileProblem{{line: 1, col: 2, frags: []string{
			"audio.rate is a setting, not a table"}}}},
		{name: "array of tables", in: "[[audio]]\nrate = 1\n", want: []fileProblem{{line: 1, col: 3, frags: []string{
			"[[audio]] is an array of tables", "[audio]"}}}},
		{name: "syntax: unclosed header", in: "[audio]\nrate = 48000\n\n[sweep\nto_hz = 1000\n", want: []fileProblem{{line: 4, col: 7, frags: []string{
			"bench.toml:4:7: invalid TOML", "']'"}}}},
		{name: "syntax: missing value", in: "[audio]\nrate =\n", want: []fileProblem{{line: 2, col: 7, frags: []string{
			"invalid TOML", "start of value"}}}},
		{name: "syntax: duplicate key", in: "[audio]\nrate = 1\nrate = 2\n", want: []fileProblem{{line: 3, col: 1, frags: []string{
			"invalid TOML", "already defined"}}}},
		{name: "syntax: unquoted text", in: "[audio]\nbackend = alsa\n", want: []fileProblem{{line: 2, col: 11, frags: []string{
			"invalid TOML"}}}},
		{name: "wrong unit", in: "[sweep]\nto_hz = \"20 kV\"\n", want: []fileProblem{{frags: []string{
			`sweep.to_hz = "20 kV" (from bench.toml:2): unknown unit "kV"; expected a number in Hz`, `"1.5 kHz"`}}}},
		{name: "dBu for a dBFS level", in: "[output]\nlevel_dbfs = \"-20 dBu\"\n", want: []fileProblem{{frags: []string{
			`output.level_dbfs = "-20 dBu" (from bench.toml:2)`, "dBFS", "calibration"}}}},
		{name: "wrong unit for a resistance", in: "[fixture]\n\nload_ohms = \"47 kF\"\n", want: []fileProblem{{frags: []string{
			`fixture.load_ohms = "47 kF" (from bench.toml:3): unknown unit "kF"`, "4k7", "R47"}}}},
		{name: "boolean", in: "[audio]\nrate = true\n", want: []fileProblem{{frags: []string{
			"audio.rate = true (from bench.toml:2): a boolean is the wrong type", "whole number of Hz"}}}},
		{name: "array", in: "[audio]\nrate = [48000]\n", want: []fileProblem{{frags: []string{
			"audio.rate = […] (from bench.toml:2): an array is the wrong type"}}}},
		{name: "date", in: "[fixture]\nload_ohms = 1979-05-27\n", want: []fileProblem{{frags: []string{
			"fixture.load_ohms = 1979-05-27 (from bench.toml:2): a date or time is the wrong type"}}}},
		{name: "number for a name", in: "[audio]\ndevice = 5\n", want: []fileProblem{{frags: []string{
			"audio.device = 5 (from bench.toml:2): a number where text is expected", "in quotes"}}}},
		{name: "fractional rate", in: "[audio]\nrate = 48000.5\n", want: []fileProblem{{frags: []string{
			"audio.rate = 48000.5 (from bench.toml:2): 48000.5 is not a whole number"}}}},
		{name: "TOML infinity", in: "[sweep]\nto_hz = inf\n", want: []fileProblem{{frags: []string{
			"sweep.to_hz = inf (from bench.toml:2): inf is not a finite number"}}}},
		{name: "every problem reported", in: "[audio]\nrat = 1\nrate = \"1 kV\"\n[bogus]\nx = 1\n[output]\nfade_ms = \"3 days\"\n", want: []fileProblem{
			{line: 2, col: 1, frags: []string{`unknown key "rat"`}},
			{frags: []string{`audio.rate = "1 kV" (from bench.toml:3)`}},
			{line: 4, col: 2, frags: []string{`unknown table "bogus"`}},
			{frags: []string{`output.fade_ms = "3 days" (from bench.toml:7)`, "20 ms"}},
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s, err := Parse([]byte(c.in), "bench.toml")
			if err == nil {
				t.Fatalf("Parse succeeded: %+v", s)
			}
			if s != nil {
				t.Error("Parse returned settings with an error")
			}
			var list []error
			if j, ok := err.(interface{ Unwrap() []error }); ok {
				list = j.Unwrap()
			} else {
				list = []error{err}
			}
			if len(list) != len(c.want) {
				t.Fatalf("got %d problems, want %d:\n%v", len(list), len(c.want), err)
			}
			for i, w := range c.want {
				e := list[i]
				if w.line > 0 {
					var fe *FileError
					if !errors.As(e, &fe) {
						t.Fatalf("problem %d %q is %T, want *FileError", i, e, e)
					}
					if fe.Path != "bench.toml" || fe.Line != w.line || fe.Column != w.col {
						t.Errorf("problem %d at %s:%d:%d, want bench.toml:%d:%d", i, fe.Path, fe.Line, fe.Column, w.line, w.col)
					}
					if !strings.HasPrefix(e.Error(), fmt.Sprintf("bench.toml:%d:%d: ", w.line, w.col)) {
						t.Errorf("problem %d %q does not start with its position", i, e)
					}
				} else {
					var se *SettingError
					if !errors.As(e, &se) {
						t.Fatalf("problem %d %q is %T, want *SettingError", i, e, e)
					}
					if !strings.HasPrefix(se.Origin, "bench.toml:") {
						t.Errorf("problem %d origin %q", i, se.Origin)
					}
				}
				for _, f := range w.frags {
					if !strings.Contains(e.Error(), f) {
						t.Errorf("problem %d %q lacks %q", i, e, f)
					}
				}
				if strings.Contains(e.Error(), "\n") {
					t.Errorf("problem %d %q is not one line", i, e)
				}
			}
		})
	}
}

// TestParseUnknownKnownList checks the Known field of unknown-key errors.
func TestParseUnknownKnownList(t *testing.T) {
	_, err := Parse([]byte("[fixture]\nload = 1\n"), "f.toml")
	var fe *FileError
	if !errors.As(err, &fe) {
		t.Fatalf("err = %v", err)
	}
	if fe.Key != "fixture.load" || strings.Join(fe.Known, ",") != "source_ohms,load_ohms,load_farads" {
		t.Errorf("FileError{Key: %q, Known: %q}", fe.Key, fe.Known)
	}
	var de *toml.DecodeError
	_, err = Parse([]byte("[x"), "f.toml")
	if !errors.As(err, &de) {
		t.Errorf("syntax error %v does not wrap *toml.DecodeError", err)
	}
}

// TestParseExampleFiles reads the bad examples under testdata/.
func TestParseExampleFiles(t *testing.T) {
	cases := []struct {
		file  string
		parse []string // fragments of Parse's error; nil: parses
		valid []string // fragments of Validate's error; nil: valid
	}{
		{file: "full.toml"},
		{file: "dotted.toml"},
		{file: "bad_unknown.toml", parse: []string{"testdata/bad_unknown.toml:3:1: unknown key \"rat\" in [audio]"}},
		{file: "bad_syntax.toml", parse: []string{"testdata/bad_syntax.toml:4:7: invalid TOML"}},
		{file: "bad_units.toml", parse: []string{`sweep.to_hz = "20 kV" (from testdata/bad_units.toml:2)`, `output.level_dbfs = "-20 dBu" (from testdata/bad_units.toml:5)`}},
		{file: "bad_range.toml", valid: []string{
			"audio.dut_input = 1 (from default): must differ from audio.ref_input 1 (from testdata/bad_range.toml:3)",
			"sweep.to_hz = 30000 (from testdata/bad_range.toml:6): must be at most the Nyquist frequency 22050 Hz (audio.rate 44100 from testdata/bad_range.toml:2)",
		}},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			s, err := Load(filepath.Join("testdata", c.file))
			if c.parse != nil {
				if err == nil {
					t.Fatal("Load succeeded")
				}
				for _, f := range c.parse {
					if !strings.Contains(err.Error(), f) {
						t.Errorf("error %q lacks %q", err, f)
					}
				}
				return
			}
			if err != nil {
				t.Fatalf("Load: %v", err)
			}
			err = s.Validate()
			if c.valid == nil {
				if err != nil {
					t.Fatalf("Validate: %v", err)
				}
				return
			}
			if err == nil {
				t.Fatal("Validate succeeded")
			}
			for _, f := range c.valid {
				if !strings.Contains(err.Error(), f) {
					t.Errorf("error %q lacks %q", err, f)
				}
			}
		})
	}
}

func TestParseBOMAndCRLF(t *testing.T) {
	s, err := Parse([]byte("\ufeff[audio]\r\nrate = 44100\r\n"), "win.toml")
	if err != nil {
		t.Fatalf("Parse: %v", err)
	}
	if s.Audio.Rate != 44100 || s.Origin("audio.rate") != "win.toml:2" {
		t.Errorf("rate %d from %q", s.Audio.Rate, s.Origin("audio.rate"))
	}
}

func TestLoad(t *testing.T) {
	dir := t.TempDir()
	t.Setenv("XDG_CONFIG_HOME", filepath.Join(dir, "cfg"))
	t.Setenv("HOME", dir)

	t.Run("explicit missing file", func(t *testing.T) {
		_, err := Load(filepath.Join(dir, "nope.toml"))
		if err == nil || !errors.Is(err, os.ErrNotExist) || !strings.Contains(err.Error(), "nope.toml") {
			t.Fatalf("Load(missing) = %v, want a not-exist error naming the file", err)
		}
	})
	t.Run("default path missing", func(t *testing.T) {
		s, err := Load("")
		if err != nil {
			t.Fatalf("Load(\"\") = %v", err)
		}
		if ok, diff := sameValues(s, Defaults()); !ok || s.File() != "" {
			t.Errorf("Load(\"\") is not the defaults: %s, file %q", diff, s.File())
		}
	})
	t.Run("default path present", func(t *testing.T) {
		p, err := DefaultPath()
		if err != nil {
			t.Fatal(err)
		}
		if want := filepath.Join(dir, "cfg", "tonetrace", "config.toml"); p != want {
			t.Fatalf("DefaultPath() = %q, want %q", p, want)
		}
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte("[sweep]\n\nto_hz = \"15k\"\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		s, err := Load("")
		if err != nil {
			t.Fatalf("Load(\"\"): %v", err)
		}
		if s.Sweep.ToHz != 15000 || s.Origin("sweep.to_hz") != p+":3" || s.File() != p {
			t.Errorf("to_hz %v from %q, file %q", s.Sweep.ToHz, s.Origin("sweep.to_hz"), s.File())
		}
	})
	t.Run("unreadable path", func(t *testing.T) {
		if _, err := Load(dir); err == nil {
			t.Error("Load(a directory) succeeded")
		}
	})
}

func TestWriteDefault(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "new", "sub", "config.toml")
	if err := WriteDefault(path); err != nil {
		t.Fatalf("WriteDefault: %v", err)
	}
	s, err := Load(path)
	if err != nil {
		t.Fatalf("Load(written default): %v", err)
	}
	if ok, diff := sameValues(s, Defaults()); !ok {
		t.Errorf("default file does not round-trip: %s", diff)
	}
	// Every key is written, so every origin is a line of the file.
	for _, k := range Keys() {
		if o := s.Origin(k); !strings.HasPrefix(o, path+":") {
			t.Errorf("Origin(%s) = %q, want a line of %s", k, o, path)
		}
	}
	err = WriteDefault(path)
	if err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Errorf("second WriteDefault = %v, want an already-exists error", err)
	}
	if err := WriteDefault(filepath.Join(path, "x.toml")); err == nil {
		t.Error("WriteDefault under a file succeeded")
	}
}

// TestDefaultGolden pins the default settings file; run with -update to
// rewrite testdata/default.golden.toml after a deliberate change.
func TestDefaultGolden(t *testing.T) {
	var b bytes.Buffer
	if err := Defaults().WriteTOML(&b); err != nil {
		t.Fatal(err)
	}
	const golden = "testdata/default.golden.toml"
	if *update {
		if err := os.WriteFile(golden, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(b.Bytes(), want) {
		t.Errorf("WriteTOML(Defaults()) differs from %s; run go test -update if the change is deliberate\ngot:\n%s", golden, b.String())
	}
}

// randomSettings draws settings with every field changed, including
// values out of range and names with quotes, escapes and non-ASCII text.
func randomSettings(rng *rand.Rand) *Settings {
	s := Defaults()
	names := []string{"", "hw:1", `quote " and \ backslash`, "tab\there", "line\nbreak", "Ünïcødé 🎧", "\x01\x7f", "'single'"}
	for i := range specs {
		sp := &specs[i]
		switch {
		case sp.str != nil:
			*sp.str(s) = names[rng.IntN(len(names))]
		case sp.n != nil:
			*sp.n(s) = int(rng.Int64N(1<<40)) - 1<<39
		default:
			v := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(40)-20))
			if rng.IntN(5) == 0 {
				v = math.Round(v)
			}
			*sp.f(s) = v
		}
	}
	return s
}

func TestWriteTOMLRoundTrip(t *testing.T) {
	const trials = 300
	rng := rand.New(rand.NewPCG(3, 4))
	for i := range trials {
		s := randomSettings(rng)
		var b bytes.Buffer
		if err := s.WriteTOML(&b); err != nil {
			t.Fatal(err)
		}
		got, err := Parse(b.Bytes(), "rt.toml")
		if err != nil {
			t.Fatalf("trial %d: Parse(WriteTOML): %v\n%s", i, err, b.String())
		}
		if ok, diff := sameValues(got, s); !ok {
			t.Fatalf("trial %d: round trip differs: %s", i, diff)
		}
	}
}

func TestDescribe(t *testing.T) {
	s, err := Parse([]byte("[audio]\nrate = 96000\n"), "my.toml")
	if err != nil {
		t.Fatal(err)
	}
	if err := s.Set("sweep.to_hz", "30k", "--to"); err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := s.Describe(&b); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{
		"# settings file: my.toml\n",
		"[audio]\nrate             = 96000   # my.toml:2\n",
		"to_hz             = 30000    # 30 kHz, --to\n",
		"load_farads = 1e-10  # 100 pF, default\n",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("Describe lacks %q:\n%s", want, out)
		}
	}
	// The description is itself a settings file with the same values.
	back, err := Parse(b.Bytes(), "described.toml")
	if err != nil {
		t.Fatalf("Parse(Describe): %v", err)
	}
	if ok, diff := sameValues(back, s); !ok {
		t.Errorf("Describe does not read back: %s", diff)
	}
	if err := Defaults().Describe(failWriter{}); err == nil {
		t.Error("Describe to a failing writer succeeded")
	}
	if err := Defaults().WriteTOML(failWriter{}); err == nil {
		t.Error("WriteTOML to a failing writer succeeded")
	}
}

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

func TestParseLimits(t *testing.T) {
	big := bytes.Repeat([]byte("# padding\n"), MaxFileSize/10+1)
	_, err := Parse(big, "big.toml")
	var fe *FileError
	if !errors.As(err, &fe) || fe.Line != 1 || !strings.Contains(err.Error(), "too large for a settings file") {
		t.Errorf("Parse(%d bytes) = %v", len(big), err)
	}
	var b strings.Builder
	for i := range 100 {
		fmt.Fprintf(&b, "k%d = 1\n", i)
	}
	list := unjoin(func() error { _, err := Parse([]byte(b.String()), "many.toml"); return err }())
	if len(list) != maxProblems+1 || !strings.HasPrefix(list[maxProblems].Error(), "many.toml:21:1: more problems") {
		t.Errorf("100 unknown keys gave %d problems, the last %v", len(list), list[len(list)-1])
	}
}
