package config

import (
	"math"
	"strings"
	"testing"
)

// set is one value applied with Settings.Set.
type set struct{ key, value, origin string }

// TestValidate covers every validation rule. Each case starts from the
// defaults, overlays a settings file (origins "bench.toml:LINE") and/or
// Set calls (origins such as "--to"), and lists the errors Validate must
// return: for each, fragments that must all appear in one message — the
// setting and value, the allowed range, and where the value came from.
//
// The limits are tonetrace's own choices, documented on each field; the
// Nyquist rule is the sampling theorem, a sampled signal carries
// frequencies only below fs/2 (Shannon 1949 — from memory).
func TestValidate(t *testing.T) {
	cases := []struct {
		name string
		file string
		sets []set
		want [][]string
	}{
		{name: "defaults"},
		{name: "all limits inclusive", sets: []set{
			{"audio.rate", "8000", "--rate"}, {"sweep.to_hz", "4000", "--to"},
			{"audio.period_ms", "500", "--period"}, {"output.level_dbfs", "-120", "--level"},
			{"output.cap_dbfs", "0", "--cap"}, {"output.fade_ms", "2000", "--fade"},
			{"sweep.from_hz", "1", "--from"}, {"sweep.points_per_decade", "200", "--ppd"},
			{"sweep.adaptive_db", "10", "--adaptive"}, {"analyze.segment", "1048576", "--segment"},
			{"analyze.points_per_decade", "200", "--appd"}, {"fixture.source_ohms", "1M", "--source"},
			{"fixture.load_ohms", "1", "--load"}, {"fixture.load_farads", "1u", "--cload"},
			{"audio.ref_input", "64", "--ref"}, {"audio.dut_input", "63", "--dut"},
		}},
		{name: "rate too low (flag)", sets: []set{{"audio.rate", "4000", "--rate"}},
			want: [][]string{{"audio.rate = 4000 (from --rate): must be between 8000 and 384000 Hz", "44100"}}},
		{name: "rate too high (file)", file: "[audio]\nrate = \"400k\"\n",
			want: [][]string{{"audio.rate = 400000 (from bench.toml:2): must be between 8000 and 384000 Hz"}}},
		{name: "period too short", sets: []set{{"audio.period_ms", "4.9", "--period"}},
			want: [][]string{{"audio.period_ms = 4.9 (from --period): must be between 5 and 500 ms"}}},
		{name: "period too long (file)", file: "[audio]\n\nperiod_ms = \"1 s\"\n",
			want: [][]string{{"audio.period_ms = 1000 (from bench.toml:3): must be between 5 and 500 ms"}}},
		{name: "unknown backend", sets: []set{{"audio.backend", "pulse", "--backend"}},
			want: [][]string{{`audio.backend = "pulse" (from --backend): must be one of auto, pulseaudio, alsa, jack, null`, `did you mean "pulseaudio"?`}}},
		{name: "backend case (file)", file: "[audio]\nbackend = \"ALSA\"\n",
			want: [][]string{{`audio.backend = "ALSA" (from bench.toml:2): must be one of`, `did you mean "alsa"?`}}},
		{name: "input zero", sets: []set{{"audio.ref_input", "0", "--ref"}},
			want: [][]string{{"audio.ref_input = 0 (from --ref): must be between 1 and 64", "counted from 1"}}},
		{name: "input too high", sets: []set{{"audio.dut_input", "65", "--dut"}},
			want: [][]string{{"audio.dut_input = 65 (from --dut): must be between 1 and 64"}}},
		{name: "inputs equal", file: "[audio]\nref_input = 1\n",
			want: [][]string{{"audio.dut_input = 1 (from default): must differ from audio.ref_input 1 (from bench.toml:2)", "loopback"}}},
		{name: "level below floor", sets: []set{{"output.level_dbfs", "-121", "--level"}},
			want: [][]string{{"output.level_dbfs = -121 (from --level): must be between -120 and 0 dBFS"}}},
		{name: "level above full scale", sets: []set{{"output.level_dbfs", "+1 dBFS", "--level"}},
			want: [][]string{{"output.level_dbfs = 1 (from --level): must be between -120 and 0 dBFS"}}},
		{name: "level above cap", sets: []set{{"output.level_dbfs", "-3", "--level"}},
			want: [][]string{{"output.level_dbfs = -3 (from --level): must be at most output.cap_dbfs -6 dBFS (from default); lower --level or raise output.cap_dbfs"}}},
		{name: "level above cap (file)", file: "[output]\nlevel_dbfs = -10\ncap_dbfs = -12\n",
			want: [][]string{{"output.level_dbfs = -10 (from bench.toml:2): must be at most output.cap_dbfs -12 dBFS (from bench.toml:3)"}}},
		{name: "cap above full scale", sets: []set{{"output.cap_dbfs", "3", "--cap"}},
			want: [][]string{{"output.cap_dbfs = 3 (from --cap): must be between -120 and 0 dBFS", "digital full scale"}}},
		{name: "cap below floor", sets: []set{{"output.cap_dbfs", "-130", "--cap"}},
			want: [][]string{{"output.cap_dbfs = -130 (from --cap): must be between -120 and 0 dBFS"}}},
		{name: "negative fade", sets: []set{{"output.fade_ms", "-1", "--fade"}},
			want: [][]string{{"output.fade_ms = -1 (from --fade): must be between 0 and 2000 ms"}}},
		{name: "long fade", sets: []set{{"output.fade_ms", "2.5 s", "--fade"}},
			want: [][]string{{"output.fade_ms = 2500 (from --fade): must be between 0 and 2000 ms"}}},
		{name: "from below 1 Hz", sets: []set{{"sweep.from_hz", "0.5", "--from"}},
			want: [][]string{{"sweep.from_hz = 0.5 (from --from): must be between 1 and 192000 Hz"}}},
		{name: "to not above from", sets: []set{{"sweep.from_hz", "1k", "--from"}, {"sweep.to_hz", "1000", "--to"}},
			want: [][]string{{"sweep.to_hz = 1000 (from --to): must be above sweep.from_hz 1000 Hz (from --from); raise --to or lower --from"}}},
		{name: "to above Nyquist (flag)", sets: []set{{"sweep.to_hz", "30000", "--to"}},
			want: [][]string{{"sweep.to_hz = 30000 (from --to): must be at most the Nyquist frequency 24000 Hz (audio.rate 48000 from default); lower --to or raise audio.rate"}}},
		{name: "to above Nyquist (file)", file: "[audio]\nrate = 44100\n\n[sweep]\nto_hz = \"30k\"\n",
			want: [][]string{{"sweep.to_hz = 30000 (from bench.toml:5): must be at most the Nyquist frequency 22050 Hz (audio.rate 44100 from bench.toml:2); lower sweep.to_hz or raise audio.rate"}}},
		{name: "to at Nyquist", sets: []set{{"sweep.to_hz", "24k", "--to"}}},
		{name: "to above every rate", sets: []set{{"sweep.to_hz", "200k", "--to"}},
			want: [][]string{{"sweep.to_hz = 200000 (from --to): must be between 1 and 192000 Hz"}}},
		{name: "points per decade zero", sets: []set{{"sweep.points_per_decade", "0", "--ppd"}},
			want: [][]string{{"sweep.points_per_decade = 0 (from --ppd): must be between 1 and 200"}}},
		{name: "points per decade too many", sets: []set{{"sweep.points_per_decade", "201", "--ppd"}},
			want: [][]string{{"sweep.points_per_decade = 201 (from --ppd): must be between 1 and 200"}}},
		{name: "adaptive too fine", sets: []set{{"sweep.adaptive_db", "0.005", "--adaptive"}},
			want: [][]string{{"sweep.adaptive_db = 0.005 (from --adaptive): must be 0 (off) or between 0.01 and 10 dB"}}},
		{name: "adaptive too coarse", sets: []set{{"sweep.adaptive_db", "11 dB", "--adaptive"}},
			want: [][]string{{"sweep.adaptive_db = 11 (from --adaptive): must be 0 (off) or between 0.01 and 10 dB"}}},
		{name: "adaptive negative", sets: []set{{"sweep.adaptive_db", "-1", "--adaptive"}},
			want: [][]string{{"sweep.adaptive_db = -1 (from --adaptive): must be 0 (off) or between 0.01 and 10 dB"}}},
		{name: "unknown method", file: "[sweep]\nmethod = \"multi\"\n",
			want: [][]string{{`sweep.method = "multi" (from bench.toml:2): must be one of steps, multitone`, `did you mean "multitone"?`}}},
		{name: "segment too short", sets: []set{{"analyze.segment", "63", "--segment"}},
			want: [][]string{{"analyze.segment = 63 (from --segment): must be between 64 and 1048576"}}},
		{name: "segment too long", sets: []set{{"analyze.segment", "1048577", "--segment"}},
			want: [][]string{{"analyze.segment = 1048577 (from --segment): must be between 64 and 1048576"}}},
		{name: "analyze points negative", sets: []set{{"analyze.points_per_decade", "-1", "--appd"}},
			want: [][]string{{"analyze.points_per_decade = -1 (from --appd): must be 0 (off) or between 1 and 200"}}},
		{name: "analyze points too many", sets: []set{{"analyze.points_per_decade", "201", "--appd"}},
			want: [][]string{{"analyze.points_per_decade = 201 (from --appd): must be 0 (off) or between 1 and 200"}}},
		{name: "negative source", sets: []set{{"fixture.source_ohms", "-1", "--source"}},
			want: [][]string{{"fixture.source_ohms = -1 (from --source): must be between 0 Ω and 1 MΩ"}}},
		{name: "huge source", sets: []set{{"fixture.source_ohms", "2M", "--source"}},
			want: [][]string{{"fixture.source_ohms = 2000000 (from --source): must be between 0 Ω and 1 MΩ"}}},
		{name: "load below an ohm", file: "[fixture]\nload_ohms = \"R47\"\n",
			want: [][]string{{"fixture.load_ohms = 0.47 (from bench.toml:2): must be between 1 Ω and 1 TΩ"}}},
		{name: "load too high", sets: []set{{"fixture.load_ohms", "2e12", "--load"}},
			want: [][]string{{"fixture.load_ohms = 2000000000000 (from --load): must be between 1 Ω and 1 TΩ"}}},
		{name: "negative capacitance", sets: []set{{"fixture.load_farads", "-1p", "--cload"}},
			want: [][]string{{"fixture.load_farads = -1e-12 (from --cload): must be between 0 F and 1 µF"}}},
		{name: "capacitance too high", sets: []set{{"fixture.load_farads", "2u", "--cload"}},
			want: [][]string{{"fixture.load_farads = 2e-06 (from --cload): must be between 0 F and 1 µF"}}},
		{name: "bad rate skips the Nyquist rule", sets: []set{{"audio.rate", "1k", "--rate"}},
			want: [][]string{{"audio.rate = 1000 (from --rate)"}}},
		{name: "several problems at once", file: "[audio]\nrate = 1000\n[output]\ncap_dbfs = 6\n",
			sets: []set{{"sweep.method", "chirp", "--method"}},
			want: [][]string{
				{"audio.rate = 1000 (from bench.toml:2)"},
				{"output.cap_dbfs = 6 (from bench.toml:4)"},
				{`sweep.method = "chirp" (from --method)`},
			}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := Defaults()
			if c.file != "" {
				var err error
				if s, err = Parse([]byte(c.file), "bench.toml"); err != nil {
					t.Fatalf("Parse: %v", err)
				}
			}
			for _, st := range c.sets {
				if err := s.Set(st.key, st.value, st.origin); err != nil {
					t.Fatalf("Set: %v", err)
				}
			}
			errs := settingErrors(t, s.Validate())
			if len(errs) != len(c.want) {
				t.Fatalf("got %d errors, want %d:\n%v", len(errs), len(c.want), s.Validate())
			}
			for i, frags := range c.want {
				msg := errs[i].Error()
				for _, f := range frags {
					if !strings.Contains(msg, f) {
						t.Errorf("error %d %q lacks %q", i, msg, f)
					}
				}
				if strings.Contains(msg, "\n") {
					t.Errorf("error %q is not one line", msg)
				}
				if errs[i].Key == "" || errs[i].Value == "" || errs[i].Origin == "" || errs[i].Allowed == "" {
					t.Errorf("error %#v lacks a field", errs[i])
				}
			}
		})
	}
}

// TestValidateNyquistMessage pins the exact message of the design brief.
func TestValidateNyquistMessage(t *testing.T) {
	s := Defaults()
	if err := s.Set("sweep.to_hz", "30000", "--to"); err != nil {
		t.Fatal(err)
	}
	const want = "sweep.to_hz = 30000 (from --to): must be at most the Nyquist frequency 24000 Hz (audio.rate 48000 from default); lower --to or raise audio.rate"
	if err := s.Validate(); err == nil || err.Error() != want {
		t.Errorf("Validate() = %v\nwant          %s", err, want)
	}
}

// TestValidateNaN checks that values assigned directly, bypassing the
// parsers, are still checked.
func TestValidateNaN(t *testing.T) {
	s := Defaults()
	s.Sweep.FromHz = math.NaN()
	s.Output.FadeMS = math.Inf(1)
	errs := settingErrors(t, s.Validate())
	if len(errs) != 2 || errs[0].Key != "output.fade_ms" || errs[1].Key != "sweep.from_hz" {
		t.Fatalf("Validate() = %v, want errors for output.fade_ms and sweep.from_hz", s.Validate())
	}
	if !strings.Contains(errs[1].Error(), "sweep.from_hz = nan (from default)") {
		t.Errorf("error %q", errs[1])
	}
}
