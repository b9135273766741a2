package stimulus

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
)

// exactTol is the tolerance for quantities that should be exact up to
// floating-point rounding.
const exactTol = 1e-12

func TestAmplitude(t *testing.T) {
	// Common practice: dBFS = 20·log10(peak/full scale); −6.0206 dB is
	// half scale, −40 dB is 1 %.
	cases := []struct{ db, amp float64 }{{0, 1}, {20 * math.Log10(0.5), 0.5}, {-40, 0.01}, {-120, 1e-6}}
	for _, c := range cases {
		if got := Amplitude(c.db); math.Abs(got-c.amp) > exactTol*c.amp {
			t.Errorf("Amplitude(%g) = %.15g, want %g", c.db, got, c.amp)
		}
	}
}

func TestCheckLevel(t *testing.T) {
	cases := []struct {
		name       string
		level, cap float64
		ok         bool
		mentions   []string // substrings the error must contain
	}{
		{"below cap", -20, -6, true, nil},
		{"at full scale", 0, 0, true, nil},
		{"at cap", -6, -6, true, nil},
		{"above cap", -3, -6, false, []string{"-3.00", "-6.00", "lower the level"}},
		{"cap above full scale", -10, 1, false, []string{"1.00", "at most 0 dBFS"}},
		{"NaN level", math.NaN(), -6, false, []string{"NaN"}},
		{"+Inf level", math.Inf(1), -6, false, []string{"+Inf"}},
		{"-Inf level", math.Inf(-1), -6, false, []string{"-Inf"}},
		{"NaN cap", -20, math.NaN(), false, []string{"NaN"}},
		{"-Inf cap", -20, math.Inf(-1), false, []string{"-Inf"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			amp, capAmp, err := CheckLevel(c.level, c.cap)
			if c.ok {
				if err != nil || amp > capAmp || amp != Amplitude(c.level) {
					t.Errorf("got %g %g %v", amp, capAmp, err)
				}
				return
			}
			if !errors.Is(err, ErrLevel) {
				t.Fatalf("got %v, want an error wrapping ErrLevel", err)
			}
			for _, m := range c.mentions {
				if !strings.Contains(err.Error(), m) {
					t.Errorf("error %q does not mention %q", err, m)
				}
			}
		})
	}
}

// TestConstructorsRejectLevels checks that every generator refuses a
// level above its cap, a cap above 0 dBFS and a non-finite level.
func TestConstructorsRejectLevels(t *testing.T) {
	steps := []Step{{Freq: 1000, Settle: 100, Integrate: 480}}
	sw := LogSweep{Rate: 48000, F1: 20, F2: 20000, Seconds: 0.1}
	gens := map[string]func(level, cap float64) error{
		"steps": func(l, c float64) error { _, err := NewSteppedSine(48000, steps, 10, l, c); return err },
		"white": func(l, c float64) error { _, err := NewWhiteNoise(1, l, c); return err },
		"pink":  func(l, c float64) error { _, err := NewPinkNoise(1, l, c); return err },
		"sweep": func(l, c float64) error { _, err := sw.Render(nil, l, c); return err },
		"scale": func(l, c float64) error { return ScalePeak([]float64{1}, l, c) },
		"render": func(l, c float64) error {
			_, err := Render(KindNoise, Options{Rate: 48000, Seconds: 0.1, LevelDBFS: l, CapDBFS: c})
			return err
		},
	}
	bad := []struct {
		name       string
		level, cap float64
	}{{"above cap", -10, -20}, {"cap above 0", -10, 3}, {"NaN", math.NaN(), -10}, {"Inf", math.Inf(1), 0}}
	for name, g := range gens {
		for _, b := range bad {
			if err := g(b.level, b.cap); !errors.Is(err, ErrLevel) {
				t.Errorf("%s %s: got %v, want an error wrapping ErrLevel", name, b.name, err)
			}
		}
	}
}

// TestNoSampleAboveCap renders every kind at its cap (level = cap) and
// checks no sample exceeds the cap's amplitude; the package's safety
// promise, common practice for a hard limit.
func TestNoSampleAboveCap(t *testing.T) {
	for _, capDB := range []float64{0, -0.1, -6, -40} {
		capAmp := Amplitude(capDB)
		check := func(name string, x []float64) {
			t.Helper()
			for i, v := range x {
				if math.Abs(v) > capAmp {
					t.Fatalf("%s at cap %g dBFS: sample %d = %.17g exceeds %.17g", name, capDB, i, v, capAmp)
				}
			}
		}
		for _, kind := range Kinds() {
			if kind == KindMultitone {
				continue
			}
			x, err := Render(kind, Options{Rate: 48000, Seconds: 0.5, LevelDBFS: capDB, CapDBFS: capDB, From: 20, To: 20000, Seed: 7, FadeSeconds: 0.01})
			if err != nil {
				t.Fatal(err)
			}
			check("Render "+kind, x)
		}
		buf := make([]float64, 1<<16)
		w, _ := NewWhiteNoise(3, capDB, capDB)
		w.Read(buf)
		check("WhiteNoise", buf)
		p, _ := NewPinkNoise(3, capDB, capDB)
		for range 4 {
			p.Read(buf)
			check("PinkNoise", buf)
		}
		s, _ := NewSteppedSine(48000, []Step{{Freq: 997, Settle: 0, Integrate: 4800}, {Freq: 23999, Settle: 10, Integrate: 4800}}, 0, capDB, capDB)
		n := s.Read(buf)
		check("SteppedSine", buf[:n])
		sw := LogSweep{Rate: 48000, F1: 10, F2: 24000, Seconds: 1}
		x, _ := sw.Render(nil, capDB, capDB)
		check("LogSweep", x)
	}
}

func TestCrestFactorDB(t *testing.T) {
	const tolDB = 1e-3
	sine := make([]float64, 48000)
	square := make([]float64, 48000)
	for i := range sine {
		sine[i] = 0.3 * math.Sin(2*math.Pi*1000*float64(i)/48000)
		square[i] = 0.3
		if i%48 >= 24 {
			square[i] = -0.3
		}
	}
	cases := []struct {
		name string
		x    []float64
		want float64
	}{
		// REFERENCES §3 [V]: a single sine has a crest factor of 3.01 dB
		// (√2).
		{"sine", sine, 10 * math.Log10(2)},
		// Common practice: a square wave's peak equals its RMS.
		{"square", square, 0},
		// Common practice: one impulse in N samples has crest factor √N.
		{"impulse", append([]float64{1}, make([]float64, 99)...), 20},
	}
	for _, c := range cases {
		if got := CrestFactorDB(c.x); math.Abs(got-c.want) > tolDB {
			t.Errorf("%s: %.4f dB, want %.4f dB", c.name, got, c.want)
		}
	}
	if !math.IsNaN(CrestFactorDB(nil)) || !math.IsNaN(CrestFactorDB(make([]float64, 5))) {
		t.Errorf("empty or silent input should give NaN")
	}
}

func TestFadeGain(t *testing.T) {
	// The raised cosine (Hann half-window) (1 − cos(πk/n))/2 [common
	// practice; Harris 1978 for the Hann window]: 0 at the start, ½ midway,
	// 1 at the end, symmetric about the midpoint.
	const n = 100
	if FadeGain(0, n) != 0 || math.Abs(FadeGain(n/2, n)-0.5) > exactTol || FadeGain(n, n) != 1 || FadeGain(-1, n) != 0 {
		t.Errorf("fade gains %g %g %g", FadeGain(0, n), FadeGain(n/2, n), FadeGain(n, n))
	}
	for k := 0; k < n; k++ {
		if s := FadeGain(k, n) + FadeGain(n-k, n); math.Abs(s-1) > exactTol {
			t.Errorf("gain(%d)+gain(n−%d) = %g, want 1", k, k, s)
		}
		if k > 0 && FadeGain(k, n) <= FadeGain(k-1, n) {
			t.Errorf("fade not rising at %d", k)
		}
	}
	if FadeGain(0, 0) != 1 {
		t.Errorf("no fade should be gain 1")
	}
	x := []float64{1, 1, 1, 1, 1, 1, 1, 1}
	Fade(x, 2)
	want := []float64{0, 0.5, 1, 1, 1, 1, 0.5, 0}
	for i := range x {
		if math.Abs(x[i]-want[i]) > exactTol {
			t.Errorf("Fade: %v, want %v", x, want)
			break
		}
	}
}

func TestRamp(t *testing.T) {
	x := make([]float64, 64)
	for i := range x {
		x[i] = 1
	}
	if err := Ramp(x, 1, 0.25); err != nil {
		t.Fatal(err)
	}
	if math.Abs(x[63]-0.25) > exactTol || x[0] > 1 || x[0] < 0.99 {
		t.Errorf("ramp ends %g … %g, want ≈1 … 0.25", x[0], x[63])
	}
	// Raised-cosine midpoint: halfway between the gains (common practice).
	if mid := x[31]; math.Abs(mid-0.625) > exactTol {
		t.Errorf("ramp midpoint %g, want 0.625", mid)
	}
	for i := 1; i < len(x); i++ {
		if x[i] > x[i-1] {
			t.Errorf("ramp down rises at %d", i)
		}
	}
	for _, g := range [][2]float64{{0, 1.5}, {-0.1, 1}, {math.NaN(), 0}, {1, math.Inf(1)}} {
		y := []float64{0.5}
		if err := Ramp(y, g[0], g[1]); !errors.Is(err, ErrLevel) || y[0] != 0.5 {
			t.Errorf("Ramp(%v): got %v, x %v; want ErrLevel and x unchanged", g, err, y)
		}
	}
}

func TestScalePeak(t *testing.T) {
	x := []float64{0.1, -0.4, 0.2}
	if err := ScalePeak(x, -6, -3); err != nil {
		t.Fatal(err)
	}
	if math.Abs(x[1]+Amplitude(-6)) > exactTol || math.Abs(x[0]-Amplitude(-6)/4) > exactTol {
		t.Errorf("scaled to %v", x)
	}
	z := []float64{0, 0}
	if err := ScalePeak(z, -6, -3); err != nil || z[0] != 0 {
		t.Errorf("silence: %v %v", z, err)
	}
	if err := ScalePeak([]float64{math.Inf(1)}, -6, -3); err == nil {
		t.Errorf("infinite input scaled without error")
	}
}

func ExampleCrestFactorDB() {
	x := make([]float64, 4800)
	for i := range x {
		x[i] = math.Sin(2 * math.Pi * float64(i) / 48)
	}
	fmt.Printf("sine: %.2f dB\n", CrestFactorDB(x))
	// Output: sine: 3.01 dB
}

func ExampleCheckLevel() {
	_, _, err := CheckLevel(-3, -10)
	fmt.Println(err)
	amp, capAmp, _ := CheckLevel(-40, -20)
	fmt.Printf("peak %.2f, cap %.2f\n", amp, capAmp)
	// Output:
	// stimulus: level not allowed: level -3.00 dBFS is above the cap -10.00 dBFS; lower the level or raise the cap (at most 0 dBFS)
	// peak 0.01, cap 0.10
}
