package audio

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/dsp/window"
)

// Tolerances.
const (
	// f32Tol is the rounding of a gain in [0, 1] to float32 (half an ulp
	// of 1 is 2^-24; allow two).
	f32Tol = 2.0 / (1 << 24)
	// slopeTol is the room above the raised cosine's largest step per
	// sample for float64 rounding.
	slopeTol = 1e-12
	// minus120dB is a gain of −120 dB.
	minus120dB = 1e-6
)

// testStage returns a stage at 48 kHz with the given outputs and config,
// failing the test on error.
func testStage(t testing.TB, outputs int, mask ChannelMask, cfg OutputConfig) *OutputStage {
	t.Helper()
	o, err := newOutputStage(48000, outputs, mask, cfg)
	if err != nil {
		t.Fatal(err)
	}
	return o
}

// runStage renders n frames of a constant stimulus s in one callback and
// returns the interleaved output.
func runStage(o *OutputStage, n int, s float64) []float32 {
	src := make([]float64, n)
	for i := range src {
		src[i] = s
	}
	out := make([]float32, n*o.outputs)
	o.begin()
	o.render(out, src)
	o.end()
	return out
}

// hannHalf returns the first n+1 values of a symmetric Hann window of
// length 2n+1, computed by gonum's dsp/window.Hann: the rising half used
// for a fade.
func hannHalf(n int) []float64 {
	w := make([]float64, 2*n+1)
	for i := range w {
		w[i] = 1
	}
	return window.Hann(w)[:n+1]
}

// TestFadeShape checks the fade-in at start and the fade-out at stop follow
// the rising and falling half of a Hann window (raised cosine; common
// practice), taking the reference values from gonum's dsp/window.Hann.
func TestFadeShape(t *testing.T) {
	const fadeMS = 10
	n := 48000 * fadeMS / 1000
	hann := hannHalf(n)
	o := testStage(t, 1, MaskOf(1), OutputConfig{LevelDBFS: 0, CapDBFS: 0, FadeMS: fadeMS, MuteMS: 5})
	if o.Fade().Milliseconds() != fadeMS {
		t.Fatalf("Fade() = %v, want %d ms", o.Fade(), fadeMS)
	}
	in := runStage(o, n+100, 1)
	for k := 1; k <= n+100; k++ {
		want := 1.0
		if k <= n {
			want = hann[k] // common practice: Hann half-window, via gonum
		}
		if got := float64(in[k-1]); math.Abs(got-want) > f32Tol {
			t.Fatalf("fade-in sample %d: %v, want %v", k, got, want)
		}
	}
	o.fadeOut()
	outFade := runStage(o, n+100, 1)
	for k := 1; k <= n+100; k++ {
		want := 0.0
		if k <= n {
			want = 1 - hann[k] // falling half, common practice
		}
		if got := float64(outFade[k-1]); math.Abs(got-want) > f32Tol {
			t.Fatalf("fade-out sample %d: %v, want %v", k, got, want)
		}
	}
	if !o.silent() || o.Gain() != 0 {
		t.Fatalf("after fade-out: silent %v gain %v", o.silent(), o.Gain())
	}
}

// TestLevelChangeSlope checks a level change ramps with no step larger than
// the raised cosine's largest slope |g1−g0|·π/(2N) (the derivative of
// (1−cos(πk/N))/2 peaks at π/(2N); common practice) and lands on the new
// gain, also when a second change interrupts the first.
func TestLevelChangeSlope(t *testing.T) {
	const fadeMS = 20
	n := 48000 * fadeMS / 1000
	o := testStage(t, 1, 0b1, OutputConfig{LevelDBFS: -40, CapDBFS: -6, FadeMS: fadeMS, MuteMS: 5})
	runStage(o, 2*n, 1) // settle at −40 dBFS
	prev := dbToAmp(-40)
	if math.Abs(o.Gain()-prev) > 1e-15 {
		t.Fatalf("settled gain %v, want %v", o.Gain(), prev)
	}
	steps := []struct {
		name   string
		level  float64
		frames int
	}{
		{"up 34 dB", -6, n / 3}, // interrupted a third of the way
		{"down to -30 dBFS", -30, 2 * n},
		{"to silence", math.Inf(-1), 2 * n},
	}
	for _, st := range steps {
		if err := o.SetLevel(st.level); err != nil {
			t.Fatalf("%s: %v", st.name, err)
		}
		target := dbToAmp(st.level)
		maxStep := math.Abs(target-prev) * math.Pi / (2 * float64(n))
		src := make([]float64, st.frames)
		for i := range src {
			src[i] = 1
		}
		o.begin()
		g := prev
		for i := range src {
			ng := o.next()
			if d := math.Abs(ng - g); d > maxStep+slopeTol {
				t.Fatalf("%s: step %d of %g, more than the ramp slope %g", st.name, i, d, maxStep)
			}
			g = ng
		}
		o.end()
		if st.frames >= n && g != target {
			t.Fatalf("%s: gain %v after the ramp, want exactly %v", st.name, g, target)
		}
		prev = g
	}
}

// TestMute checks Mute reaches silence (below −120 dB, in fact exactly 0)
// within MuteTime of the next callback, monotonically, and Unmute fades back
// in over the fade time.
func TestMute(t *testing.T) {
	o := testStage(t, 2, 0b11, DefaultOutputConfig())
	fade := int(o.Fade().Seconds() * 48000)
	runStage(o, fade+10, 1) // faded in to −20 dBFS
	level := dbToAmp(-20)
	o.Mute()
	if !o.Muted() {
		t.Fatal("Muted() false after Mute")
	}
	muteN := int(math.Round(o.MuteTime().Seconds() * 48000))
	if muteN > 240 {
		t.Fatalf("mute ramp %d samples, want at most 5 ms (240)", muteN)
	}
	out := runStage(o, 480, 1)
	prev := level
	for k := 0; k < 480; k++ {
		v := float64(out[2*k])
		if v > prev+1e-9 {
			t.Fatalf("mute: sample %d rose from %v to %v", k, prev, v)
		}
		if k+1 >= muteN && v >= minus120dB {
			t.Fatalf("mute: sample %d (%.2f ms) is %v, not below -120 dB", k, float64(k+1)/48, v)
		}
		prev = v
	}
	if out[0] >= float32(level) {
		t.Fatalf("mute did not act on the first sample: %v", out[0])
	}
	if o.Level() != -20 {
		t.Fatalf("mute changed the level to %v", o.Level())
	}
	o.Unmute()
	back := runStage(o, fade+10, 1)
	if float64(back[2*(fade/2)]) > 0.75*level || math.Abs(float64(back[2*(fade+5)])-level) > level*f32Tol {
		t.Fatalf("unmute: half-way %v, end %v; want a fade to %v", back[2*(fade/2)], back[2*(fade+5)], level)
	}
}

func TestSetLevelCap(t *testing.T) {
	tests := []struct {
		name    string
		level   float64
		wantErr bool
	}{
		{"below the cap", -20, false},
		{"at the cap", -6, false},
		{"silence", math.Inf(-1), false},
		{"above the cap", -3, true},
		{"full scale", 0, true},
		{"NaN", math.NaN(), true},
		{"+Inf", math.Inf(1), true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			o := testStage(t, 2, 0b11, DefaultOutputConfig())
			err := o.SetLevel(tc.level)
			if !tc.wantErr {
				if err != nil || o.Level() != tc.level {
					t.Fatalf("SetLevel(%v) = %v, Level %v", tc.level, err, o.Level())
				}
				return
			}
			var le *LevelError
			if !errors.As(err, &le) || le.Cap != -6 || !(le.Level == tc.level || math.IsNaN(tc.level)) {
				t.Fatalf("SetLevel(%v) = %v, want a *LevelError naming the level and cap -6", tc.level, err)
			}
			if o.Level() != -20 {
				t.Fatalf("refused level changed Level to %v", o.Level())
			}
			t.Log(err)
		})
	}
}

func TestOutputConfigValidate(t *testing.T) {
	def := DefaultOutputConfig()
	with := func(f func(*OutputConfig)) OutputConfig { c := def; f(&c); return c }
	tests := []struct {
		name    string
		cfg     OutputConfig
		wantErr bool
	}{
		{"defaults", def, false},
		{"cap at full scale", with(func(c *OutputConfig) { c.CapDBFS = 0 }), false},
		{"cap above full scale", with(func(c *OutputConfig) { c.CapDBFS = 1 }), true},
		{"cap NaN", with(func(c *OutputConfig) { c.CapDBFS = math.NaN() }), true},
		{"level above cap", with(func(c *OutputConfig) { c.LevelDBFS = -5 }), true},
		{"fade too short", with(func(c *OutputConfig) { c.FadeMS = 0 }), true},
		{"fade too long", with(func(c *OutputConfig) { c.FadeMS = 6000 }), true},
		{"mute too long", with(func(c *OutputConfig) { c.MuteMS = 50 }), true},
		{"mute NaN", with(func(c *OutputConfig) { c.MuteMS = math.NaN() }), true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.cfg.Validate()
			if (err != nil) != tc.wantErr {
				t.Fatalf("Validate() = %v, want error %v", err, tc.wantErr)
			}
		})
	}
}

// TestChannelMask checks the stimulus reaches exactly the chosen outputs
// and every other output is silent.
func TestChannelMask(t *testing.T) {
	tests := []struct {
		name string
		mask ChannelMask
	}{
		{"first and third of four", MaskOf(1, 3)},
		{"only the fourth", MaskOf(4)},
		{"all four", MaskOf(1, 2, 3, 4)},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			o := testStage(t, 4, tc.mask, OutputConfig{LevelDBFS: 0, CapDBFS: 0, FadeMS: 1, MuteMS: 1})
			out := runStage(o, 100, 0.5)
			for k := 60; k < 100; k++ {
				for c := 1; c <= 4; c++ {
					want := float32(0)
					if tc.mask.Has(c) {
						want = 0.5
					}
					if got := out[k*4+c-1]; got != want {
						t.Fatalf("frame %d output %d = %v, want %v", k, c, got, want)
					}
				}
			}
		})
	}
}

// TestClamp checks no sample exceeds the cap, whatever the stimulus, and
// NaN becomes silence; each is counted.
func TestClamp(t *testing.T) {
	o := testStage(t, 1, 0b1, OutputConfig{LevelDBFS: -6, CapDBFS: -6, FadeMS: 1, MuteMS: 1})
	runStage(o, 100, 0) // fade in on silence
	out := make([]float32, 4)
	o.begin()
	o.render(out, []float64{3, -3, math.NaN(), 0.25})
	capAmp := float32(dbToAmp(-6))
	want := []float32{capAmp, -capAmp, 0, float32(0.25 * dbToAmp(-6))}
	for i := range want {
		if out[i] != want[i] {
			t.Fatalf("sample %d = %v, want %v", i, out[i], want[i])
		}
	}
	if o.clamped.Load() != 3 {
		t.Fatalf("clamped %d, want 3", o.clamped.Load())
	}
}

// TestStageNoAllocs checks the callback side of the stage allocates nothing
// (STYLE.md: AllocsPerRun asserts zero allocations in the callback path).
func TestStageNoAllocs(t *testing.T) {
	o := testStage(t, 2, 0b11, DefaultOutputConfig())
	src := make([]float64, 960)
	out := make([]float32, 2*960)
	lv := []float64{-20, -30}
	i := 0
	allocs := testing.AllocsPerRun(100, func() {
		i++
		_ = o.SetLevel(lv[i%2])
		if i%7 == 0 {
			o.Mute()
		} else {
			o.Unmute()
		}
		o.begin()
		o.render(out, src)
		o.silence(out, 480)
		o.end()
	})
	if allocs != 0 {
		t.Fatalf("%v allocations per callback, want 0", allocs)
	}
}

func BenchmarkStageRender(b *testing.B) {
	o := testStage(b, 2, 0b11, DefaultOutputConfig())
	src := make([]float64, 960)
	out := make([]float32, 2*960)
	b.ReportAllocs()
	for b.Loop() {
		o.begin()
		o.render(out, src)
		o.end()
	}
}
