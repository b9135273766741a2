package tui

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/charmbracelet/x/ansi"

	"tonetrace/dsp/eseries"
	"tonetrace/dsp/trace"
)

// Tolerances.
const (
	// interpTolDB and interpTolDeg bound the error of reading a trace of
	// 201 log-spaced points between its points (linear in log f); the
	// curvature of a first-order section at its corner makes it about
	// 0.004 dB and 0.002° at that density.
	interpTolDB  = 0.01
	interpTolDeg = 0.01
	// exactTol is for values that should agree to rounding.
	exactTol = 1e-9
)

func TestFormat(t *testing.T) {
	cases := []struct {
		name string
		got  string
		want string
	}{
		{"fixed negative uses the minus sign", fixed(-3.0103, 2, false), "−3.01"},
		{"fixed no negative zero", fixed(-0.001, 1, false), "0.0"},
		{"fixed plus", fixed(4, 1, true), "+4.0"},
		{"fixed zero without plus", fixed(0, 1, true), "0.0"},
		{"fixed NaN", fixed(math.NaN(), 1, false), "—"},
		{"fixed −Inf", fixed(math.Inf(-1), 1, false), "−∞"},
		{"sig four digits", sig(1.0610330), "1.061"},
		{"sig carries into a new digit", sig(9.99996), "10.00"},
		{"sig large", sig(1061.033), "1061"},
		{"hz fc of the RC", hz(1061.0330), "1.061 kHz"},
		{"hz low", hz(20), "20.00 Hz"},
		{"hz f0 of the RLC", hz(5032.921), "5.033 kHz"},
		{"hz invalid", hz(-1), "— Hz"},
		{"seconds µs", seconds(149.9e-6), "149.9 µs"},
		{"seconds ms", seconds(0.0123), "12.30 ms"},
		{"seconds NaN", seconds(math.NaN()), "— s"},
		{"siValue nF", siValue(15e-9, "F"), "15.00 nF"},
		{"siValue kΩ", siValue(4.7e3, "Ω"), "4.700 kΩ"},
		{"siValue mH", siValue(10e-3, "H"), "10.00 mH"},
		{"dbShort whole", dbShort(-30), "−30"},
		{"dbShort half", dbShort(-29.5), "−29.5"},
	}
	for _, tc := range cases {
		if tc.got != tc.want {
			t.Errorf("%s: got %q, want %q", tc.name, tc.got, tc.want)
		}
	}
}

func TestPadAndWrap(t *testing.T) {
	if got := padRight("abc", 5); got != "abc  " {
		t.Errorf("padRight pads: %q", got)
	}
	if got := padRight("abcdef", 4); ansi.StringWidth(got) != 4 || !strings.HasSuffix(got, "…") {
		t.Errorf("padRight cuts with an ellipsis: %q", got)
	}
	if got := padRight("x", 0); got != "" {
		t.Errorf("padRight to 0: %q", got)
	}
	text := "check the loopback lead from the output to the reference input"
	for _, w := range []int{12, 20, 40} {
		got := wrapWords(text, w, "  → ", "    ")
		if strings.Join(strings.Fields(strings.ReplaceAll(strings.Join(got, " "), "→", "")), " ") != text {
			t.Errorf("w=%d: words lost: %q", w, got)
		}
		for _, l := range got {
			// A line wider than w holds one word too long to break.
			if ansi.StringWidth(l) > w && len(strings.Fields(strings.TrimPrefix(strings.TrimSpace(l), "→"))) > 1 {
				t.Errorf("w=%d: line %q too wide", w, l)
			}
		}
	}
}

// TestSeriesAt reads the RC low-pass of REFERENCES.md §5 (values checked
// there against ngspice-39 AC analysis) between the points of a trace.
func TestSeriesAt(t *testing.T) {
	var s series
	s.set(analytic(rcLowpass, logFreqs(10, 100e3, 201)).Points)
	fc := 1 / (2 * math.Pi * rcR * rcC) // 1061.0330 Hz
	cases := []struct {
		name        string
		f           float64
		gain, phase float64
	}{
		// REFERENCES.md §5, first-order RC low-pass.
		{"0.1 fc", 0.1 * fc, -0.0432, -5.7106},
		{"0.5 fc", 0.5 * fc, -0.9691, -26.5651},
		{"fc", fc, -3.0103, -45.0},
		{"2 fc", 2 * fc, -6.9897, -63.4349},
		{"10 fc", 10 * fc, -20.0432, -84.2894},
	}
	for _, tc := range cases {
		r := s.at(tc.f)
		if math.Abs(r.Gain-tc.gain) > interpTolDB || math.Abs(r.Phase-tc.phase) > interpTolDeg {
			t.Errorf("%s: %.4f dB %.4f°, want %.4f dB %.4f°", tc.name, r.Gain, r.Phase, tc.gain, tc.phase)
		}
		// Group delay of 1/(1+jωτ): τ/(1+(ωτ)²) (from memory: the
		// derivative of −atan ωτ).
		w := 2 * math.Pi * tc.f
		tau := rcR * rcC
		if want := tau / (1 + w*w*tau*tau); math.Abs(r.Delay-want) > 1e-3*tau {
			t.Errorf("%s: delay %.4g s, want %.4g s", tc.name, r.Delay, want)
		}
		if r.GainU != 0.01 || r.PhaseU != 0.1 {
			t.Errorf("%s: uncertainties %g %g not carried", tc.name, r.GainU, r.PhaseU)
		}
	}
	for _, f := range []float64{5, 200e3, 0, math.NaN()} {
		if r := s.at(f); !math.IsNaN(r.Gain) {
			t.Errorf("at(%g) outside the trace gave %g dB", f, r.Gain)
		}
	}
}

// TestSeriesSetSortsAndDrops checks that unsorted input is sorted and
// invalid frequencies dropped.
func TestSeriesSetSortsAndDrops(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	pts := analytic(rcLowpass, logFreqs(20, 20e3, 50)).Points
	rng.Shuffle(len(pts), func(i, j int) { pts[i], pts[j] = pts[j], pts[i] })
	pts = append(pts, trace.NewPoint(0, 1), trace.NewPoint(math.Inf(1), 1), trace.NewPoint(-5, 1), trace.NewPoint(math.NaN(), 1))
	var s series
	s.set(pts)
	if len(s.points) != 50 {
		t.Fatalf("%d points kept, want 50", len(s.points))
	}
	if !slices.IsSortedFunc(s.points, cmpFreq) {
		t.Error("points not sorted")
	}
}

// TestWrapWithGaps checks that wrapped phase breaks the line where it
// jumps, and stays in (−180, 180].
func TestWrapWithGaps(t *testing.T) {
	freq := []float64{100, 200, 300, 400}
	unwrapped := []float64{-90, -170, -190, -350}
	f, p := wrapWithGaps(nil, nil, freq, unwrapped)
	want := []float64{-90, -170, math.NaN(), 170, 10}
	if len(p) != len(want) || len(f) != len(p) {
		t.Fatalf("got %v at %v, want %v", p, f, want)
	}
	for i := range want {
		if math.IsNaN(want[i]) != math.IsNaN(p[i]) || (!math.IsNaN(want[i]) && math.Abs(p[i]-want[i]) > exactTol) {
			t.Errorf("point %d: %g, want %g", i, p[i], want[i])
		}
	}
	if gap := f[2]; !(gap > 200 && gap < 300) {
		t.Errorf("gap at %g Hz, want between 200 and 300 Hz", gap)
	}
}

// TestDifference checks live − reference against the analytic ratio of
// two RC low-passes (REFERENCES.md §5 network with C = 15 nF and 22 nF).
func TestDifference(t *testing.T) {
	fr := logFreqs(20, 20e3, 101)
	var a, b, d series
	a.set(analytic(rcLowpass, fr).Points)
	b.set(analytic(rcLowpassC(22e-9), fr[10:90]).Points)
	d.setDifference(&a, &b)
	if len(d.points) == 0 || d.curve.Freq[0] < fr[10] || d.curve.Freq[len(d.curve.Freq)-1] > fr[89] {
		t.Fatalf("difference covers %v…, want only where the reference is", d.curve.Freq[:1])
	}
	for i, f := range d.curve.Freq {
		ratio := rcLowpass(f) / rcLowpassC(22e-9)(f)
		wantG := 20 * math.Log10(abs(ratio))
		wantP := trace.WrapDeg(phaseDeg(ratio))
		if math.Abs(d.curve.Gain[i]-wantG) > 1e-9 || math.Abs(trace.WrapDeg(d.curve.Phase[i]-wantP)) > 1e-9 {
			t.Fatalf("at %g Hz: %g dB %g°, want %g dB %g°", f, d.curve.Gain[i], d.curve.Phase[i], wantG, wantP)
		}
	}
}

// TestLiveMerge checks that a sweep in progress shows the previous sweep
// above its highest frequency, and that points insert in order.
func TestLiveMerge(t *testing.T) {
	fr := logFreqs(20, 20e3, 10)
	old := analytic(rcLowpass, fr).Points
	nw := analytic(rlcBandpass, fr).Points
	var l liveTrace
	l.setTrace(old, true)
	l.setTrace(nw[:4], false)
	got := l.merged(nil)
	if len(got) != 10 {
		t.Fatalf("%d points, want 10", len(got))
	}
	for i, p := range got {
		want := old[i]
		if i < 4 {
			want = nw[i]
		}
		if p.H != want.H {
			t.Errorf("point %d from the wrong sweep", i)
		}
	}
	// Incremental points: a restart keeps what was shown as the previous
	// sweep; a point at an existing frequency replaces it.
	l.add(nw[0], true)
	l.add(nw[2], false)
	l.add(nw[1], false)
	l.add(nw[1], false)
	got = l.merged(nil)
	if len(got) != 10 || got[1].H != nw[1].H || got[3].H != nw[3].H || got[9].H != old[9].H {
		t.Errorf("after points: %d points", len(got))
	}
	if !slices.IsSortedFunc(got, cmpFreq) {
		t.Error("merged points not in order")
	}
}

// TestToneStep checks the single-tone steps against the exact base-10
// third-octave midbands 1000·10^(x/10) of IEC 61260-1 (REFERENCES.md §9,
// nominal 1.25k, 800).
func TestToneStep(t *testing.T) {
	cases := []struct {
		name string
		f    float64
		n, d int
		want float64
	}{
		{"third octave up from 1k", 1000, 1, 10, 1258.925},
		{"third octave down from 1k", 1000, -1, 10, 794.328},
		{"off grid up lands on 1.25k", 1100, 1, 10, 1258.925},
		{"off grid down lands on 1k", 1100, -1, 10, 1000},
		{"nearest", 632.5, 0, 100, 630.957},
		{"fine step", 1000, 1, 100, 1023.293},
	}
	for _, tc := range cases {
		if got := toneStep(tc.f, tc.n, tc.d); math.Abs(got-tc.want) > 1e-3 {
			t.Errorf("%s: %.4f Hz, want %.3f Hz", tc.name, got, tc.want)
		}
	}
}

// TestStepValue walks the E12 series (IEC 60063: 10 12 15 18 22 27 33 39
// 47 56 68 82).
func TestStepValue(t *testing.T) {
	cases := []struct {
		name string
		v    float64
		s    eseries.Series
		dir  int
		want float64
	}{
		{"15n up", 15e-9, eseries.E12, 1, 18e-9},
		{"15n down", 15e-9, eseries.E12, -1, 12e-9},
		{"82 up crosses the decade", 82, eseries.E12, 1, 100},
		{"10k down crosses the decade", 10e3, eseries.E12, -1, 8.2e3},
		{"off series up", 16e-9, eseries.E12, 1, 18e-9},
		{"off series down", 16e-9, eseries.E12, -1, 15e-9},
		{"zero series means E12", 4.7e3, 0, 1, 5.6e3},
		{"E24", 15e-9, eseries.E24, 1, 16e-9},
	}
	for _, tc := range cases {
		if got := stepValue(tc.v, tc.s, tc.dir); math.Abs(got/tc.want-1) > 1e-9 {
			t.Errorf("%s: %g, want %g", tc.name, got, tc.want)
		}
	}
	if got := stepValue(-1, eseries.E12, 1); !math.IsNaN(got) {
		t.Errorf("negative value stepped to %g", got)
	}
}

func TestLevelBar(t *testing.T) {
	cases := []struct {
		name      string
		rms, peak float64
		w         int
		want      string
	}{
		{"silence", math.Inf(-1), math.Inf(-1), 6, "······"},
		{"full scale", 0, 0, 6, "██████"},
		// −45 dBFS is half of the 90 dB span: 3 of 6 cells.
		{"half with peak", -45, -15, 6, "███··│"},
		{"eighths", -45 + 90.0/6*3/8, math.NaN(), 6, "███▍··"},
		{"unknown", math.NaN(), math.NaN(), 4, "····"},
	}
	for _, tc := range cases {
		if got := levelBar(tc.rms, tc.peak, tc.w); got != tc.want {
			t.Errorf("%s: %q, want %q", tc.name, got, tc.want)
		}
	}
}

func TestModeParseAndString(t *testing.T) {
	cases := []struct {
		in      string
		want    Mode
		wantErr bool
	}{
		{"stepped", ModeStepped, false},
		{"Stepped Sweep", ModeStepped, false},
		{"multitone", ModeMultitone, false},
		{"live", ModeMultitone, false},
		{"tone", ModeTone, false},
		{"single tone", ModeTone, false},
		{" any ", ModeAny, false},
		{"any signal", ModeAny, false},
		{"", 0, true},
		{"sweep-ish", 0, true},
	}
	for _, tc := range cases {
		got, err := ParseMode(tc.in)
		if (err != nil) != tc.wantErr || (!tc.wantErr && got != tc.want) {
			t.Errorf("ParseMode(%q) = %v, %v", tc.in, got, err)
		}
		if err != nil && !strings.Contains(err.Error(), "use stepped, multitone, tone or any") {
			t.Errorf("error %q does not say what to use", err)
		}
	}
	for m := Mode(0); m < numModes; m++ {
		if got, err := ParseMode(m.String()); err != nil || got != m {
			t.Errorf("round trip of %v: %v, %v", m, got, err)
		}
	}
	if Mode(9).Valid() || Mode(9).String() != "Mode(9)" || RunState(7).String() != "RunState(7)" {
		t.Error("invalid values not named as such")
	}
}

func abs(c complex128) float64 { return math.Hypot(real(c), imag(c)) }

func phaseDeg(c complex128) float64 { return math.Atan2(imag(c), real(c)) * 180 / math.Pi }
