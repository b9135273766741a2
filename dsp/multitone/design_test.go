package multitone

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Tolerances.
const (
	crestTolDB     = 0.05  // REFERENCES §3 table values are given to 0.01 dB
	exactCrestTol  = 1e-9  // zero-phase crest factor is exact up to rounding
	levelTolDB     = 1e-9  // requested peak level
	binValueRelTol = 1e-12 // designed amplitude/phase at a stimulus bin
	emptyBinRelDB  = -250  // any other bin, relative to the largest tone bin
)

// consecutive returns bins 1…n with unit amplitudes.
func consecutive(n int) ([]int, []float64) {
	bins := make([]int, n)
	amp := make([]float64, n)
	for i := range bins {
		bins[i], amp[i] = i+1, 1
	}
	return bins, amp
}

func TestSchroederCrestFactor(t *testing.T) {
	cases := []struct {
		name      string
		n, period int
		schroeder float64 // REFERENCES §3 table, Schroeder column [V]
	}{
		{"N=10", 10, 16384, 5.65},
		{"N=31", 31, 16384, 5.02},
		{"N=100", 100, 16384, 4.49},
		{"N=1000", 1000, 65536, 4.48},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			bins, amp := consecutive(c.n)
			x := Synthesize(nil, c.period, bins, amp, SchroederPhases(nil, c.n))
			// REFERENCES §3 [V]: Schroeder 1970 phases on N consecutive
			// equal harmonics.
			if got := CrestFactorDB(x); math.Abs(got-c.schroeder) > crestTolDB {
				t.Errorf("Schroeder crest factor = %.4f dB, want %.2f ± %.2f", got, c.schroeder, crestTolDB)
			}
			z := Synthesize(nil, c.period, bins, amp, make([]float64, c.n))
			// REFERENCES §3 [V]: zero phase gives 10·log10(2N) exactly (all
			// tones peak together at sample 0: peak N, rms √(N/2)).
			want := 10 * math.Log10(2*float64(c.n))
			if got := CrestFactorDB(z); math.Abs(got-want) > exactCrestTol {
				t.Errorf("zero-phase crest factor = %.12f dB, want %.12f", got, want)
			}
		})
	}
}

func TestSchroederWeightedReducesToFlat(t *testing.T) {
	// Schroeder 1970: for equal powers p_l = 1/N the general phase rule
	// −2π·Σ_{l<n}(n−l)p_l equals −πn(n−1)/N (REFERENCES §3 [S]).
	for _, n := range []int{1, 2, 7, 31, 100} {
		flat := SchroederPhases(nil, n)
		pow := make([]float64, n)
		for i := range pow {
			pow[i] = 3.5
		}
		w := schroederWeighted(nil, pow)
		for i := range flat {
			if d := math.Remainder(flat[i]-w[i], 2*math.Pi); math.Abs(d) > 1e-9 {
				t.Fatalf("n=%d tone %d: weighted %.12f, flat %.12f", n, i+1, w[i], flat[i])
			}
			direct := -math.Pi * float64(i+1) * float64(i) / float64(n)
			if d := math.Remainder(flat[i]-direct, 2*math.Pi); math.Abs(d) > 1e-9 {
				t.Fatalf("n=%d tone %d: %.12f, formula %.12f", n, i+1, flat[i], direct)
			}
		}
	}
}

// thirdOctave returns the design options of about 31 log-spaced tones from
// 20 Hz to 20 kHz (ten per decade, as ISO 266 third octaves).
func thirdOctave(r Reduction, ph PhaseRule, seed uint64) Options {
	return Options{Rate: 48000, Period: 16384, From: 20, To: 20000, PerDecade: 10,
		LevelDBFS: -20, CapDBFS: -10, Reduction: r, Phases: ph, Seed: seed}
}

func TestReductionBeatsSchroeder(t *testing.T) {
	plain, err := Design(thirdOctave(ReduceNone, PhaseSchroeder, 0))
	if err != nil {
		t.Fatal(err)
	}
	if n := plain.NumTones(); n < 29 || n > 31 {
		t.Fatalf("third-octave design has %d tones, want about 31", n)
	}
	// REFERENCES §3 [V]: Schroeder's formula on 31 third-octave tones gives
	// 12.4 dB, random phases 12.6 dB: it barely helps. Our tones sit on odd
	// bins near those frequencies, so allow a wide band.
	const sparseTolDB = 1.5
	if cf := plain.CrestFactorDB(); math.Abs(cf-12.4) > sparseTolDB {
		t.Errorf("plain Schroeder crest factor %.2f dB, want 12.4 ± %.1f", cf, sparseTolDB)
	}
	randMean := 0.0
	const draws = 10
	for s := range uint64(draws) {
		m, err := Design(thirdOctave(ReduceNone, PhaseRandom, s+1))
		if err != nil {
			t.Fatal(err)
		}
		randMean += m.CrestFactorDB() / draws
	}
	if d := plain.CrestFactorDB() - randMean; math.Abs(d) > sparseTolDB {
		t.Errorf("Schroeder %.2f dB vs random mean %.2f dB: the sparse-tone table says they are close", plain.CrestFactorDB(), randMean)
	}
	// Common practice [CP] (REFERENCES §3): iterative clipping does better.
	// Both reductions must beat plain Schroeder by a clear margin, the
	// L_p method by more.
	cases := []struct {
		name   string
		r      Reduction
		iters  int
		margin float64 // dB below plain Schroeder at least
	}{
		{"clip", ReduceClip, 30, 0.3},
		{"lp", ReduceLp, 10, 2.0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			o := thirdOctave(c.r, PhaseSchroeder, 0)
			o.Iterations = c.iters
			m, err := Design(o)
			if err != nil {
				t.Fatal(err)
			}
			if got, lim := m.CrestFactorDB(), plain.CrestFactorDB()-c.margin; got > lim {
				t.Errorf("%s crest factor %.2f dB, want ≤ %.2f (plain Schroeder %.2f − %.1f)", c.name, got, lim, plain.CrestFactorDB(), c.margin)
			}
			t.Logf("%s: %.2f dB (plain Schroeder %.2f, random mean %.2f), true peak %+.2f dB over sample peak",
				c.name, m.CrestFactorDB(), plain.CrestFactorDB(), randMean, m.TruePeakDBFS()-m.PeakDBFS())
		})
	}
}

// designCases are valid designs used by several tests.
var designCases = []struct {
	name string
	o    Options
}{
	{"48k 8192 flat", Options{Rate: 48000, Period: 8192, From: 20, To: 20000, LevelDBFS: -12, CapDBFS: -6}},
	{"48k 16384 pink lp", Options{Rate: 48000, Period: 16384, From: 10, To: 22000, PerDecade: 24, LevelDBFS: -6, CapDBFS: 0, Pink: true, Reduction: ReduceLp, Iterations: 5}},
	{"44.1k 4096 random", Options{Rate: 44100, Period: 4096, From: 50, To: 15000, PerDecade: 30, LevelDBFS: -30, CapDBFS: -30, Phases: PhaseRandom, Seed: 7}},
	{"96k 12000 clip", Options{Rate: 96000, Period: 12000, From: 20, To: 40000, PerDecade: 12, LevelDBFS: -3, CapDBFS: -1, Reduction: ReduceClip, Iterations: 10}},
	{"dense 1000/decade", Options{Rate: 48000, Period: 2048, From: 30, To: 23000, PerDecade: 1000, LevelDBFS: -20, CapDBFS: -20}},
	{"one tone", Options{Rate: 48000, Period: 4800, From: 985, To: 995, LevelDBFS: -10, CapDBFS: -10}},
}

// designed returns the multitone of designCases[i], designing each case
// once for all tests.
var designed = sync.OnceValues(func() ([]*Multitone, error) {
	ms := make([]*Multitone, len(designCases))
	for i, c := range designCases {
		m, err := Design(c.o)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", c.name, err)
		}
		ms[i] = m
	}
	return ms, nil
})

func TestBinExact(t *testing.T) {
	ms, err := designed()
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range designCases {
		t.Run(c.name, func(t *testing.T) {
			m := ms[i]
			p := m.Period()
			n := len(p)
			X := fourier.NewFFT(n).Coefficients(nil, p)
			isTone := make(map[int]Tone)
			ref := 0.0
			for _, tn := range m.Tones() {
				isTone[tn.Bin] = tn
				ref = max(ref, tn.Amplitude*float64(n)/2)
				// The tone's frequency is bin-exact by construction.
				if want := float64(tn.Bin) * c.o.Rate / float64(c.o.Period); tn.Freq != want {
					t.Errorf("bin %d: Freq %v, want %v", tn.Bin, tn.Freq, want)
				}
			}
			for b, v := range X {
				if tn, ok := isTone[b]; ok {
					// A·cos(2πmi/n + φ) has DFT A·n/2·e^{jφ} at bin m
					// (unnormalised DFT; gonum dsp/fourier convention).
					want := cmplx.Rect(tn.Amplitude*float64(n)/2, tn.Phase)
					if e := cmplx.Abs(v-want) / cmplx.Abs(want); e > binValueRelTol {
						t.Errorf("bin %d: %v, designed %v (rel err %.2g)", b, v, want, e)
					}
					continue
				}
				if lvl := 20 * math.Log10(cmplx.Abs(v)/ref); lvl > emptyBinRelDB {
					t.Errorf("empty bin %d at %.1f dB relative, want below %d dB", b, lvl, emptyBinRelDB)
				}
			}
		})
	}
}

func TestHarmonicsMissStimulus(t *testing.T) {
	// Design rule (common practice [CP], REFERENCES §3): harmonics 2 and 3
	// of every tone, and second-order intermodulation of neighbouring
	// tones, must miss all stimulus bins — also after aliasing at Nyquist.
	ms, err := designed()
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range designCases {
		t.Run(c.name, func(t *testing.T) {
			m := ms[i]
			tones := m.Tones()
			set := make(map[int]bool)
			lo, hi := c.o.From/m.BinWidth(), c.o.To/m.BinWidth()
			for i, tn := range tones {
				set[tn.Bin] = true
				if i > 0 && tn.Bin <= tones[i-1].Bin {
					t.Errorf("bins not ascending and distinct: %d after %d", tn.Bin, tones[i-1].Bin)
				}
				if f := float64(tn.Bin); f < lo-1e-9 || f > hi+1e-9 {
					t.Errorf("bin %d outside the band %.1f … %.1f bins", tn.Bin, lo, hi)
				}
			}
			alias := func(h int) int {
				h %= c.o.Period
				if h > c.o.Period/2 {
					h = c.o.Period - h
				}
				return h
			}
			for i, tn := range tones {
				for _, h := range []int{2, 3} {
					if b := alias(h * tn.Bin); set[b] {
						t.Errorf("harmonic %d of bin %d lands on stimulus bin %d", h, tn.Bin, b)
					}
				}
				if i > 0 {
					prev := tones[i-1].Bin
					for _, b := range []int{alias(tn.Bin + prev), tn.Bin - prev} {
						if set[b] {
							t.Errorf("2nd-order product of bins %d and %d lands on stimulus bin %d", prev, tn.Bin, b)
						}
					}
				}
			}
		})
	}
}

func TestLowEndDensityIsLimited(t *testing.T) {
	// At 48 kHz and 4096 samples the bins are 11.7 Hz apart; 30 tones per
	// decade from 20 Hz asks for targets a few hertz apart, so the low end
	// can hold at most one tone per two bins (documented on Design).
	m, err := Design(Options{Rate: 48000, Period: 4096, From: 20, To: 20000, PerDecade: 30, LevelDBFS: -20, CapDBFS: -20})
	if err != nil {
		t.Fatal(err)
	}
	targets := 30*3 + 1
	if m.NumTones() >= targets {
		t.Errorf("%d tones for %d targets; the low end should have dropped some", m.NumTones(), targets)
	}
	tones := m.Tones()
	for i := 1; i < len(tones); i++ {
		if d := tones[i].Bin - tones[i-1].Bin; d < 2 {
			t.Errorf("tones %d and %d are %d bin apart", tones[i-1].Bin, tones[i].Bin, d)
		}
	}
}

func TestLevel(t *testing.T) {
	cases := []struct {
		name       string
		level, cap float64
		trueP      bool
		reduction  Reduction
	}{
		{"full scale", 0, 0, false, ReduceNone},
		{"below cap", -20, -10, false, ReduceNone},
		{"at cap", -6, -6, false, ReduceLp},
		{"very low", -120, -3, false, ReduceClip},
		{"true peak", -6, -6, true, ReduceNone},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			o := Options{Rate: 48000, Period: 8192, From: 20, To: 20000,
				LevelDBFS: c.level, CapDBFS: c.cap, LimitTruePeak: c.trueP, Reduction: c.reduction, Iterations: 5}
			m, err := Design(o)
			if err != nil {
				t.Fatal(err)
			}
			p := m.Period()
			peak := 20 * math.Log10(peakAbs(p))
			capLin := math.Pow(10, c.cap/20)
			if peakAbs(p) > capLin {
				t.Errorf("sample peak %.17g above the cap %.17g", peakAbs(p), capLin)
			}
			if c.trueP {
				if d := m.TruePeakDBFS() - c.level; math.Abs(d) > levelTolDB {
					t.Errorf("true peak %.12f dBFS, want %.12f", m.TruePeakDBFS(), c.level)
				}
				if peak > c.level+levelTolDB {
					t.Errorf("sample peak %.12f dBFS above the level %.12f", peak, c.level)
				}
				return
			}
			if math.Abs(peak-c.level) > levelTolDB {
				t.Errorf("sample peak %.12f dBFS, want %.12f", peak, c.level)
			}
			if math.Abs(m.PeakDBFS()-c.level) > levelTolDB {
				t.Errorf("PeakDBFS %.12f, want %.12f", m.PeakDBFS(), c.level)
			}
			if m.TruePeakDBFS() < m.PeakDBFS()-levelTolDB {
				t.Errorf("true peak %.4f below sample peak %.4f", m.TruePeakDBFS(), m.PeakDBFS())
			}
			// The period is a copy: changing it must not change the design.
			p[0] = 10
			if m.Period()[0] == 10 {
				t.Error("Period returned the internal slice")
			}
		})
	}
}

func TestDesignErrors(t *testing.T) {
	ok := Options{Rate: 48000, Period: 8192, From: 20, To: 20000, LevelDBFS: -20, CapDBFS: -10}
	cases := []struct {
		name   string
		edit   func(*Options)
		phrase string // the message names the setting
	}{
		{"level above cap", func(o *Options) { o.LevelDBFS = -5 }, "LevelDBFS"},
		{"cap above 0", func(o *Options) { o.CapDBFS = 1; o.LevelDBFS = 0 }, "CapDBFS"},
		{"NaN level", func(o *Options) { o.LevelDBFS = math.NaN() }, "LevelDBFS"},
		{"infinite level", func(o *Options) { o.LevelDBFS = math.Inf(-1) }, "LevelDBFS"},
		{"NaN cap", func(o *Options) { o.CapDBFS = math.NaN() }, "CapDBFS"},
		{"zero rate", func(o *Options) { o.Rate = 0 }, "Rate"},
		{"odd period", func(o *Options) { o.Period = 8191 }, "odd"},
		{"short period", func(o *Options) { o.Period = 32 }, "Period"},
		{"From above To", func(o *Options) { o.From, o.To = 1000, 100 }, "From"},
		{"To at Nyquist", func(o *Options) { o.To = 24000 }, "Rate/2"},
		{"negative From", func(o *Options) { o.From = -1 }, "From"},
		{"PerDecade negative", func(o *Options) { o.PerDecade = -1 }, "PerDecade"},
		{"PerDecade too large", func(o *Options) { o.PerDecade = MaxPerDecade + 1 }, "PerDecade"},
		{"bad phase rule", func(o *Options) { o.Phases = 9 }, "Phases"},
		{"bad reduction", func(o *Options) { o.Reduction = -1 }, "Reduction"},
		{"negative iterations", func(o *Options) { o.Iterations = -1 }, "Iterations"},
		{"too many noise bins", func(o *Options) { o.NoiseBins = MaxNoiseBins + 1 }, "NoiseBins"},
		{"band between bins", func(o *Options) { o.From, o.To = 1003, 1005 }, "lengthen Period"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			o := ok
			c.edit(&o)
			m, err := Design(o)
			if err == nil {
				t.Fatalf("Design accepted %+v (%d tones)", o, m.NumTones())
			}
			if !errors.Is(err, ErrOptions) {
				t.Errorf("error %q does not wrap ErrOptions", err)
			}
			if !strings.Contains(err.Error(), c.phrase) {
				t.Errorf("error %q does not mention %q", err, c.phrase)
			}
		})
	}
	if _, err := Design(ok); err != nil {
		t.Fatalf("valid options rejected: %v", err)
	}
}

func TestDefaults(t *testing.T) {
	m, err := Design(Options{Rate: 48000, Period: 1024, From: 100, To: 10000, LevelDBFS: -20, CapDBFS: -10, Reduction: ReduceLp})
	if err != nil {
		t.Fatal(err)
	}
	o := m.Options()
	if o.PerDecade != DefaultPerDecade || o.NoiseBins != DefaultNoiseBins || o.Iterations != DefaultLpIterations {
		t.Errorf("defaults not filled in: %+v", o)
	}
	if s := PhaseRandom.String() + ReduceLp.String() + PhaseRule(9).String() + Reduction(9).String(); s != "randomlpPhaseRule(9)Reduction(9)" {
		t.Errorf("names: %q", s)
	}
}

func TestLongPeriod(t *testing.T) {
	if testing.Short() {
		t.Skip("designs a period of 2^18 samples")
	}
	// A long period (5.5 s at 48 kHz) designs and keeps the level rule.
	m, err := Design(Options{Rate: 48000, Period: 1 << 18, From: 20, To: 20000, LevelDBFS: -20, CapDBFS: -20})
	if err != nil {
		t.Fatal(err)
	}
	if d := m.PeakDBFS() + 20; math.Abs(d) > levelTolDB {
		t.Errorf("peak %.12f dBFS, want -20", m.PeakDBFS())
	}
	if m.TruePeakDBFS() < m.PeakDBFS() {
		t.Errorf("true peak %.4f below sample peak %.4f", m.TruePeakDBFS(), m.PeakDBFS())
	}
}
