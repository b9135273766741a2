package device

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"strings"
	"testing"
	"time"

	"tonetrace/audio"
)

// nullConfig is a duplex stream on miniaudio's null backend: no server, no
// hardware, silence in, output discarded, paced at the nominal rate.
func nullConfig() Config {
	cfg := DefaultConfig()
	cfg.Backend = BackendNull
	cfg.Output = audio.OutputConfig{LevelDBFS: -20, CapDBFS: -6, FadeMS: 20, MuteMS: 5}
	return cfg
}

// TestNullBackend opens a duplex stream on the null backend, queues a
// stimulus, reads frames for half a second and checks the counters advance
// at about the nominal rate, every stimulus sample is played, indices are
// continuous, Close is clean and idempotent, and no goroutine is left over.
func TestNullBackend(t *testing.T) {
	before := runtime.NumGoroutine()
	s, err := Open(nullConfig())
	if err != nil {
		t.Fatal(err)
	}
	if s.Backend() != BackendNull || !s.Duplex() || s.Rate() != 48000 {
		t.Fatalf("backend %q duplex %v rate %d", s.Backend(), s.Duplex(), s.Rate())
	}
	if c := s.Conversions(); len(c) != 0 {
		t.Errorf("null backend reports conversions: %q", c)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	stim := make([]float64, 4800) // 100 ms of 1 kHz
	for i := range stim {
		stim[i] = math.Sin(2 * math.Pi * float64(i) / 48)
	}
	if n, err := s.Write(ctx, stim); err != nil || n != len(stim) {
		t.Fatalf("Write = %d, %v", n, err)
	}
	s.Finish()
	dst := [][]float64{make([]float64, 1024), make([]float64, 1024)}
	var next int64
	start := time.Now()
	for next < 24000 {
		n, first, err := s.Read(ctx, dst)
		if err != nil {
			t.Fatalf("Read at %d: %v", next, err)
		}
		if first != next {
			t.Fatalf("Read: first %d, want %d", first, next)
		}
		for i := 0; i < n; i++ {
			if dst[0][i] != 0 || dst[1][i] != 0 {
				t.Fatalf("null capture frame %d is not silent", first+int64(i))
			}
		}
		next += int64(n)
	}
	elapsed := time.Since(start)
	st := s.Stats()
	// The null device is paced by the clock: 24000 frames take about
	// 0.5 s (loose bounds: CI machines are busy).
	if elapsed < 300*time.Millisecond || elapsed > 3*time.Second {
		t.Errorf("24000 frames in %v; the null device should take about 0.5 s", elapsed)
	}
	if st.StimulusFrames != int64(len(stim)) || st.PlayFrames < st.CaptureFrames-int64(s.Lead()) || st.Dropped != 0 || st.Underruns != 0 {
		t.Fatalf("stats %+v", st)
	}
	if err := s.Close(); err != nil {
		t.Fatalf("Close: %v", err)
	}
	if err := s.Close(); err != nil {
		t.Fatalf("second Close: %v", err)
	}
	if _, _, err := s.Read(ctx, dst); !errors.Is(err, audio.ErrClosed) {
		t.Fatalf("Read after Close = %v, want ErrClosed", err)
	}
	if _, err := s.Write(ctx, stim); !errors.Is(err, audio.ErrClosed) {
		t.Fatalf("Write after Close = %v, want ErrClosed", err)
	}
	if g := s.Output().Gain(); g != 0 {
		t.Fatalf("gain %v after Close, want 0 (faded out)", g)
	}
	waitGoroutines(t, before)
}

// TestNullSeparate opens the null backend as two devices with two
// callbacks and checks both directions run.
func TestNullSeparate(t *testing.T) {
	before := runtime.NumGoroutine()
	cfg := nullConfig()
	cfg.Separate = true
	s, err := Open(cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if s.Duplex() {
		t.Fatal("Separate stream says it is duplex")
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	dst := [][]float64{make([]float64, 512), make([]float64, 512)}
	var got int
	for got < 4800 {
		n, _, err := s.Read(ctx, dst)
		if err != nil {
			t.Fatal(err)
		}
		got += n
	}
	if st := s.Stats(); st.PlayFrames == 0 || st.CaptureFrames < 4800 {
		t.Fatalf("stats %+v: both devices should run", st)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	waitGoroutines(t, before)
}

// waitGoroutines fails when more goroutines run than before, allowing a
// moment for the runtime to retire finished ones.
func waitGoroutines(t *testing.T, before int) {
	t.Helper()
	deadline := time.Now().Add(2 * time.Second)
	for runtime.NumGoroutine() > before {
		if time.Now().After(deadline) {
			buf := make([]byte, 1<<16)
			t.Fatalf("%d goroutines after Close, %d before:\n%s", runtime.NumGoroutine(), before, buf[:runtime.Stack(buf, true)])
		}
		time.Sleep(10 * time.Millisecond)
	}
}

func TestList(t *testing.T) {
	devs, err := List(BackendNull)
	if err != nil {
		t.Fatal(err)
	}
	var play, capt int
	for _, d := range devs {
		switch d.Kind {
		case "playback":
			play++
		case "capture":
			capt++
		}
		if d.Backend != BackendNull || d.Name == "" {
			t.Errorf("device %v: want backend null and a name", d)
		}
	}
	if play == 0 || capt == 0 {
		t.Fatalf("null backend lists %d playback and %d capture devices, want both", play, capt)
	}
	t.Log(devs)
}

func TestOpenErrors(t *testing.T) {
	with := func(f func(*Config)) Config { c := nullConfig(); f(&c); return c }
	tests := []struct {
		name string
		cfg  Config
		want string
	}{
		{"unknown backend", with(func(c *Config) { c.Backend = "beeper" }), "unknown backend"},
		{"no such device", with(func(c *Config) { c.Playback = "no-such-sink" }), "no null playback device named"},
		{"index out of range", with(func(c *Config) { c.Capture = "7" }), "no null capture device named"},
		{"rate", with(func(c *Config) { c.Rate = 1000 }), "sample rate"},
		{"period too short", with(func(c *Config) { c.PeriodMS = 2 }), "period"},
		{"periods", with(func(c *Config) { c.Periods = 40 }), "periods"},
		{"capture buffer", with(func(c *Config) { c.CaptureMS = 10 }), "capture buffer"},
		{"level above cap", with(func(c *Config) { c.Output.LevelDBFS = 0 }), "above the cap"},
		{"routing", with(func(c *Config) { c.Routing.Reference = 5 }), "reference input 5"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s, err := Open(tc.cfg)
			if err == nil {
				s.Close()
				t.Fatal("Open succeeded")
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %q does not mention %q", err, tc.want)
			}
			t.Log(err)
		})
	}
}

// TestDeviceByIndexAndDescription opens the null devices by index and by
// description.
func TestDeviceByIndexAndDescription(t *testing.T) {
	cfg := nullConfig()
	cfg.Playback, cfg.Capture = "0", "NULL Capture Device"
	s, err := Open(cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if s.Playback().Index != 0 || s.Capture().Description != "NULL Capture Device" {
		t.Fatalf("opened %v and %v", s.Playback(), s.Capture())
	}
}

// TestProcessBytesNoAllocs checks the device callback body allocates
// nothing (STYLE.md: AllocsPerRun on the callback path), for duplex,
// capture-only and playback-only calls.
func TestProcessBytesNoAllocs(t *testing.T) {
	core, err := audio.NewCore(audio.CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, PeriodFrames: 960})
	if err != nil {
		t.Fatal(err)
	}
	core.Start()
	ctx := context.Background()
	stim := make([]float64, 20000)
	if _, err := core.Write(ctx, stim); err != nil {
		t.Fatal(err)
	}
	out := make([]byte, 960*2*4)
	in := make([]byte, 960*2*4)
	allocs := testing.AllocsPerRun(100, func() {
		processBytes(core, out, in, 960)
		processBytes(core, nil, in, 960)
		processBytes(core, out, nil, 960)
	})
	if allocs != 0 {
		t.Fatalf("%v allocations per callback, want 0", allocs)
	}
}

// A report as miniaudio v0.11.24 logs it after opening a duplex device
// (format of ma_device_init in miniaudio.h), with a 16-bit mono capture
// device at 44.1 kHz and a 6-channel playback device.
var sampleReport = []string{
	"[PulseAudio]",
	"  Built-in Mic (Capture)",
	"    Format:      16-bit Signed Integer -> 32-bit IEEE Floating Point",
	"    Channels:    1 -> 2",
	"    Sample Rate: 44100 -> 48000",
	"    Buffer Size: 882*3 (2646)",
	"    Conversion:",
	"      Pre Format Conversion:  YES",
	"      Post Format Conversion: NO",
	"      Channel Routing:        YES",
	"      Resampling:             YES",
	"      Passthrough:            NO",
	"  Speakers (Playback)",
	"    Format:      32-bit IEEE Floating Point -> 32-bit IEEE Floating Point",
	"    Channels:    2 -> 6",
	"    Sample Rate: 48000 -> 48000",
	"    Buffer Size: 960*3 (2880)",
	"    Conversion:",
	"      Channel Routing:        YES",
	"      Resampling:             NO",
}

func TestConversions(t *testing.T) {
	core, err := audio.NewCore(audio.CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2})
	if err != nil {
		t.Fatal(err)
	}
	st := parseSetup(sampleReport)
	if st.capt.period != 882 || st.capt.periods != 3 || st.play.period != 960 || st.capt.rate != 44100 || st.play.channels != 6 {
		t.Fatalf("parsed %+v", st)
	}
	tests := []struct {
		name       string
		st         setup
		play, capt Info
		want       []string
	}{
		{"clean", parseSetup([]string{"  a (Capture)", "Format: 32-bit IEEE Floating Point -> 32-bit IEEE Floating Point", "Channels: 2 -> 2", "Sample Rate: 48000 -> 48000"}),
			Info{}, Info{natives: 1, Rate: 48000, Channels: 2, Format: "32-bit float"}, nil},
		{"miniaudio converts", st, Info{}, Info{}, []string{
			"capture: miniaudio converts the device's 16-bit integer samples to 32-bit float",
			"capture: the device delivers 1 channels and miniaudio maps them to 2",
			"capture: miniaudio resamples from the device's 44100 Hz to 48000 Hz",
			"playback: miniaudio maps 2 channels to the device's 6",
		}},
		{"server resamples", parseSetup([]string{"  out (Playback)", "Format: 32-bit IEEE Floating Point -> 32-bit IEEE Floating Point", "Channels: 2 -> 2", "Sample Rate: 48000 -> 48000"}),
			Info{natives: 1, Rate: 44100, Channels: 2, Format: "16-bit integer"}, Info{}, []string{
				"playback: the device runs at 44100 Hz; the sound server resamples to 48000 Hz",
				"playback: the device uses 16-bit integer samples; the sound server converts them to 32-bit float",
			}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := conversions(tc.st, tc.play, tc.capt, core)
			if len(got) != len(tc.want) {
				t.Fatalf("got %d conversions %q, want %d", len(got), got, len(tc.want))
			}
			for i := range got {
				if !strings.HasPrefix(got[i], tc.want[i]) {
					t.Errorf("conversion %d = %q, want it to start %q", i, got[i], tc.want[i])
				}
			}
		})
	}
}

func TestLogBook(t *testing.T) {
	var sb strings.Builder
	b := newLogBook(&sb)
	for i := range maxLogLines + 10 {
		b.add("line " + strings.Repeat("x", i%3) + "\n")
	}
	b.add("[PulseAudio] Failed to connect PulseAudio capture stream.\n")
	ls := b.lines()
	if len(ls) != maxLogLines || ls[len(ls)-1] != "[PulseAudio] Failed to connect PulseAudio capture stream." {
		t.Fatalf("%d lines, last %q", len(ls), ls[len(ls)-1])
	}
	if !strings.Contains(b.lastError(), "Failed to connect") {
		t.Fatalf("lastError = %q", b.lastError())
	}
	if strings.Count(sb.String(), "\n") != maxLogLines+11 {
		t.Fatalf("writer got %d lines", strings.Count(sb.String(), "\n"))
	}
}

func ExampleDefaultConfig() {
	cfg := DefaultConfig()
	cfg.Backend = BackendNull // no hardware needed
	s, err := Open(cfg)
	if err != nil {
		return
	}
	defer s.Close()
	in, out := s.Channels()
	r := s.Routing()
	fmt.Println(s.Rate(), in, out, r.Response, r.Reference, r.Stimulus.Channels(), s.Output().Level(), s.Output().Cap())
	// Output:
	// 48000 2 2 1 2 [1 2] -20 -6
}

// FuzzParseSetup feeds miniaudio-style init reports to the parser: it must
// never panic, and whatever it reads must explain itself in sentences that
// name their direction.
func FuzzParseSetup(f *testing.F) {
	f.Add(strings.Join(sampleReport, "\n"))
	f.Add("  x (Playback)\n    Channels: 2 -> -1\n    Buffer Size: *\n    Sample Rate: -> 0")
	f.Add("(Capture)\nFormat:\nFormat: a -> b -> c\n    Buffer Size: 99999999999999999999*3 (1)")
	core, err := audio.NewCore(audio.CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2})
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, report string) {
		st := parseSetup(strings.Split(report, "\n"))
		for _, c := range conversions(st, Info{natives: 1, Rate: 44100, Channels: 1, Format: "16-bit integer"}, Info{}, core) {
			if !strings.HasPrefix(c, "capture: ") && !strings.HasPrefix(c, "playback: ") {
				t.Fatalf("conversion %q does not say its direction", c)
			}
		}
	})
}

func TestFindHole(t *testing.T) {
	want := make([]float64, 200)
	for i := range want {
		want[i] = math.Sin(float64(i)/5) + 0.01 // never zero
	}
	holed := append([]float64(nil), want...)
	clear(holed[50:90])
	short := append([]float64(nil), want...)
	clear(short[50:60])
	tests := []struct {
		name     string
		got      []float64
		wantHole bool
	}{
		{"intact", want, false},
		{"40 samples of silence", holed, true},
		{"10 samples is not a hole", short, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if h := findHole(tc.got, want); (h != "") != tc.wantHole {
				t.Fatalf("findHole = %q, want a hole %v", h, tc.wantHole)
			}
		})
	}
}
