// Package engine runs a measurement on a live audio stream: one goroutine,
// owned by the caller and stopped through a context, that queues the
// stimulus ahead of time, reads the captured inputs by absolute frame
// index, estimates the response and watches the wiring.
//
//	e := engine.New(stream, engine.Config{From: 20, To: 20000, PerDecade: 10})
//	go func() { for ev := range e.Events() { … } }()
//	err := e.Run(ctx) // returns when the sweep ends, ctx is done or the device is lost
//
// # How a run goes
//
// Start-up. The engine sets the output stage's level (the stimulus is
// written at peak 1, so the stage's level is the stimulus level and its cap
// the guard), leaves QuietTime of silence, in which it measures each
// input's noise floor and mains hum, and plays a faded burst of seeded white
// noise 6 dB below the level. Cross-correlating each captured input with
// the burst, by FFT (gonum dsp/fourier), gives the round-trip latency in
// whole frames, capture index minus output index, from the input where the
// burst arrives first (a network delays its input's correlation peak by
// its group delay). The sign of the reference's peak shows an inverted
// loopback; an input whose level does not rise during the burst (mains
// hum fitted out first) is dead. The stimulus proper starts MaxLatency after the burst, so the
// burst's window never overlaps it.
//
// Stepped sine, pipelined. The engine keeps the playout queue Ahead of the
// device and decides each step when it writes it: frequency, settling
// time, integration length, and the stimulus phase at the start of the
// integration block. The captured block of a step starts at its output
// index plus the latency, so a point costs its settling plus its
// integration, not a round trip. Settling is max(MinSettle, SettleCycles
// periods of the frequency) plus NetworkSettle; integration is a whole
// number of cycles (tone.CycleLength) of at least MinIntegrate and
// IntegrateCycles periods, lengthened (up to 8 times that, and at most
// MaxIntegrate) when the last point's SNR says the gain uncertainty would exceed TargetGainU (the
// Cramér–Rao bound: GainU ≈ 8.69·√(2/(N·SNR)) dB for N samples at a
// per-sample SNR). A Guard of the same tone follows each block, so a
// small latency error or drift does not reach into the next step. Each
// block is fitted on both inputs (IEEE Std 1057
// three-parameter fit with harmonics, tone.Estimator.Fit) and divided
// (tone.Ratio). A point whose block lost frames, or whose reference broke
// off inside it, is measured again (twice at most) right after the steps
// already queued. An adaptive plan (plan.Adaptive) gets every valid point
// and its next batch is scheduled as soon as Next returns.
//
// Periodic multitone. A multitone (multitone.Design at the level) is
// looped without a break; every captured whole period after the first is
// analysed (the first one after the start, a gap or a level change holds
// the circuit's transient), averaged, and sent as a live trace; after
// Periods periods a complete trace follows.
//
// Monitors. Every captured block updates each input's RMS, peak and
// clipping count; every point or period checks for a dead reference or
// response, clipping, a discontinuity in the reference (dropout), mains
// hum, clock drift (tone.Estimator.FitFreq on the reference), polarity and
// swapped inputs. Each problem has a code (the Code constants), a message
// and a fix. A point whose reference is dead or whose block clipped is
// marked invalid, never silently wrong.
//
// Traces hold the points with a finite ratio, in ascending frequency, and
// a Valid flag for each; a point nothing could be estimated for appears
// only as its PointEvent.
//
// Events. Points, complete and partial traces and the final error are
// never dropped: they wait in the engine until the channel has room.
// Status, progress and live traces are latest-only: when the consumer is
// slow the engine keeps the newest and drops the rest, so it never blocks
// on the consumer. When the device is lost, every point measured so far
// goes out in a partial trace with a status naming the fault, and Run
// returns at once.
package engine

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"
	"sync/atomic"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/multitone"
	"tonetrace/dsp/plan"
	"tonetrace/dsp/trace"
)

// Method selects the stimulus and its estimator.
type Method int

const (
	// Steps is the stepped sine: one frequency at a time, the best SNR
	// and a THD per point.
	Steps Method = iota
	// Multitone is the periodic multitone: the whole band in every
	// period, several refreshes a second.
	Multitone
)

// String returns "steps" or "multitone".
func (m Method) String() string {
	switch m {
	case Steps:
		return "steps"
	case Multitone:
		return "multitone"
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// Config describes a measurement. The zero value of every field selects
// the default stated; Run reports an invalid field with the fix.
type Config struct {
	// Method is Steps (default) or Multitone.
	Method Method
	// Plan lists the stepped-sine frequencies in hertz, measured in the
	// order given; each must lie in (0, rate/2). Empty: PerDecade points
	// per decade from From to To. Ignored by Multitone.
	Plan []float64
	// Adaptive, when set, chooses the stepped-sine frequencies from the
	// measurements instead of Plan (its From and To are its own). The
	// engine calls Reset before each sweep; do not share it while Run is
	// running.
	Adaptive *plan.Adaptive
	// From and To bound the band in hertz; default 20 and the lesser of
	// 20000 and 0.45·rate.
	From, To float64
	// PerDecade is the density in points (tones) per decade; default 10.
	PerDecade int
	// LevelDBFS is the output level in dBFS (peak of the stimulus) the
	// engine sets on the output stage; it must not exceed the stage's
	// cap. 0 keeps the stage's current level.
	LevelDBFS float64

	// MinSettle is the least settling time per step; default 5 ms.
	MinSettle time.Duration
	// SettleCycles is the least settling time per step in periods of its
	// frequency; default 3.
	SettleCycles float64
	// NetworkSettle is added to every step's settling time for circuits
	// with slow transients (long time constants); default 0.
	NetworkSettle time.Duration
	// MinIntegrate is the least integration time per step; default 10 ms.
	MinIntegrate time.Duration
	// IntegrateCycles is the least integration time in periods of the
	// step's frequency; default 4.
	IntegrateCycles float64
	// TargetGainU is the gain uncertainty in dB the integration aims at
	// when the SNR is low; default 0.01.
	TargetGainU float64
	// MaxIntegrate caps the integration time per step, which a low SNR
	// may stretch to 8 times its minimum; default 1 s.
	MaxIntegrate time.Duration
	// Guard is played after each integration block at the same
	// frequency, so that a latency error or a clock drift of up to Guard
	// does not carry the next step into the block; default 1 ms.
	Guard time.Duration

	// Period is the multitone period in samples (even, 64…2^20); default
	// the power of two nearest a third of a second (16384 at 48 kHz).
	Period int
	// Periods is the number of periods averaged into a complete
	// multitone trace; default 4.
	Periods int
	// Reduction is the multitone crest-factor reduction; the zero value
	// keeps Schroeder's phases, multitone.ReduceLp lowers the crest
	// factor by about 3 dB at a start-up cost of a few tenths of a second.
	Reduction multitone.Reduction

	// Repeat sweeps (or averages) again and again until ctx is done or
	// MaxDuration passes: the live screen.
	Repeat bool
	// MaxDuration bounds the run in audio time (frames captured); 0 for
	// no limit. A single measurement that runs out of time ends with
	// ErrTimeLimit; a repeating one ends normally.
	MaxDuration time.Duration
	// MaxLatency is the largest round-trip latency searched for; default
	// 250 ms. The stimulus starts this long after the latency burst.
	MaxLatency time.Duration
	// FixedLatency, when positive, is the round-trip latency in frames
	// known from a loopback calibration; the engine then uses it instead
	// of the one it measures. Without a reference input the latency is
	// measured on the response input, where the network delays the
	// correlation peak by its group delay: set FixedLatency for exact
	// phase in that setup. Default 0: measure.
	FixedLatency int
	// QuietTime is the silence at the start in which the noise floor and
	// hum are measured; default 100 ms (whole cycles of 50 and 60 Hz).
	QuietTime time.Duration
	// Ahead is how far ahead of the device the stimulus is queued;
	// default 100 ms, at least three device periods more than the
	// stream's Lead. It should stay below the stream's playout capacity.
	// After an underrun or a late sample the engine doubles it, up to
	// 400 ms (or Ahead, if more), so a machine that paused it once does
	// not starve the output again.
	Ahead time.Duration
	// Fade is the raised-cosine fade at the start and end of each
	// stimulus run; default 5 ms.
	Fade time.Duration
	// StatusInterval is the audio time between status events; default
	// 100 ms.
	StatusInterval time.Duration
	// ProblemHold is how long a problem stays in Status.Problems after it
	// was last seen, in audio time; default 3 s.
	ProblemHold time.Duration
	// EventBuffer is the capacity of the events channel; default 256.
	EventBuffer int
	// DrainTimeout is how long Run waits, when it ends, for a slow
	// consumer to take the remaining points and traces; default 500 ms.
	DrainTimeout time.Duration
	// Seed seeds the latency burst; the same seed gives the same burst.
	Seed uint64
}

// Errors Run returns (wrapped with details; test with errors.Is).
var (
	// ErrConfig reports an invalid Config field.
	ErrConfig = errors.New("engine: invalid configuration")
	// ErrNoSignal means no input heard the latency burst.
	ErrNoSignal = errors.New("engine: no input hears the stimulus")
	// ErrTimeLimit means a single measurement did not finish within
	// MaxDuration.
	ErrTimeLimit = errors.New("engine: the measurement did not finish within MaxDuration")
	// ErrRunTwice means Run was called more than once on an Engine.
	ErrRunTwice = errors.New("engine: Run was already called; create a new Engine for each run")
)

// Engine runs one measurement on a stream. Create it with New, start
// reading Events, then call Run once from the goroutine that owns it.
type Engine struct {
	s      audio.Stream
	cfg    Config
	events chan Event
	ran    atomic.Bool

	mu     sync.Mutex
	result Result
}

// Result is what a run measured, available from [Engine.Result] once Run
// has returned (and, as far as it goes, during the run).
type Result struct {
	// Trace is the last complete trace, or the partial one when the run
	// ended early; Valid has one entry per point (see PointEvent.Valid).
	Trace    trace.Trace
	Valid    []bool
	Complete bool
	// Points are the stepped-sine points of the last (or current) sweep,
	// in the order measured.
	Points []PointEvent
	// Problems lists every problem raised during the run, most serious
	// first.
	Problems []Problem
	// Latency is the round-trip latency in frames; LatencyFound tells
	// whether it was measured.
	Latency      int
	LatencyFound bool
	// Timing gives the run's audio and wall time.
	Timing Timing
}

// Timing compares the audio time a run took with its minimum.
type Timing struct {
	// Rate is the sample rate in frames per second.
	Rate int
	// AudioFrames counts the frames captured from the start of the run to
	// its end, start-up included.
	AudioFrames int64
	// SweepFrames is the audio time of the last complete stepped sweep:
	// from the output index of its first step to the capture of the end
	// of its last integration block, latency included.
	SweepFrames int64
	// MinFrames is that sweep's minimum: the sum over its points of the
	// least settling time (max(MinSettle, SettleCycles periods) plus
	// NetworkSettle) and the least integration length (a whole number of
	// cycles of at least MinIntegrate and IntegrateCycles periods).
	MinFrames int64
	// Points is the number of points in that sweep.
	Points int
	// Wall is the wall-clock time Run took.
	Wall time.Duration
}

// Seconds converts frames to seconds at the timing's rate.
func (t Timing) Seconds(frames int64) float64 {
	if t.Rate == 0 {
		return math.NaN()
	}
	return float64(frames) / float64(t.Rate)
}

// New returns an engine for stream s. It does not touch the stream; Run
// does.
func New(s audio.Stream, cfg Config) *Engine {
	n := cfg.EventBuffer
	if n <= 0 {
		n = 256
	}
	return &Engine{s: s, cfg: cfg, events: make(chan Event, n)}
}

// Events returns the channel of events. It is closed when Run returns;
// the last event of a failed run is an [ErrorEvent].
func (e *Engine) Events() <-chan Event { return e.events }

// Result returns what the run has measured so far; after Run returns it
// is complete.
func (e *Engine) Result() Result {
	e.mu.Lock()
	defer e.mu.Unlock()
	r := e.result
	r.Trace.Points = append([]trace.Point(nil), r.Trace.Points...)
	r.Trace.Meta = append([]trace.MetaItem(nil), r.Trace.Meta...)
	r.Valid = append([]bool(nil), r.Valid...)
	r.Points = append([]PointEvent(nil), r.Points...)
	r.Problems = append([]Problem(nil), r.Problems...)
	return r
}

// Run performs the measurement on the calling goroutine and returns when
// it ends: nil when the sweep (or average, or MaxDuration of a repeating
// run) finished; ctx.Err() when ctx was cancelled; an error wrapping
// audio.ErrDeviceLost when the device was lost; ErrConfig, ErrNoSignal or
// ErrTimeLimit otherwise. It starts no goroutine. Before returning it
// queues a faded end to the stimulus, sends the remaining events (waiting
// up to DrainTimeout for a slow consumer) and closes the events channel.
// Call it once.
func (e *Engine) Run(ctx context.Context) (err error) {
	if !e.ran.CompareAndSwap(false, true) {
		return ErrRunTwice
	}
	start := time.Now()
	r := &run{e: e, s: e.s, out: &outbox{ch: e.events}}
	defer func() {
		r.finish(err, time.Since(start))
		grace := r.cfg.DrainTimeout
		if grace <= 0 {
			grace = 500 * time.Millisecond
		}
		r.out.drain(grace)
	}()
	if err = r.setup(); err != nil {
		return err
	}
	return r.loop(ctx)
}
