package stimulus

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"tonetrace/dsp/plan"
)

func TestKinds(t *testing.T) {
	// The names the stimulus command accepts (the brief for this package).
	want := []string{"noise", "pink", "multitone", "steps", "logsweep"}
	if got := Kinds(); !slices.Equal(got, want) {
		t.Errorf("Kinds() = %q, want %q", got, want)
	}
	k := Kinds()
	k[0] = "changed"
	if Kinds()[0] != "noise" {
		t.Errorf("Kinds shares its slice")
	}
}

func TestRender(t *testing.T) {
	base := Options{Rate: 48000, Seconds: 2, LevelDBFS: -20, CapDBFS: -10, From: 20, To: 20000, Seed: 1, FadeSeconds: 0.05}
	for _, kind := range []string{KindNoise, KindPink, KindSteps, KindLogSweep} {
		t.Run(kind, func(t *testing.T) {
			x, err := Render(kind, base)
			if err != nil {
				t.Fatal(err)
			}
			if len(x) != 96000 {
				t.Errorf("%d samples, want 96000", len(x))
			}
			// Raised-cosine fades start and end at zero.
			if x[0] != 0 || x[len(x)-1] != 0 {
				t.Errorf("ends %g %g, want 0", x[0], x[len(x)-1])
			}
			// Peak convention: the largest sample is the level, exactly for
			// the noises, and for the sines within the sampling of their
			// crests (1e−3).
			amp := Amplitude(base.LevelDBFS)
			low := amp * (1 - 1e-3)
			if kind == KindNoise || kind == KindPink {
				low = amp * (1 - exactTol)
			}
			if pk := peak(x); pk > amp || pk < low {
				t.Errorf("peak %.9g, want %.9g", pk, amp)
			}
			y, _ := Render(kind, base)
			if !slices.Equal(x, y) {
				t.Errorf("not deterministic")
			}
		})
	}
}

// TestDefaultSteps checks the "steps" layout: the third-octave midbands
// whose ISO 266 nominal frequencies lie in range (REFERENCES §9 [S]), equal
// steps, and a total of exactly round(Seconds·Rate) samples.
func TestDefaultSteps(t *testing.T) {
	o := Options{Rate: 48000, Seconds: 10, LevelDBFS: -20, CapDBFS: -10, From: 20, To: 20000, FadeSeconds: 0.02}
	steps, fade, err := DefaultSteps(o)
	if err != nil {
		t.Fatal(err)
	}
	if len(steps) != 31 || fade != 960 {
		t.Fatalf("%d steps, fade %d; want the 31 bands 20 Hz–20 kHz and 960", len(steps), fade)
	}
	bands, _ := plan.ThirdOctave(20, 20000)
	total := fade
	for i, st := range steps {
		// Exact base-10 midbands 1000·10^(x/10), x = −17 … 13.
		if want := 1000 * math.Pow(10, float64(i-17)/10); math.Abs(st.Freq-want) > 1e-9*want || st.Freq != bands[i].Center {
			t.Errorf("step %d at %.6g Hz, want %.6g", i, st.Freq, want)
		}
		if i > 0 && (st.Settle != steps[1].Settle || st.Integrate != steps[1].Integrate) {
			t.Errorf("step %d is %d+%d samples, unlike step 1", i, st.Settle, st.Integrate)
		}
		total += st.Settle + st.Integrate
	}
	if total != 480000 {
		t.Errorf("sequence of %d samples, want 480000", total)
	}
	s, err := NewSteppedSine(o.Rate, steps, fade, o.LevelDBFS, o.CapDBFS)
	if err != nil {
		t.Fatal(err)
	}
	x, _ := Render(KindSteps, o)
	y := make([]float64, s.Len())
	s.Read(y)
	if !slices.Equal(x, y) {
		t.Errorf("Render(steps) differs from the sequence DefaultSteps describes")
	}
	// Steps above Nyquist are dropped: at 16 kHz the 8 kHz band (7943 Hz)
	// is the last one (its nominal 8000 is the limit itself).
	o.Rate, o.To = 16000, 8000
	steps, _, err = DefaultSteps(o)
	if err != nil || steps[len(steps)-1].Freq > 8000 {
		t.Errorf("at 16 kHz: %v, last step %g Hz", err, steps[len(steps)-1].Freq)
	}
}

func TestRenderErrors(t *testing.T) {
	ok := Options{Rate: 48000, Seconds: 1, LevelDBFS: -20, CapDBFS: -10, From: 20, To: 20000, FadeSeconds: 0.01}
	cases := []struct {
		name     string
		kind     string
		edit     func(*Options)
		mentions string
	}{
		{"unknown kind", "chirp", nil, "noise, pink, multitone, steps, logsweep"},
		{"multitone", KindMultitone, nil, "package multitone"},
		{"zero rate", KindNoise, func(o *Options) { o.Rate = 0 }, "sample rate"},
		{"zero duration", KindPink, func(o *Options) { o.Seconds = 0 }, "duration"},
		{"NaN duration", KindPink, func(o *Options) { o.Seconds = math.NaN() }, "duration"},
		{"huge", KindNoise, func(o *Options) { o.Seconds = 1e5 }, "samples"},
		{"fade too long", KindNoise, func(o *Options) { o.FadeSeconds = 0.3 }, "fade"},
		{"negative fade", KindNoise, func(o *Options) { o.FadeSeconds = -0.1 }, "fade"},
		{"level above cap", KindNoise, func(o *Options) { o.LevelDBFS = 0 }, "above the cap"},
		{"steps reversed", KindSteps, func(o *Options) { o.From, o.To = 1000, 100 }, "from"},
		{"steps above Nyquist", KindSteps, func(o *Options) { o.To = 30000 }, "half the sample rate"},
		{"steps no band", KindSteps, func(o *Options) { o.From, o.To = 1010, 1200 }, "no third-octave band"},
		{"steps too short", KindSteps, func(o *Options) { o.Seconds, o.FadeSeconds = 0.0005, 0 }, "per step"},
		{"sweep no range", KindLogSweep, func(o *Options) { o.From = 0 }, "sweep"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			o := ok
			if c.edit != nil {
				c.edit(&o)
			}
			x, err := Render(c.kind, o)
			if err == nil {
				t.Fatalf("no error, %d samples", len(x))
			}
			if !strings.Contains(err.Error(), c.mentions) {
				t.Errorf("error %q does not mention %q", err, c.mentions)
			}
		})
	}
	if _, err := Render(KindNoise, Options{Rate: 48000, Seconds: 1, LevelDBFS: 1, CapDBFS: 0}); !errors.Is(err, ErrLevel) {
		t.Errorf("level error does not wrap ErrLevel: %v", err)
	}
}

func ExampleRender() {
	x, err := Render("pink", Options{Rate: 48000, Seconds: 2, LevelDBFS: -20, CapDBFS: -10, Seed: 1, FadeSeconds: 0.1})
	if err != nil {
		panic(err)
	}
	fmt.Printf("%d samples, peak %.3f (−20 dBFS)\n", len(x), peak(x))
	_, err = Render("chirp", Options{Rate: 48000, Seconds: 1, LevelDBFS: -20, CapDBFS: -10})
	fmt.Println(err)
	// Output:
	// 96000 samples, peak 0.100 (−20 dBFS)
	// stimulus: unknown kind "chirp"; use one of noise, pink, multitone, steps, logsweep
}
