package multitone

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
)

// Defaults and limits of [Options].
const (
	// DefaultPerDecade is the tone density used when Options.PerDecade is 0.
	DefaultPerDecade = 10
	// MaxPerDecade is the largest accepted Options.PerDecade.
	MaxPerDecade = 1000
	// MinPeriod is the shortest accepted period in samples.
	MinPeriod = 64
	// MaxPeriod is the longest accepted period in samples (2^20, 21.8 s at
	// 48 kHz).
	MaxPeriod = 1 << 20
	// DefaultNoiseBins is the number of empty bins per tone used for the
	// noise estimate when Options.NoiseBins is 0.
	DefaultNoiseBins = 8
	// MaxNoiseBins is the largest accepted Options.NoiseBins.
	MaxNoiseBins = 64
	// MaxIterations is the largest accepted Options.Iterations.
	MaxIterations = 10000
)

// ErrOptions is wrapped by every error [Design] returns for invalid
// options.
var ErrOptions = errors.New("multitone: invalid options")

// PhaseRule selects the starting phases of the tones.
type PhaseRule int

const (
	// PhaseSchroeder gives tone k of n the phase −2π·Σ_{l<k}(k−l)·p_l,
	// p_l its relative power (Schroeder 1970); for equal amplitudes this is
	// φ_k = −π·k(k−1)/n. The default.
	PhaseSchroeder PhaseRule = iota
	// PhaseZero starts every tone at phase 0: the worst crest factor,
	// 10·log10(2n) dB for n equal tones. For tests and comparison only.
	PhaseZero
	// PhaseRandom draws each phase uniformly from [0, 2π) with a PCG
	// source seeded by Options.Seed.
	PhaseRandom
)

// String returns the rule's name.
func (r PhaseRule) String() string {
	switch r {
	case PhaseSchroeder:
		return "schroeder"
	case PhaseZero:
		return "zero"
	case PhaseRandom:
		return "random"
	}
	return fmt.Sprintf("PhaseRule(%d)", int(r))
}

// Options describe a periodic multitone. Rate, Period, From and To are
// required; the zero value of every other field is a usable default.
type Options struct {
	// Rate is the sample rate in hertz; it must be positive.
	Rate float64
	// Period is the number of samples per period: even, from MinPeriod to
	// MaxPeriod, e.g. 8192 (5.9 Hz bins, 5.9 periods/s at 48 kHz) or
	// 16384 (2.9 Hz bins, 2.9 periods/s).
	Period int
	// From and To bound the band in hertz: 0 < From < To < Rate/2. Tones
	// lie on bins inside [From, To].
	From, To float64
	// PerDecade is the approximate number of log-spaced tones per decade,
	// 1 to MaxPerDecade; 0 means DefaultPerDecade. Where the bin grid is
	// coarser than the targets (low frequencies) fewer tones result.
	PerDecade int
	// LevelDBFS is the peak level of the composite in dBFS (sample peak;
	// see [Multitone.TruePeakDBFS] for the peak between samples). It
	// must be finite and not above CapDBFS.
	LevelDBFS float64
	// CapDBFS is the hard ceiling for LevelDBFS in dBFS; at most 0.
	CapDBFS float64
	// LimitTruePeak, when true, scales the period so that the true-peak
	// estimate (the waveform between samples, [Multitone.TruePeakDBFS])
	// equals LevelDBFS; the largest sample is then a little lower. Default
	// false: the largest sample equals LevelDBFS.
	LimitTruePeak bool
	// Phases selects the starting phases; default PhaseSchroeder.
	Phases PhaseRule
	// Reduction selects an iterative crest-factor improvement after the
	// starting phases; default ReduceNone. ReduceLp gives the lowest
	// crest factor.
	Reduction Reduction
	// Iterations bounds the work of Reduction: rounds for ReduceClip,
	// L-BFGS iterations per stage for ReduceLp; 0 means
	// DefaultClipIterations or DefaultLpIterations; at most MaxIterations.
	Iterations int
	// Pink weights the amplitudes by (f/f₁)^(−1/2), −3 dB per octave
	// relative to the lowest tone; default false (equal amplitudes).
	Pink bool
	// Seed seeds the PCG source of PhaseRandom; default 0.
	Seed uint64
	// NoiseBins is the number of empty bins nearest each tone that the
	// [Analyzer] averages to estimate the noise at the tone, 1 to
	// MaxNoiseBins; 0 means DefaultNoiseBins.
	NoiseBins int
	// Avoid lists frequencies in hertz that no tone may lie within
	// AvoidBins bins of — mains hum lines, typically ([MainsLines]) — so
	// that [Analyzer.SetInterferers] can tell them from the tones.
	Avoid []float64
}

// AvoidBins is how many bins of the period a tone keeps from each
// frequency in [Options.Avoid].
const AvoidBins = 1

// MainsLines returns the first n harmonics of both mains frequencies,
// 50 and 60 Hz, in ascending order: the lines a multitone designed
// before the hum is known should keep clear of.
func MainsLines(n int) []float64 {
	var l []float64
	for k := 1; k <= n; k++ {
		l = append(l, 50*float64(k), 60*float64(k))
	}
	sort.Float64s(l)
	return l
}

// Tone is one component of a multitone: Amplitude·cos(2π·Bin·i/Period + Phase)
// at sample i of each period.
type Tone struct {
	// Bin is the number of whole cycles per period, m ≥ 1.
	Bin int
	// Freq is the frequency in hertz, exactly Bin·Rate/Period.
	Freq float64
	// Amplitude is the peak amplitude in full-scale units (1 = 0 dBFS).
	Amplitude float64
	// Phase is the phase at sample 0 of the period, in radians.
	Phase float64
}

// Multitone is a designed periodic multitone: its tones, one period of
// samples and the tables the [Analyzer] needs. It is immutable and safe
// for concurrent use.
type Multitone struct {
	opts     Options
	tones    []Tone
	period   []float64
	crest    float64
	truePeak float64

	// Analysis tables, one entry per tone.
	noiseIdx []int // empty bins used for each tone's noise estimate, concatenated
	noiseOff []int // tone k uses noiseIdx[noiseOff[k]:noiseOff[k+1]]
	harm     [][2]int
}

// Design builds the multitone described by opts.
//
// Bin rule. Tone k sits on bin m_k: f_k = m_k·Rate/Period exactly, so a
// whole number of cycles fits one period and a rectangular window sees no
// leakage. Every m_k is odd. With an even Period, every second-order
// product — the 2nd harmonic 2m, and every sum m_i+m_j and difference
// m_i−m_j of two tones, also after folding at Nyquist — then lands on an
// even bin, never on a stimulus bin. Third harmonics are odd, so Design
// also requires fold(3·m_k) ≠ m_j for all j, k (fold maps a bin above
// Nyquist to its alias). Third-order intermodulation products such as
// 2m_i−m_j are odd and may still meet a stimulus bin.
//
// Targets are log-spaced, round(PerDecade·log10(To/From)) intervals from
// From to To; each target takes the nearest odd bin that keeps the rule,
// above the previous tone. Where targets are closer than two bins (below
// about 0.87·PerDecade·Rate/Period Hz) several targets round to the same
// bin and are dropped: the low end holds at most one tone per two bins,
// minus the bins the third-harmonic rule excludes. A longer Period gives
// finer bins and a denser low end, at the cost of fewer periods per second.
// No tone lies within AvoidBins bins of a frequency in Avoid.
//
// Level. The period is scaled so that its largest sample is exactly
// LevelDBFS (or its true peak, with LimitTruePeak); no sample is ever above
// CapDBFS.
func Design(opts Options) (*Multitone, error) {
	o, err := normalise(opts)
	if err != nil {
		return nil, err
	}
	bins, err := chooseBins(o)
	if err != nil {
		return nil, err
	}
	n := len(bins)
	df := o.Rate / float64(o.Period)

	amp := make([]float64, n)
	power := make([]float64, n)
	for k, b := range bins {
		amp[k] = 1
		if o.Pink {
			amp[k] = math.Sqrt(float64(bins[0]) / float64(b))
		}
		power[k] = amp[k] * amp[k]
	}
	phase := make([]float64, n)
	switch o.Phases {
	case PhaseSchroeder:
		schroederWeighted(phase, power)
	case PhaseZero:
	case PhaseRandom:
		rng := rand.New(rand.NewPCG(o.Seed, o.Seed^0x9e3779b97f4a7c15))
		for k := range phase {
			phase[k] = 2 * math.Pi * rng.Float64()
		}
	}
	if o.Reduction != ReduceNone {
		reducePeak(o.Reduction, bins, amp, phase, fineGrid(o.Period, bins[n-1], reduceGridPerCycle), o.Iterations)
	}

	// One period on the sample grid, scaled to the requested peak.
	x := Synthesize(nil, o.Period, bins, amp, phase)
	fine := fineGrid(o.Period, bins[n-1], truePeakGridPerCycle)
	finePeak := peakAbs(Synthesize(nil, fine, bins, amp, phase))
	level := math.Pow(10, o.LevelDBFS/20)
	limit := math.Pow(10, o.CapDBFS/20)
	scale := level / peakAbs(x)
	if o.LimitTruePeak {
		scale = level / finePeak
		limit = min(limit, level) // the samples stay at or below the level too
	}
	for i := range x {
		x[i] *= scale
	}
	if p := peakAbs(x); p > limit {
		// Only rounding can put the peak above the cap here (LevelDBFS ≤
		// CapDBFS was checked); pull it under by the excess.
		f := limit / p * (1 - 1e-15)
		for i := range x {
			x[i] *= f
		}
		scale *= f
	}
	if peakAbs(x) > limit {
		panic("multitone: internal error: period peak above the level cap")
	}

	m := &Multitone{opts: o, period: x, crest: CrestFactorDB(x)}
	m.tones = make([]Tone, n)
	for k, b := range bins {
		m.tones[k] = Tone{Bin: b, Freq: float64(b) * df, Amplitude: amp[k] * scale, Phase: math.Remainder(phase[k], 2*math.Pi)}
	}
	m.truePeak = 20 * math.Log10(max(finePeak*scale, peakAbs(x)))
	m.buildTables()
	return m, nil
}

func normalise(o Options) (Options, error) {
	bad := func(format string, a ...any) (Options, error) {
		return o, fmt.Errorf("%w: "+format, append([]any{ErrOptions}, a...)...)
	}
	if !(o.Rate > 0) || math.IsInf(o.Rate, 0) {
		return bad("Rate %g Hz must be a positive sample rate such as 48000", o.Rate)
	}
	if o.Period < MinPeriod || o.Period > MaxPeriod {
		return bad("Period %d samples is outside %d … %d; use e.g. 8192 or 16384", o.Period, MinPeriod, MaxPeriod)
	}
	if o.Period%2 != 0 {
		return bad("Period %d samples is odd; use an even length such as 8192 or 16384", o.Period)
	}
	nyq := o.Rate / 2
	if !(o.From > 0) || !(o.To > o.From) || !(o.To < nyq) {
		return bad("band From %g Hz to To %g Hz must satisfy 0 < From < To < Rate/2 = %g Hz", o.From, o.To, nyq)
	}
	if o.PerDecade == 0 {
		o.PerDecade = DefaultPerDecade
	}
	if o.PerDecade < 1 || o.PerDecade > MaxPerDecade {
		return bad("PerDecade %d is outside 1 … %d (0 means %d)", o.PerDecade, MaxPerDecade, DefaultPerDecade)
	}
	if math.IsNaN(o.CapDBFS) || o.CapDBFS > 0 {
		return bad("CapDBFS %g is above 0 dBFS; set a cap at or below 0", o.CapDBFS)
	}
	if math.IsNaN(o.LevelDBFS) || math.IsInf(o.LevelDBFS, 0) {
		return bad("LevelDBFS %g must be a finite peak level in dBFS", o.LevelDBFS)
	}
	if o.LevelDBFS > o.CapDBFS {
		return bad("LevelDBFS %g is above the cap CapDBFS %g; lower the level or raise the cap (at most 0 dBFS)", o.LevelDBFS, o.CapDBFS)
	}
	if o.Phases < PhaseSchroeder || o.Phases > PhaseRandom {
		return bad("Phases %d is not a PhaseRule; use PhaseSchroeder, PhaseZero or PhaseRandom", int(o.Phases))
	}
	if o.Reduction < ReduceNone || o.Reduction > ReduceLp {
		return bad("Reduction %d is not a Reduction; use ReduceNone, ReduceClip or ReduceLp", int(o.Reduction))
	}
	if o.Iterations < 0 || o.Iterations > MaxIterations {
		return bad("Iterations %d is outside 0 … %d (0 means the method's default)", o.Iterations, MaxIterations)
	}
	if o.Iterations == 0 {
		switch o.Reduction {
		case ReduceClip:
			o.Iterations = DefaultClipIterations
		case ReduceLp:
			o.Iterations = DefaultLpIterations
		}
	}
	if o.NoiseBins == 0 {
		o.NoiseBins = DefaultNoiseBins
	}
	if o.NoiseBins < 1 || o.NoiseBins > MaxNoiseBins {
		return bad("NoiseBins %d is outside 1 … %d (0 means %d)", o.NoiseBins, MaxNoiseBins, DefaultNoiseBins)
	}
	return o, nil
}

// fold maps a harmonic bin h ≥ 0 of a period of p samples to the bin it
// aliases to, in 0 … p/2.
func fold(h, p int) int {
	h %= p
	if h > p/2 {
		h = p - h
	}
	return h
}

// chooseBins applies the bin rule documented on [Design].
func chooseBins(o Options) ([]int, error) {
	p := o.Period
	df := o.Rate / float64(p)
	lo := int(math.Ceil(o.From/df - 1e-9))
	hi := int(math.Floor(o.To/df + 1e-9))
	lo = max(lo, 1)
	hi = min(hi, p/2-1)
	if lo%2 == 0 {
		lo++
	}
	if hi%2 == 0 {
		hi--
	}
	if lo > hi {
		return nil, fmt.Errorf("%w: no odd bin lies between From %g Hz and To %g Hz at a bin spacing of %g Hz; widen the band or lengthen Period",
			ErrOptions, o.From, o.To, df)
	}
	intervals := max(int(math.Round(float64(o.PerDecade)*math.Log10(o.To/o.From))), 1)

	taken := make([]bool, p/2+1)     // stimulus bins
	forbidden := make([]bool, p/2+1) // fold(3·m) of every chosen m
	ok := func(c int) bool {
		h := fold(3*c, p)
		for _, a := range o.Avoid {
			if math.Abs(float64(c)*df-a) < AvoidBins*df {
				return false
			}
		}
		return !forbidden[c] && !taken[h] && h != c
	}
	var bins []int
	last := 0
	for i := 0; i <= intervals; i++ {
		t := o.From * math.Pow(o.To/o.From, float64(i)/float64(intervals)) / df
		c := 2*int(math.Floor(t/2)) + 1 // nearest odd bin to t
		if c < lo {
			c = lo
		}
		if c > hi {
			c = hi
		}
		if c <= last {
			continue // targets closer than the odd-bin grid: density limit
		}
		pick := 0
		for d := 0; c-d > last || c+d <= hi; d += 2 {
			if c+d <= hi && ok(c+d) {
				pick = c + d
				break
			}
			if d > 0 && c-d > last && c-d >= lo && ok(c-d) {
				pick = c - d
				break
			}
		}
		if pick == 0 {
			continue
		}
		bins = append(bins, pick)
		taken[pick] = true
		forbidden[fold(3*pick, p)] = true
		last = pick
	}
	if len(bins) == 0 {
		return nil, fmt.Errorf("%w: no bin between From %g Hz and To %g Hz keeps the harmonic rule; widen the band or lengthen Period",
			ErrOptions, o.From, o.To)
	}
	return bins, nil
}

// buildTables prepares the per-tone bin lists the analyzer reads.
func (m *Multitone) buildTables() {
	p := m.opts.Period
	half := p / 2
	// A bin is "empty" when it carries neither a tone nor a 2nd or 3rd
	// harmonic (folded) of any tone; DC and Nyquist are excluded too.
	used := make([]bool, half+1)
	used[0], used[half] = true, true
	for _, t := range m.tones {
		used[t.Bin] = true
		used[fold(2*t.Bin, p)] = true
		used[fold(3*t.Bin, p)] = true
	}
	want := m.opts.NoiseBins
	m.noiseOff = make([]int, 0, len(m.tones)+1)
	m.harm = make([][2]int, len(m.tones))
	for k, t := range m.tones {
		m.noiseOff = append(m.noiseOff, len(m.noiseIdx))
		got := 0
		for d := 1; got < want && (t.Bin-d > 0 || t.Bin+d < half); d++ {
			if b := t.Bin - d; b > 0 && !used[b] {
				m.noiseIdx = append(m.noiseIdx, b)
				got++
			}
			if b := t.Bin + d; got < want && b < half && !used[b] {
				m.noiseIdx = append(m.noiseIdx, b)
				got++
			}
		}
		for h := range 2 {
			b := (h + 2) * t.Bin
			if b >= half {
				b = -1 // above Nyquist: removed by the anti-alias filter
			}
			m.harm[k][h] = b
		}
	}
	m.noiseOff = append(m.noiseOff, len(m.noiseIdx))
}

// Options returns the options the multitone was designed with, defaults
// filled in.
func (m *Multitone) Options() Options { return m.opts }

// Rate returns the sample rate in hertz.
func (m *Multitone) Rate() float64 { return m.opts.Rate }

// Len returns the number of samples per period.
func (m *Multitone) Len() int { return m.opts.Period }

// BinWidth returns the bin spacing Rate/Period in hertz.
func (m *Multitone) BinWidth() float64 { return m.opts.Rate / float64(m.opts.Period) }

// NumTones returns the number of tones.
func (m *Multitone) NumTones() int { return len(m.tones) }

// Tones returns a copy of the tones in ascending frequency.
func (m *Multitone) Tones() []Tone { return append([]Tone(nil), m.tones...) }

// Period returns a new copy of one period of samples in full-scale units,
// to be played in a loop. Its largest magnitude is exactly LevelDBFS
// (never above CapDBFS).
func (m *Multitone) Period() []float64 { return append([]float64(nil), m.period...) }

// PeakDBFS returns the largest sample magnitude of the period in dBFS,
// equal to Options.LevelDBFS up to rounding.
func (m *Multitone) PeakDBFS() float64 { return 20 * math.Log10(peakAbs(m.period)) }

// TruePeakDBFS returns an estimate, in dBFS, of the peak of the
// band-limited waveform between samples, as a reconstruction filter
// produces it: the largest magnitude of the exact tone sum evaluated on a
// grid of at least 16 points per cycle of the highest tone (fewer for
// periods beyond about 2^18 samples, where the grid is capped at 2^22). It is at least
// [Multitone.PeakDBFS] and may exceed CapDBFS by a fraction of a dB when
// tones lie near Nyquist; lower LevelDBFS by the difference if the
// analog peak matters.
func (m *Multitone) TruePeakDBFS() float64 { return m.truePeak }

// CrestFactorDB returns the crest factor 20·log10(peak/rms) of the period
// samples, in dB.
func (m *Multitone) CrestFactorDB() float64 { return m.crest }
