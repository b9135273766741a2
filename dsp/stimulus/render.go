package stimulus

import (
	"fmt"
	"math"
	"strings"

	"tonetrace/dsp/plan"
)

// Stimulus kind names, as typed on the command line.
const (
	KindNoise     = "noise"     // Gaussian white noise
	KindPink      = "pink"      // pink noise, −3 dB/octave
	KindMultitone = "multitone" // periodic multitone; rendered by package multitone, not here
	KindSteps     = "steps"     // stepped sine over third-octave frequencies
	KindLogSweep  = "logsweep"  // Farina exponential sweep
)

// Kinds returns the stimulus kind names the stimulus command accepts, in
// the order to list them. [Render] renders all but [KindMultitone].
func Kinds() []string {
	return []string{KindNoise, KindPink, KindMultitone, KindSteps, KindLogSweep}
}

// Options describe a whole-file stimulus for [Render].
type Options struct {
	// Rate is the sample rate in Hz; positive and finite.
	Rate float64
	// Seconds is the duration in seconds; the file has
	// round(Seconds·Rate) samples, from 1 to [MaxSamples].
	Seconds float64
	// LevelDBFS is the peak level in dBFS (see the package doc).
	LevelDBFS float64
	// CapDBFS is the hard cap in dBFS, at most 0; LevelDBFS must not
	// exceed it.
	CapDBFS float64
	// From and To bound the frequencies in Hz for "steps" and "logsweep"
	// (0 < From < To ≤ Rate/2); the noises ignore them.
	From, To float64
	// Seed seeds the noise generators; the same seed gives the same file.
	Seed uint64
	// FadeSeconds is the raised-cosine fade at each end, in seconds; 0 for
	// none; at most a quarter of Seconds.
	FadeSeconds float64
}

// Render returns a whole stimulus of the named kind:
//
//   - "noise": white Gaussian noise (see [WhiteNoise]), faded, then
//     scaled so its largest sample is exactly the level.
//   - "pink": pink noise (see [PinkNoise]), faded, then scaled so its
//     largest sample is exactly the level.
//   - "steps": a stepped sine (see [SteppedSine]) over the exact
//     third-octave midbands whose nominal frequencies lie in [From, To]
//     (see [DefaultSteps] for the layout).
//   - "logsweep": Farina's sweep from From to To over the whole duration
//     (see [LogSweep]).
//
// "multitone" is built by package multitone and is an error here, as is
// an unknown kind (the error lists the known ones). Errors also for
// invalid options, each naming the option and the fix.
func Render(kind string, opts Options) ([]float64, error) {
	if _, _, err := CheckLevel(opts.LevelDBFS, opts.CapDBFS); err != nil {
		return nil, err
	}
	n, fade, err := opts.samples()
	if err != nil {
		return nil, err
	}
	switch kind {
	case KindNoise, KindPink:
		x := make([]float64, n)
		if kind == KindNoise {
			whiteUnit(x, opts.Seed)
		} else {
			pinkUnit(x, opts.Seed)
		}
		Fade(x, fade)
		if err := ScalePeak(x, opts.LevelDBFS, opts.CapDBFS); err != nil {
			return nil, err
		}
		return x, nil
	case KindSteps:
		steps, fade, err := DefaultSteps(opts)
		if err != nil {
			return nil, err
		}
		s, err := NewSteppedSine(opts.Rate, steps, fade, opts.LevelDBFS, opts.CapDBFS)
		if err != nil {
			return nil, err
		}
		x := make([]float64, s.Len())
		s.Read(x)
		return x, nil
	case KindLogSweep:
		sw := LogSweep{Rate: opts.Rate, F1: opts.From, F2: opts.To, Seconds: opts.Seconds, FadeSeconds: opts.FadeSeconds}
		return sw.Render(nil, opts.LevelDBFS, opts.CapDBFS)
	case KindMultitone:
		return nil, fmt.Errorf("stimulus: kind %q is rendered by package multitone, not by stimulus.Render", kind)
	}
	return nil, fmt.Errorf("stimulus: unknown kind %q; use one of %s", kind, strings.Join(Kinds(), ", "))
}

// samples validates the shared options and returns the length and fade
// in samples.
func (o Options) samples() (n, fade int, err error) {
	if !(o.Rate > 0) || math.IsInf(o.Rate, 1) {
		return 0, 0, fmt.Errorf("stimulus: sample rate %v Hz must be positive and finite", o.Rate)
	}
	if !(o.Seconds > 0) || math.IsInf(o.Seconds, 1) {
		return 0, 0, fmt.Errorf("stimulus: duration %v s must be positive and finite", o.Seconds)
	}
	nf := math.Round(o.Seconds * o.Rate)
	if nf < 1 || nf > MaxSamples {
		return 0, 0, fmt.Errorf("stimulus: %g s at %g Hz is %.0f samples; give a duration of 1 to %d samples", o.Seconds, o.Rate, nf, MaxSamples)
	}
	if !(o.FadeSeconds >= 0) || o.FadeSeconds > o.Seconds/4 {
		return 0, 0, fmt.Errorf("stimulus: fade %v s must be between 0 and a quarter of the duration (%g s)", o.FadeSeconds, o.Seconds/4)
	}
	return int(nf), int(math.Round(o.FadeSeconds * o.Rate)), nil
}

// DefaultSteps returns the stepped sequence the "steps" kind of [Render]
// plays, and its fade in samples, so an analyser can rebuild the schedule
// of a rendered file with [NewSteppedSine] and [SteppedSine.Schedule].
//
// The frequencies are the exact third-octave midbands 1000·10^(x/10) Hz
// whose ISO 266 nominal frequencies lie in [From, To] (see
// [plan.ThirdOctave]), ascending. Of the round(Seconds·Rate) samples, the
// fade (round(FadeSeconds·Rate)) is taken at each end; the rest is shared
// equally, S = ⌊(total − 2·fade)/k⌋ samples for each of the k steps, a
// quarter of each (⌊S/4⌋) settling and the rest integrating. The first
// step's settling time also holds the fade-in and the few samples left
// over by the division, and the fade-out follows the last step, so the
// sequence is exactly round(Seconds·Rate) samples long.
//
// Errors: invalid options, no band in [From, To] below Rate/2, or steps
// shorter than 4 samples (raise Seconds or narrow the range).
func DefaultSteps(opts Options) ([]Step, int, error) {
	n, fade, err := opts.samples()
	if err != nil {
		return nil, 0, err
	}
	if !(opts.From > 0) || !(opts.To > opts.From) || opts.To > opts.Rate/2 {
		return nil, 0, fmt.Errorf("stimulus: steps from %v Hz to %v Hz must have 0 < from < to ≤ half the sample rate (%g Hz)", opts.From, opts.To, opts.Rate/2)
	}
	bands, err := plan.ThirdOctave(opts.From, opts.To)
	if err != nil {
		return nil, 0, err
	}
	var steps []Step
	for _, b := range bands {
		if b.Center < opts.Rate/2 {
			steps = append(steps, Step{Freq: b.Center})
		}
	}
	if len(steps) == 0 {
		return nil, 0, fmt.Errorf("stimulus: no third-octave band between %g Hz and %g Hz; widen the range", opts.From, opts.To)
	}
	k := len(steps)
	s := (n - 2*fade) / k
	if s < 4 {
		return nil, 0, fmt.Errorf("stimulus: %d steps in %g s leave %d samples per step; lengthen the duration or narrow the range", k, opts.Seconds, s)
	}
	for i := range steps {
		steps[i].Settle = s / 4
		steps[i].Integrate = s - s/4
	}
	steps[0].Settle += fade + (n - 2*fade - k*s)
	return steps, fade, nil
}
