package audio

import (
	"fmt"
	"math"
	"sync/atomic"
	"time"
)

// OutputConfig sets the output stage. The zero value stands for
// [DefaultOutputConfig] wherever an OutputConfig is embedded in a larger
// configuration.
type OutputConfig struct {
	// LevelDBFS is the output level, the peak of a full-scale stimulus, in
	// dBFS; at most CapDBFS; −Inf is silence. Default −20.
	LevelDBFS float64
	// CapDBFS is the hard cap: no level above it is accepted and no output
	// sample exceeds it, in dBFS; at most 0. Default −6.
	CapDBFS float64
	// FadeMS is the length of the raised-cosine ramp at start, stop, level
	// change and unmute, in milliseconds; 1…5000. Default 50.
	FadeMS float64
	// MuteMS is the length of the ramp to silence on Mute, in
	// milliseconds; 0.1…20. Default 5.
	MuteMS float64
}

// DefaultOutputConfig returns the defaults: −20 dBFS, capped at −6 dBFS,
// 50 ms fades, 5 ms mute.
func DefaultOutputConfig() OutputConfig {
	return OutputConfig{LevelDBFS: -20, CapDBFS: -6, FadeMS: 50, MuteMS: 5}
}

// Limits of OutputConfig.
const (
	minFadeMS, maxFadeMS = 1.0, 5000.0
	minMuteMS, maxMuteMS = 0.1, 20.0
)

// Validate checks every field is in range.
func (c OutputConfig) Validate() error {
	switch {
	case math.IsNaN(c.CapDBFS) || c.CapDBFS > 0 || math.IsInf(c.CapDBFS, 0):
		return fmt.Errorf("audio: output cap %g dBFS is out of range; use a finite value of 0 dBFS or less (default -6)", c.CapDBFS)
	case !(c.FadeMS >= minFadeMS && c.FadeMS <= maxFadeMS):
		return fmt.Errorf("audio: output fade %g ms is out of range; use %g…%g ms (default 50)", c.FadeMS, minFadeMS, maxFadeMS)
	case !(c.MuteMS >= minMuteMS && c.MuteMS <= maxMuteMS):
		return fmt.Errorf("audio: mute ramp %g ms is out of range; use %g…%g ms (default 5)", c.MuteMS, minMuteMS, maxMuteMS)
	}
	return checkLevel(c.LevelDBFS, c.CapDBFS)
}

// LevelError reports a level the output stage refused.
type LevelError struct {
	// Level is the requested level in dBFS (may be NaN or +Inf).
	Level float64
	// Cap is the stage's cap in dBFS.
	Cap float64
}

func (e *LevelError) Error() string {
	if math.IsNaN(e.Level) || math.IsInf(e.Level, 1) {
		return fmt.Sprintf("audio: output level %g dBFS is not a level; use a number at most the cap of %g dBFS", e.Level, e.Cap)
	}
	return fmt.Sprintf("audio: output level %g dBFS is above the cap of %g dBFS; lower the level or raise the cap in the configuration (at most 0 dBFS)", e.Level, e.Cap)
}

func checkLevel(level, cap float64) error {
	if math.IsNaN(level) || level > cap {
		return &LevelError{Level: level, Cap: cap}
	}
	return nil
}

// dbToAmp converts dBFS to a linear gain; −Inf gives 0.
func dbToAmp(db float64) float64 { return math.Pow(10, db/20) }

// OutputStage turns the mono stimulus into the output channels: it applies
// the level with raised-cosine ramps, never lets a sample exceed the cap, and
// puts the result on the stimulus outputs of the [Routing] (silence on the
// others).
//
// Every change ramps the gain g from its current value g0 to the new target
// g1 along a raised cosine (the rising half of a Hann window):
//
//	g(k) = g0 + (g1 − g0)·(1 − cos(πk/N))/2,  k = 1…N
//
// so the gain has no step and the largest change per sample is
// |g1 − g0|·π/(2N). N is FadeMS long for the fade-in at start, the fade-out
// at stop, a level change and unmute, and MuteMS long for a mute, which ends
// at exactly zero. A change takes effect at the start of the next device
// callback, so a mute is silent within one period plus MuteMS of the call,
// plus the latency of the device's own buffer.
//
// The setters may be called from any goroutine at any time; they and the
// callback communicate through atomics only.
type OutputStage struct {
	outputs  int
	mask     ChannelMask
	capDB    float64
	capAmp   float64
	fadeDur  time.Duration
	muteDur  time.Duration
	fadeRamp []float64 // (1 − cos(πk/N))/2 for k = 0…N
	muteRamp []float64

	levelDB  atomic.Uint64 // float64 bits
	levelAmp atomic.Uint64 // float64 bits
	muted    atomic.Bool
	stopping atomic.Bool
	gainNow  atomic.Uint64 // float64 bits, published by the callback
	clamped  atomic.Int64

	// Callback-owned ramp state.
	gain     float64
	from, to float64
	ramp     []float64
	k        int
	sawMute  bool
}

// newOutputStage returns a stage for rate frames per second and outputs
// channels, at gain zero: the first callback fades in to the level.
func newOutputStage(rate, outputs int, mask ChannelMask, cfg OutputConfig) (*OutputStage, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	o := &OutputStage{
		outputs:  outputs,
		mask:     mask,
		capDB:    cfg.CapDBFS,
		capAmp:   dbToAmp(cfg.CapDBFS),
		fadeRamp: raisedCosine(rampLength(rate, cfg.FadeMS)),
		muteRamp: raisedCosine(rampLength(rate, cfg.MuteMS)),
	}
	o.fadeDur = time.Duration(float64(len(o.fadeRamp)-1) / float64(rate) * float64(time.Second))
	o.muteDur = time.Duration(float64(len(o.muteRamp)-1) / float64(rate) * float64(time.Second))
	o.ramp = o.fadeRamp
	o.k = len(o.ramp) - 1 // no ramp in progress
	o.store(cfg.LevelDBFS)
	return o, nil
}

// rampLength returns the number of samples in a ramp of ms milliseconds,
// at least 1.
func rampLength(rate int, ms float64) int {
	return max(1, int(math.Round(float64(rate)*ms/1000)))
}

// raisedCosine returns (1 − cos(πk/n))/2 for k = 0…n; the last value is
// exactly 1.
func raisedCosine(n int) []float64 {
	w := make([]float64, n+1)
	for k := range w {
		w[k] = (1 - math.Cos(math.Pi*float64(k)/float64(n))) / 2
	}
	w[n] = 1
	return w
}

func (o *OutputStage) store(db float64) {
	o.levelDB.Store(math.Float64bits(db))
	o.levelAmp.Store(math.Float64bits(dbToAmp(db)))
}

// SetLevel sets the output level in dBFS (the peak of a full-scale
// stimulus); the gain ramps to it over the fade time. A level above the cap,
// NaN or +Inf is refused with a [*LevelError] and changes nothing; −Inf is
// silence.
func (o *OutputStage) SetLevel(dBFS float64) error {
	if err := checkLevel(dBFS, o.capDB); err != nil {
		return err
	}
	o.store(dBFS)
	return nil
}

// Level returns the level set, in dBFS.
func (o *OutputStage) Level() float64 { return math.Float64frombits(o.levelDB.Load()) }

// Cap returns the hard cap in dBFS.
func (o *OutputStage) Cap() float64 { return o.capDB }

// Fade returns the length of a fade (start, stop, level change, unmute).
func (o *OutputStage) Fade() time.Duration { return o.fadeDur }

// MuteTime returns the length of the ramp to silence on Mute.
func (o *OutputStage) MuteTime() time.Duration { return o.muteDur }

// Mask returns the outputs that carry the stimulus.
func (o *OutputStage) Mask() ChannelMask { return o.mask }

// Mute silences the output at once: the gain falls to exactly zero along a
// MuteTime raised-cosine ramp from the next callback on. The level is kept
// for Unmute.
func (o *OutputStage) Mute() { o.muted.Store(true) }

// Unmute fades the output back in to the level over the fade time.
func (o *OutputStage) Unmute() { o.muted.Store(false) }

// Muted reports whether the output is muted.
func (o *OutputStage) Muted() bool { return o.muted.Load() }

// Gain returns the linear gain applied to the last sample of the last
// callback (0 before the first one).
func (o *OutputStage) Gain() float64 { return math.Float64frombits(o.gainNow.Load()) }

// fadeOut starts the fade to silence that precedes stopping the device;
// there is no way back.
func (o *OutputStage) fadeOut() { o.stopping.Store(true) }

// begin is called by the callback before rendering: it picks up a new
// target and starts a ramp toward it.
func (o *OutputStage) begin() {
	muted := o.muted.Load()
	target := 0.0
	if !muted && !o.stopping.Load() {
		target = math.Float64frombits(o.levelAmp.Load())
	}
	switch {
	case muted && !o.sawMute && (o.gain != 0 || o.to != 0):
		o.from, o.to, o.ramp, o.k = o.gain, 0, o.muteRamp, 0
	case target != o.to:
		o.from, o.to, o.ramp, o.k = o.gain, target, o.fadeRamp, 0
	}
	o.sawMute = muted
}

// next advances the ramp by one sample and returns the gain for it.
func (o *OutputStage) next() float64 {
	if n := len(o.ramp) - 1; o.k < n {
		o.k++
		if o.k == n {
			o.gain = o.to
		} else {
			o.gain = o.from + (o.to-o.from)*o.ramp[o.k]
		}
	}
	return o.gain
}

// render writes len(src) frames to dst (interleaved, outputs channels):
// src[i] times the gain, limited to the cap, on the stimulus outputs.
func (o *OutputStage) render(dst []float32, src []float64) {
	ch := o.outputs
	dst = dst[:len(src)*ch]
	var clamped int64
	for i, s := range src {
		v := s * o.next()
		switch {
		case v > o.capAmp:
			v, clamped = o.capAmp, clamped+1
		case v < -o.capAmp:
			v, clamped = -o.capAmp, clamped+1
		case v != v: // NaN
			v, clamped = 0, clamped+1
		}
		f := float32(v)
		frame := dst[i*ch : i*ch+ch]
		for c := range frame {
			if o.mask&(1<<c) != 0 {
				frame[c] = f
			} else {
				frame[c] = 0
			}
		}
	}
	if clamped != 0 {
		o.clamped.Add(clamped)
	}
}

// silence writes frames frames of silence to dst and advances the ramp.
func (o *OutputStage) silence(dst []float32, frames int) {
	clear(dst[:frames*o.outputs])
	if n := len(o.ramp) - 1; frames > 0 && o.k < n {
		steps := min(frames, n-o.k)
		o.k += steps - 1
		o.next()
	}
}

// end is called by the callback after rendering: it publishes the gain.
func (o *OutputStage) end() { o.gainNow.Store(math.Float64bits(o.gain)) }

// silent reports whether the stage has faded out for good.
func (o *OutputStage) silent() bool { return o.stopping.Load() && o.Gain() == 0 }
