package audio

import (
	"context"
	"fmt"
	"sync/atomic"
	"time"

	"tonetrace/audio/ring"
)

// CoreConfig sets up a [Core]. Zero fields take the defaults stated.
type CoreConfig struct {
	// Rate is the sample rate in frames per second; 1000…768000. Required.
	Rate int
	// InChannels and OutChannels are the channel counts of the device
	// buffers; 1…MaxChannels. Required.
	InChannels, OutChannels int
	// PeriodFrames is the nominal number of frames per callback (the
	// device may vary it); it sets Lead, the polling interval of Read and
	// Write and the default stall timeout. Default Rate/50 (20 ms).
	PeriodFrames int
	// CaptureFrames is the capacity of the capture ring in frames, rounded
	// up to a power of two: how far the engine may fall behind before
	// frames are dropped. Default 2 s.
	CaptureFrames int
	// PlayoutFrames is the capacity of the playout queue in samples,
	// rounded up to a power of two: how far ahead the engine may queue the
	// stimulus. Default 0.5 s; at least 4 periods.
	PlayoutFrames int
	// Routing chooses the stimulus outputs and the response and reference
	// inputs; the zero value is the default (see [Routing]).
	Routing Routing
	// Output sets level, cap and ramps; the zero value is
	// [DefaultOutputConfig].
	Output OutputConfig
	// StallTimeout is how long Read and Write wait for the device to
	// deliver any frame before they report [ErrDeviceLost]. Default the
	// larger of 1 s and 10 periods.
	StallTimeout time.Duration
}

// Core is the device-independent half of a stream: the capture ring, the
// playout queue, the output stage and the counters. A backend creates one
// with [NewCore], calls [Core.Start] when the device runs, and from the
// device callback calls [Core.ProcessDuplex] (one device for input and
// output) or [Core.ProcessCapture] and [Core.ProcessPlayback] (separate
// devices). The Process methods never allocate, lock, log or block.
//
// Core implements every method of [Stream] but Close; a backend adds Close
// and calls [Core.Shut] in it.
type Core struct {
	rate, in, out, period int
	routing               Routing
	capture               *ring.Ring[float32]
	playout               *ring.Ring[float64]
	stage                 *OutputStage
	stall                 time.Duration
	poll                  time.Duration

	// Shared between the callbacks and the engine.
	callbacks      atomic.Int64
	captured       atomic.Int64
	played         atomic.Int64
	stimulus       atomic.Int64
	underruns      atomic.Int64
	underrunFrames atomic.Int64
	late           atomic.Int64
	open           atomic.Bool // a stimulus is in progress: running dry is an underrun
	started        atomic.Bool
	lost           atomic.Bool
	closed         atomic.Bool

	// Owned by the playback callback.
	playPos    int64
	inUnderrun bool

	// Owned by the reader.
	readWatch watch
	readTimer *time.Timer

	// Owned by the writer.
	writing    bool // between the first Write of a stimulus and Finish
	writeWatch watch
	writeTimer *time.Timer
}

// watch notices a frame counter that stopped moving.
type watch struct {
	count int64
	since time.Time
}

// NewCore checks cfg and returns a core with empty rings, not started.
func NewCore(cfg CoreConfig) (*Core, error) {
	if cfg.Rate < 1000 || cfg.Rate > 768000 {
		return nil, fmt.Errorf("audio: sample rate %d Hz is out of range; use 1000…768000 Hz (usually 44100 or 48000)", cfg.Rate)
	}
	rt, err := cfg.Routing.Resolve(cfg.InChannels, cfg.OutChannels)
	if err != nil {
		return nil, err
	}
	if cfg.PeriodFrames == 0 {
		cfg.PeriodFrames = cfg.Rate / 50
	}
	if cfg.PeriodFrames < 1 || cfg.PeriodFrames > cfg.Rate*2 {
		return nil, fmt.Errorf("audio: period of %d frames is out of range; use 1…%d frames (2 s)", cfg.PeriodFrames, cfg.Rate*2)
	}
	if cfg.CaptureFrames == 0 {
		cfg.CaptureFrames = 2 * cfg.Rate
	}
	if cfg.PlayoutFrames == 0 {
		cfg.PlayoutFrames = cfg.Rate / 2
	}
	cfg.PlayoutFrames = max(cfg.PlayoutFrames, 4*cfg.PeriodFrames)
	if cfg.CaptureFrames < 2*cfg.PeriodFrames || cfg.CaptureFrames > 60*cfg.Rate || cfg.PlayoutFrames > 60*cfg.Rate {
		return nil, fmt.Errorf("audio: capture ring of %d and playout queue of %d frames: each must hold 2 periods (%d frames) and at most 60 s", cfg.CaptureFrames, cfg.PlayoutFrames, 2*cfg.PeriodFrames)
	}
	if cfg.Output == (OutputConfig{}) {
		cfg.Output = DefaultOutputConfig()
	}
	stage, err := newOutputStage(cfg.Rate, cfg.OutChannels, rt.Stimulus, cfg.Output)
	if err != nil {
		return nil, err
	}
	period := time.Duration(float64(cfg.PeriodFrames) / float64(cfg.Rate) * float64(time.Second))
	if cfg.StallTimeout == 0 {
		cfg.StallTimeout = max(time.Second, 10*period)
	}
	if cfg.StallTimeout < 0 {
		return nil, fmt.Errorf("audio: stall timeout %v is negative; use a positive duration (default 1 s)", cfg.StallTimeout)
	}
	c := &Core{
		rate:       cfg.Rate,
		in:         cfg.InChannels,
		out:        cfg.OutChannels,
		period:     cfg.PeriodFrames,
		routing:    rt,
		capture:    ring.New[float32](cfg.CaptureFrames, cfg.InChannels),
		playout:    ring.New[float64](cfg.PlayoutFrames, 1),
		stage:      stage,
		stall:      cfg.StallTimeout,
		poll:       min(max(period/4, time.Millisecond), 20*time.Millisecond),
		readTimer:  time.NewTimer(time.Hour),
		writeTimer: time.NewTimer(time.Hour),
	}
	c.readTimer.Stop()
	c.writeTimer.Stop()
	return c, nil
}

// Rate returns the sample rate in frames per second.
func (c *Core) Rate() int { return c.rate }

// Channels returns the number of input and output channels.
func (c *Core) Channels() (in, out int) { return c.in, c.out }

// Routing returns the resolved routing (defaults filled in).
func (c *Core) Routing() Routing { return c.routing }

// Output returns the output stage.
func (c *Core) Output() *OutputStage { return c.stage }

// Lead returns two periods in frames: the least distance from PlayIndex at
// which a sample queued now still plays on time.
func (c *Core) Lead() int { return 2 * c.period }

// PlayIndex returns the index of the next output frame the callback will
// produce.
func (c *Core) PlayIndex() int64 { return c.played.Load() }

// WriteIndex returns the output frame index at which the sample after the
// last one queued will play (writer side).
func (c *Core) WriteIndex() int64 { return c.playout.WriteIndex() }

// Stats returns the counters.
func (c *Core) Stats() Stats {
	return Stats{
		Callbacks:      c.callbacks.Load(),
		CaptureFrames:  c.captured.Load(),
		PlayFrames:     c.played.Load(),
		StimulusFrames: c.stimulus.Load(),
		Overruns:       c.capture.Overruns(),
		Dropped:        c.capture.Dropped(),
		Underruns:      c.underruns.Load(),
		UnderrunFrames: c.underrunFrames.Load(),
		Late:           c.late.Load(),
		Clamped:        c.stage.clamped.Load(),
	}
}

// Start tells the core the device is running: from now on Read and Write
// report [ErrDeviceLost] when no frame arrives within the stall timeout.
func (c *Core) Start() { c.started.Store(true) }

// SetLost tells the core the backend learned the device is gone (a stop
// it did not ask for); Read and Write return [ErrDeviceLost] once no
// captured frames are left. Safe to call from a device thread.
func (c *Core) SetLost() { c.lost.Store(true) }

// Lost reports whether the device has been found lost (by the backend or
// by a stalled frame counter).
func (c *Core) Lost() bool { return c.lost.Load() }

// Shut marks the core closed: blocked and later Read and Write calls return
// [ErrClosed]. The backend calls it from Close after stopping the device.
func (c *Core) Shut() { c.closed.Store(true) }

// FadeOut fades the output to silence and waits, polling, until the
// callback has played the fade or timeout passes; it reports whether the
// output is silent. Nothing can be played after it.
func (c *Core) FadeOut(timeout time.Duration) bool {
	c.stage.fadeOut()
	deadline := time.Now().Add(timeout)
	for !c.stage.silent() {
		if c.lost.Load() || c.closed.Load() || !c.started.Load() || time.Now().After(deadline) {
			return c.stage.silent()
		}
		time.Sleep(c.poll)
	}
	return true
}

// ProcessDuplex is the body of a duplex device callback: it stores the
// captured frames of in (interleaved, InChannels) and fills out
// (interleaved, OutChannels) with the next frames of the schedule. Both
// must hold frames frames; it panics otherwise (a backend bug).
func (c *Core) ProcessDuplex(out, in []float32, frames int) {
	c.callbacks.Add(1)
	c.captureFrames(in, frames)
	c.playFrames(out, frames)
}

// ProcessCapture is the body of a capture-only device callback (separate
// devices): it stores the frames of in (interleaved, InChannels).
func (c *Core) ProcessCapture(in []float32, frames int) {
	c.callbacks.Add(1)
	c.captureFrames(in, frames)
}

// ProcessPlayback is the body of a playback-only device callback (separate
// devices): it fills out (interleaved, OutChannels) with frames frames.
func (c *Core) ProcessPlayback(out []float32, frames int) {
	c.callbacks.Add(1)
	c.playFrames(out, frames)
}

func (c *Core) captureFrames(in []float32, frames int) {
	c.capture.TryWrite(in[:frames*c.in])
	c.captured.Add(int64(frames))
}

// playFrames renders frames output frames: queued stimulus where the
// schedule has it, silence elsewhere, all through the output stage.
func (c *Core) playFrames(out []float32, frames int) {
	ch := c.out
	out = out[:frames*ch]
	o := c.stage
	o.begin()
	open := c.open.Load()
	pos := c.playPos
	var stim, under, late int64
	for i := 0; i < frames; {
		a, b, first := c.playout.Peek()
		avail := int64(len(a) + len(b))
		switch {
		case avail == 0: // nothing queued
			n := frames - i
			o.silence(out[i*ch:], n)
			if open {
				under += int64(n)
				if !c.inUnderrun {
					c.inUnderrun = true
					c.underruns.Add(1)
				}
			}
			i, pos = frames, pos+int64(n)
		case first > pos: // a hole in the schedule: silence until first
			n := int(min(first-pos, int64(frames-i)))
			o.silence(out[i*ch:], n)
			i, pos = i+n, pos+int64(n)
		case first < pos: // too late to play: discard
			n := min(pos-first, avail)
			c.playout.Consume(int(n))
			late += n
		default:
			c.inUnderrun = false
			run := a[:min(len(a), frames-i)]
			o.render(out[i*ch:], run)
			c.playout.Consume(len(run))
			stim += int64(len(run))
			i, pos = i+len(run), pos+int64(len(run))
		}
	}
	c.playPos = pos
	o.end()
	c.played.Store(pos)
	if stim != 0 {
		c.stimulus.Add(stim)
	}
	if under != 0 {
		c.underrunFrames.Add(under)
	}
	if late != 0 {
		c.late.Add(late)
	}
}

// Read waits until at least one captured frame is ready and copies up to
// len(dst[0]) consecutive frames into dst, one slice per input channel; see
// [Stream.Read]. It panics when len(dst) is not the input channel count or
// a dst[c] is shorter than dst[0] (programmer mistakes). Call it from one
// goroutine.
func (c *Core) Read(ctx context.Context, dst [][]float64) (n int, first int64, err error) {
	if len(dst) != c.in {
		panic(fmt.Sprintf("audio: Read: %d destination channels for a stream with %d inputs", len(dst), c.in))
	}
	want := len(dst[0])
	for ch := range dst {
		if len(dst[ch]) < want {
			panic(fmt.Sprintf("audio: Read: dst[%d] has %d samples, dst[0] %d", ch, len(dst[ch]), want))
		}
	}
	for {
		a, b, first := c.capture.Peek()
		if c.closed.Load() {
			return 0, first, ErrClosed
		}
		if avail := (len(a) + len(b)) / c.in; avail > 0 || want == 0 {
			n := min(avail, want)
			na := min(n, len(a)/c.in)
			deinterleave(dst, 0, a[:na*c.in])
			deinterleave(dst, na, b[:(n-na)*c.in])
			c.capture.Consume(n)
			return n, first, nil
		}
		if err := c.health(&c.readWatch, &c.captured); err != nil {
			return 0, first, err
		}
		if err := c.wait(ctx, c.readTimer); err != nil {
			return 0, first, err
		}
	}
}

// deinterleave copies the interleaved frames of src into dst[c][at:].
func deinterleave(dst [][]float64, at int, src []float32) {
	ch := len(dst)
	for c, d := range dst {
		d = d[at : at+len(src)/ch]
		for i := range d {
			d[i] = float64(src[i*ch+c])
		}
	}
}

// Write queues src after the samples already queued; see [Stream.Write].
// Call Write, WriteAt and Finish from one goroutine.
func (c *Core) Write(ctx context.Context, src []float64) (n int, err error) {
	if !c.writing {
		c.skipTo(c.PlayIndex() + int64(c.Lead()))
	}
	return c.queue(ctx, src)
}

// WriteAt queues src to start at output frame at; see [Stream.WriteAt].
func (c *Core) WriteAt(ctx context.Context, at int64, src []float64) (n int, err error) {
	if wi := c.playout.WriteIndex(); at < wi {
		return 0, fmt.Errorf("audio: WriteAt frame %d is before the end of the queued stimulus (frame %d); write at WriteIndex() or later", at, wi)
	}
	c.skipTo(at)
	return c.queue(ctx, src)
}

// Finish marks the end of the stimulus queued so far; see [Stream.Finish].
func (c *Core) Finish() {
	c.writing = false
	c.open.Store(false)
}

// skipTo moves the write position forward to at, if it is behind.
func (c *Core) skipTo(at int64) {
	if wi := c.playout.WriteIndex(); at > wi {
		c.playout.Skip(at - wi)
	}
}

// queue copies src into the playout queue, waiting while it is full.
func (c *Core) queue(ctx context.Context, src []float64) (n int, err error) {
	for {
		if err := c.health(&c.writeWatch, &c.played); err != nil {
			return n, err
		}
		n += c.playout.Write(src[n:])
		if n > 0 && !c.writing {
			// Only now, with samples queued, is running dry an underrun.
			c.writing = true
			c.open.Store(true)
		}
		if n == len(src) {
			return n, nil
		}
		if err := c.wait(ctx, c.writeTimer); err != nil {
			return n, err
		}
	}
}

// health returns ErrClosed, ErrDeviceLost (also when the counter has not
// moved for the stall timeout since the core started) or nil.
func (c *Core) health(w *watch, counter *atomic.Int64) error {
	if c.closed.Load() {
		return ErrClosed
	}
	if c.lost.Load() {
		return ErrDeviceLost
	}
	if !c.started.Load() {
		return nil
	}
	now := time.Now()
	if cnt := counter.Load(); cnt != w.count || w.since.IsZero() {
		w.count, w.since = cnt, now
	} else if now.Sub(w.since) > c.stall {
		c.lost.Store(true)
		return ErrDeviceLost
	}
	return nil
}

// wait sleeps one polling interval or until ctx is done.
func (c *Core) wait(ctx context.Context, t *time.Timer) error {
	t.Reset(c.poll)
	select {
	case <-ctx.Done():
		t.Stop()
		return ctx.Err()
	case <-t.C:
		return nil
	}
}
