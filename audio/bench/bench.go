// Package bench is tonetrace's virtual bench: a simulated stereo audio
// interface with a network under test wired to it, and wiring faults to
// inject. It implements [audio.Stream] exactly as a real device does — the
// same [audio.Core] runs the capture ring, the playout schedule and the
// output stage — so it is both the demo that needs no hardware and the test
// rig of the measurement engine.
//
// # The wiring
//
//	          ┌─ output 1 ─ Rs ─ network under test ─┬─ input 1 (response)
//	DAC ──────┤                                      └ RL ∥ CL
//	(stimulus │
//	 per the  └─ output 2 ─ Rs ─ lead (0.1 Ω) ───────┬─ input 2 (reference)
//	 Routing)                                        └ RL ∥ CL
//
// The output stage puts the stimulus on the outputs the Routing names. Both
// outputs have the source resistance Rs and both inputs the load RL ∥ CL of
// the [Config.Fixture] (default 100 Ω, 20 kΩ ∥ 100 pF): the fixture that
// [Bench.Prediction] uses is the one the simulated circuit sees. Each path
// is a time-domain simulation (package dsp/simulate) of the modified nodal
// analysis of the network or of the lead, driven through the fixture; both
// simulators use the same band-limited interpolation kernel, which plays the
// part of the DAC's reconstruction filter and delays both paths alike.
//
// Each input then has what a real one has ([Interface]): an AC-coupling
// high-pass near 2.4 Hz, a gain, a second-order anti-alias low-pass at
// 0.45 of the rate, a white noise floor at −100 dBFS RMS and hard clipping
// at ±1 (full scale); the two inputs differ slightly in coupling corner,
// gain and anti-alias corner. The round trip has a latency of a few
// milliseconds of converter delay plus buffer periods, in whole frames
// ([Bench.Latency]). In the ratio response/reference everything the two
// inputs share cancels — that is what the reference input is for — and
// what remains is the inputs' small mismatch (at most 0.025 dB and 0.15°
// with the defaults) and the loading of output 2 by the reference input
// ([Bench.Expected]).
//
// # The device
//
// A goroutine owned by the Bench plays the device: period by period it
// computes the captured frames, calls the core's ProcessDuplex (or, under
// the drift and dropout faults, ProcessPlayback and ProcessCapture, as
// separate devices or lost frames need) and runs the new output frames
// through the circuit.
//
// With Config.Paced it runs in real time, one period per period of
// wall-clock time, for the screen. Otherwise it runs as fast as the engine
// lets it, for tests, but never further ahead than a real device would be:
//
//   - it computes a period only when the capture ring has room for it; when
//     the engine does not read, it waits up to one period of real time and
//     then captures anyway (the ring overruns, as on a real device, instead
//     of stalling the stream);
//   - it plays a period only when the engine has queued its stimulus; while
//     a Write is under way, or a stimulus has been written and not yet
//     finished (Finish), it waits up to 100 ms of real time for more (so
//     neither the Write's start, PlayIndex()+Lead(), nor the next samples of
//     a running stimulus are overtaken by an engine busy computing); when
//     the engine has queued nothing and no stimulus runs it waits up to a
//     millisecond before playing silence (an idle bench runs at about 20×
//     real time).
//
// Close stops the goroutine.
//
// # Faults
//
// [Fault] lists the faults ("swap", "dead-ref", "dead-dut", "clip", "hum",
// "invert", "dropout", "drift", "unplug"); [ParseFaults] reads them from a
// comma-separated list. Randomness (noise, hum phase, dropout times) comes
// from PCG sources seeded by Config.Seed: the noise, the hum and the
// dropouts at a given capture index are the same on every run.
//
// # Live tuning
//
// [Bench.SetValue] changes a component of the running network without a
// click; [Bench.Prediction] and [Bench.Expected] follow it.
package bench

import (
	"context"
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"
	"sync"
	"sync/atomic"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
	"tonetrace/dsp/simulate"
)

// Config sets up a bench. Zero fields take the defaults stated.
type Config struct {
	// Rate is the sample rate in frames per second; 8000…384000. Default
	// 48000.
	Rate int
	// PeriodFrames is the number of frames per simulated device period;
	// when not 0 it overrides PeriodMS; 16…Rate/2.
	PeriodFrames int
	// PeriodMS is the period in milliseconds when PeriodFrames is 0;
	// 5…500. Default 20.
	PeriodMS int
	// Paced runs the bench in real time, one period per period of
	// wall-clock time, for the screen; false runs it as fast as the
	// engine reads and writes, for tests (see the package
	// documentation). Default false.
	Paced bool
	// Netlist is the network under test; nil means [DefaultNetlist].
	// Its input node is driven by output 1, its output node feeds input 1.
	// Networks the time-domain simulator refuses (unstable ones, an
	// output following the input's third derivative) are refused here.
	Netlist *netlist.Netlist
	// Fixture is the interface's output resistance (SourceOhms) and input
	// impedance (LoadOhms ∥ LoadFarads), the same for both channels. The
	// zero value means [DefaultFixture] (100 Ω, 20 kΩ ∥ 100 pF); for an
	// ideal source and no load give {SourceOhms: 0, LoadOhms: +Inf}.
	Fixture mna.Fixture
	// Routing says which outputs carry the stimulus and which inputs the
	// engine should take as response and reference (zero value: stimulus
	// on both outputs, response input 1, reference input 2). The wiring
	// itself is fixed: output 1 → network → input 1, output 2 → input 2.
	Routing audio.Routing
	// Output sets the output stage: level, cap, fades (zero value:
	// audio.DefaultOutputConfig, −20 dBFS capped at −6 dBFS).
	Output audio.OutputConfig
	// Seed seeds every random source of the bench.
	Seed uint64
	// Faults are the faults to inject; none by default. Each may appear
	// once.
	Faults []Fault
	// Interface models the interface's imperfections; the zero value
	// means [DefaultInterface].
	Interface Interface
	// CaptureMS is how far, in milliseconds, the engine may fall behind
	// before captured frames are dropped; also how far an unpaced bench
	// runs ahead of the reader. 2 periods…60000. Default 2000.
	CaptureMS int
	// PlayoutMS is how far ahead, in milliseconds, the engine may queue
	// the stimulus; 4 periods…60000. Default 500.
	PlayoutMS int
	// StallTimeout is how long Read and Write wait for any frame before
	// they report audio.ErrDeviceLost. Default the larger of 1 s and 10
	// periods.
	StallTimeout time.Duration
}

// simOptions returns the simulator options of both paths: a kernel flat to
// 0.42 of the rate (20.16 kHz at 48 kHz), with images at −118 dB, so the
// whole audio band is exact and the network and the lead are delayed alike.
func simOptions() simulate.Options { return simulate.Options{HalfLength: 24, Passband: 0.42} }

// idleWait is how long an unpaced bench waits for a Write when the engine
// has not queued the next period's stimulus; writeWait how long it waits
// while a Write is under way (a safety net: the Write signals).
const (
	idleWait  = time.Millisecond
	writeWait = 100 * time.Millisecond
)

// Bench is a running virtual bench. It implements [audio.Stream]; Read is
// called from one goroutine, Write, WriteAt, Finish and WriteIndex from one
// goroutine, the rest from anywhere.
type Bench struct {
	core      *audio.Core
	rig       *rig // owned by the goroutine
	paced     bool
	periodDur time.Duration
	latency   int
	faults    []Fault
	iface     Interface
	fixture   mna.Fixture
	captureN  int64 // capacity of the core's capture ring in frames

	mu       sync.Mutex   // guards net and lead
	net      *mna.Network // the network under test, present values
	lead     *mna.Network // the reference loopback
	elements []string     // element names, for messages

	// Reader side.
	readHoles  holeSchedule
	readOffset int64       // frames of holes before the reader's position
	sub, none  [][]float64 // views of dst for the core
	consumed   atomic.Int64
	readSig    chan struct{}

	// Writer side.
	chunk    int
	queuedTo atomic.Int64 // the writer's WriteIndex after its last chunk
	inWrite  atomic.Bool  // a Write or WriteAt is under way
	running  atomic.Bool  // a stimulus is in progress: written to, not yet finished
	writeSig chan struct{}

	holeFrames, dropouts atomic.Int64

	req       chan setRequest
	stop      chan struct{}
	done      chan struct{}
	closeOnce sync.Once
}

var _ audio.Stream = (*Bench)(nil)

// setRequest hands new network equations to the goroutine.
type setRequest struct {
	d     *mna.Descriptor
	reply chan error
}

// Open builds the network and the simulated interface of cfg and starts the
// bench. The output fades in to cfg.Output.LevelDBFS on the first stimulus.
// Close the bench when done.
func Open(cfg Config) (*Bench, error) {
	cfg, err := cfg.withDefaults()
	if err != nil {
		return nil, err
	}
	fs, err := resolveFaults(cfg.Faults)
	if err != nil {
		return nil, err
	}
	period := cfg.PeriodFrames
	if period == 0 {
		period = cfg.Rate * cfg.PeriodMS / 1000
	}
	if err := cfg.Fixture.Validate(); err != nil {
		return nil, fmt.Errorf("bench: Config.Fixture: %w", err)
	}
	net, err := mna.NewNetwork(cfg.Netlist, cfg.Fixture)
	if err != nil {
		return nil, fmt.Errorf("bench: network under test: %w", err)
	}
	lead, err := mna.NewNetwork(leadNetlist(), cfg.Fixture)
	if err != nil {
		return nil, fmt.Errorf("bench: reference loopback: %w", err)
	}
	rate := float64(cfg.Rate)
	simNet, err := simulate.New(net.Descriptor(), rate, simOptions())
	if err != nil {
		return nil, fmt.Errorf("bench: the network under test cannot be simulated: %w", err)
	}
	simLead, err := simulate.New(lead.Descriptor(), rate, simOptions())
	if err != nil {
		return nil, fmt.Errorf("bench: reference loopback: %w", err)
	}
	captureFrames := cfg.Rate * cfg.CaptureMS / 1000
	core, err := audio.NewCore(audio.CoreConfig{
		Rate: cfg.Rate, InChannels: 2, OutChannels: 2, PeriodFrames: period,
		CaptureFrames: captureFrames,
		PlayoutFrames: cfg.Rate * cfg.PlayoutMS / 1000,
		Routing:       cfg.Routing, Output: cfg.Output, StallTimeout: cfg.StallTimeout,
	})
	if err != nil {
		return nil, fmt.Errorf("bench: %w", err)
	}

	ifc := cfg.Interface
	conv := max(int64(math.Round(ifc.ConverterMS*rate/1000)), interpHalf+1)
	delay := conv + int64(ifc.BufferPeriods*period)
	histLen := int64(1) << bits.Len64(uint64(delay+int64(period)+2*interpHalf+8))
	r := &rig{
		core: core, period: period, delay: delay, f: fs,
		net: simNet, lead: simLead,
		ip:       newInterpolator(),
		holes:    noHoles(),
		unplugAt: int64(math.Round(UnplugSeconds * rate)),
		mask:     histLen - 1,
		out:      make([]float32, 2*period),
		in:       make([]float32, 2*maxCapture(period)),
	}
	r.respGain, r.refGain = leadGains(fs)
	if fs.hum {
		r.hum = newHum(cfg.Seed, cfg.Rate)
	}
	if !math.IsInf(ifc.NoiseDBFS, -1) {
		r.sigma = math.Pow(10, ifc.NoiseDBFS/20)
	}
	for c := range 2 {
		r.hp[c] = newHighPass(ifc.CouplingHz[c], rate)
		r.aa[c] = newLowPass2(ifc.AntiAlias[c])
		r.gain[c] = math.Pow(10, ifc.GainDB[c]/20)
		r.noise[c] = rand.New(rand.NewPCG(cfg.Seed, 0x6e6f697365+uint64(c)))
		r.hist[c] = make([]float64, histLen)
		r.x[c] = make([]float64, period)
		r.y[c] = make([]float64, period)
	}

	b := &Bench{
		core: core, rig: r, paced: cfg.Paced,
		periodDur: time.Duration(float64(period) / rate * float64(time.Second)),
		latency:   int(delay) + simNet.Latency(),
		faults:    append([]Fault(nil), cfg.Faults...),
		iface:     ifc,
		fixture:   cfg.Fixture,
		captureN:  int64(1) << bits.Len64(uint64(captureFrames-1)),
		net:       net,
		lead:      lead,
		readHoles: noHoles(),
		sub:       make([][]float64, 2),
		none:      make([][]float64, 2),
		readSig:   make(chan struct{}, 1),
		chunk:     period,
		writeSig:  make(chan struct{}, 1),
		req:       make(chan setRequest),
		stop:      make(chan struct{}),
		done:      make(chan struct{}),
	}
	for _, e := range cfg.Netlist.Elements {
		b.elements = append(b.elements, e.Name)
	}
	r.holeFrames, r.dropouts = &b.holeFrames, &b.dropouts
	if fs.dropout {
		r.holes = newHoles(cfg.Seed, cfg.Rate)
		b.readHoles = newHoles(cfg.Seed, cfg.Rate)
	}
	core.Start()
	go b.run()
	return b, nil
}

// withDefaults fills zero fields and checks ranges.
func (c Config) withDefaults() (Config, error) {
	if c.Rate == 0 {
		c.Rate = 48000
	}
	if c.PeriodMS == 0 {
		c.PeriodMS = 20
	}
	if c.CaptureMS == 0 {
		c.CaptureMS = 2000
	}
	if c.PlayoutMS == 0 {
		c.PlayoutMS = 500
	}
	if c.Netlist == nil {
		c.Netlist = DefaultNetlist()
	}
	if c.Fixture == (mna.Fixture{}) {
		c.Fixture = DefaultFixture()
	}
	if c.Interface == (Interface{}) {
		c.Interface = DefaultInterface()
	}
	if c.Output == (audio.OutputConfig{}) {
		c.Output = audio.DefaultOutputConfig()
	}
	switch {
	case c.Rate < 8000 || c.Rate > 384000:
		return c, fmt.Errorf("bench: sample rate %d Hz is out of range; use 8000…384000 Hz (default 48000)", c.Rate)
	case c.PeriodFrames != 0 && (c.PeriodFrames < 16 || c.PeriodFrames > c.Rate/2):
		return c, fmt.Errorf("bench: period of %d frames is out of range; use 16…%d frames, or 0 to use PeriodMS", c.PeriodFrames, c.Rate/2)
	case c.PeriodFrames == 0 && (c.PeriodMS < 5 || c.PeriodMS > 500):
		return c, fmt.Errorf("bench: period %d ms is out of range; use 5…500 ms (default 20)", c.PeriodMS)
	}
	period := c.PeriodFrames
	if period == 0 {
		period = c.Rate * c.PeriodMS / 1000
	}
	periodMS := float64(period) * 1000 / float64(c.Rate)
	switch {
	case float64(c.CaptureMS) < 2*periodMS || c.CaptureMS > 60000:
		return c, fmt.Errorf("bench: capture buffer of %d ms is out of range; use %.0f…60000 ms (2 periods; default 2000)", c.CaptureMS, math.Ceil(2*periodMS))
	case float64(c.PlayoutMS) < 4*periodMS || c.PlayoutMS > 60000:
		return c, fmt.Errorf("bench: playout buffer of %d ms is out of range; use %.0f…60000 ms (4 periods; default 500)", c.PlayoutMS, math.Ceil(4*periodMS))
	}
	if err := c.Interface.validate(c.Rate); err != nil {
		return c, err
	}
	return c, nil
}

// run is the bench's goroutine: the simulated device.
func (b *Bench) run() {
	defer close(b.done)
	r := b.rig
	timer := time.NewTimer(time.Hour)
	timer.Stop()
	// Paced: the period ends are due at fixed intervals from the start;
	// a bench more than maxBehind periods late (a stalled machine) starts
	// its schedule afresh instead of bursting.
	const maxBehind = 8
	due := time.Now().Add(b.periodDur)
	last := time.Now()
	for {
		if r.lost {
			select {
			case <-b.stop:
				return
			case q := <-b.req:
				b.serve(q)
			}
			continue
		}
		if b.paced {
			if d := time.Until(due); d > 0 {
				if !b.pause(timer, d, nil) {
					return
				}
				continue
			}
			due = due.Add(b.periodDur)
			if time.Since(due) > maxBehind*b.periodDur {
				due = time.Now().Add(b.periodDur)
			}
		} else {
			// Wait for room in the capture ring, at most a period of
			// real time, then for the stimulus, at most idleWait.
			for !b.room() {
				d := time.Until(last.Add(b.periodDur))
				if d <= 0 {
					break
				}
				if !b.pause(timer, d, b.readSig) {
					return
				}
			}
			until := time.Now().Add(idleWait)
			for b.queuedTo.Load() < r.outPos+int64(r.period) {
				// A Write under way, or a stimulus not yet finished, means
				// more is coming: a real device would not outrun an engine
				// that keeps up, so neither does the unpaced bench.
				if b.inWrite.Load() || b.running.Load() {
					until = time.Now().Add(writeWait)
				}
				d := time.Until(until)
				if d <= 0 {
					break
				}
				if !b.pause(timer, d, b.writeSig) {
					return
				}
			}
			select {
			case <-b.stop:
				return
			case q := <-b.req:
				b.serve(q)
			default:
			}
			last = time.Now()
		}
		r.runPeriod()
	}
}

// room reports whether the capture ring can take a period (goroutine).
func (b *Bench) room() bool {
	return b.captureN-(b.rig.capCore-b.consumed.Load()) >= int64(maxCapture(b.rig.period))
}

// pause waits up to d for sig, a request or stop; false means stop.
func (b *Bench) pause(t *time.Timer, d time.Duration, sig <-chan struct{}) bool {
	t.Reset(d)
	defer t.Stop()
	select {
	case <-b.stop:
		return false
	case q := <-b.req:
		b.serve(q)
	case <-sig:
	case <-t.C:
	}
	return true
}

// serve applies new network equations to the running simulator.
func (b *Bench) serve(q setRequest) { q.reply <- b.rig.net.Update(q.d) }

// update hands d to the goroutine and waits for the result.
func (b *Bench) update(d *mna.Descriptor) error {
	q := setRequest{d: d, reply: make(chan error, 1)}
	select {
	case b.req <- q:
	case <-b.done:
		return audio.ErrClosed
	}
	return <-q.reply
}

// signal wakes the goroutine without waiting.
func signal(ch chan struct{}) {
	select {
	case ch <- struct{}{}:
	default:
	}
}

// Rate returns the sample rate in frames per second.
func (b *Bench) Rate() int { return b.core.Rate() }

// Channels returns 2 inputs and 2 outputs.
func (b *Bench) Channels() (in, out int) { return b.core.Channels() }

// Routing returns the resolved routing.
func (b *Bench) Routing() audio.Routing { return b.core.Routing() }

// Output returns the output stage (level, fades, mute).
func (b *Bench) Output() *audio.OutputStage { return b.core.Output() }

// Lead returns two periods in frames; see audio.Stream.
func (b *Bench) Lead() int { return b.core.Lead() }

// PlayIndex returns the index of the next output frame the bench will play.
func (b *Bench) PlayIndex() int64 { return b.core.PlayIndex() }

// WriteIndex returns the output frame index at which the sample after the
// last one queued will play (writer side).
func (b *Bench) WriteIndex() int64 { return b.core.WriteIndex() }

// Finish marks the end of the stimulus queued so far; see audio.Stream.
func (b *Bench) Finish() {
	b.running.Store(false)
	b.core.Finish()
	signal(b.writeSig)
}

// Stats returns the counters of the stream. CaptureFrames includes frames
// lost to FaultDropout (it is the index of the next captured frame);
// Dropped and Overruns count only frames the engine did not read in time.
func (b *Bench) Stats() audio.Stats {
	s := b.core.Stats()
	s.CaptureFrames += b.holeFrames.Load()
	return s
}

// Dropouts returns how many dropouts (FaultDropout) have begun and how many
// captured frames they have lost so far.
func (b *Bench) Dropouts() (episodes, frames int64) {
	return b.dropouts.Load(), b.holeFrames.Load()
}

// Latency returns the round-trip latency in frames: the capture index at
// which a sound played at output frame n arrives is n + Latency(), on both
// inputs (the network's own delay aside). It is the interface's converter
// delay and buffer periods plus the simulators' kernel delay. Under
// FaultDrift it holds at frame 0 and then drifts.
func (b *Bench) Latency() int { return b.latency }

// Faults returns the injected faults.
func (b *Bench) Faults() []Fault { return append([]Fault(nil), b.faults...) }

// Interface returns the interface model in use, defaults filled in.
func (b *Bench) Interface() Interface { return b.iface }

// Write queues mono stimulus samples after those already queued, blocking
// while the playout queue is full; see audio.Stream. It queues them a period
// at a time, so an unpaced bench follows the writer closely.
func (b *Bench) Write(ctx context.Context, src []float64) (n int, err error) {
	b.inWrite.Store(true)
	b.running.Store(true)
	defer b.wrote(false)
	if len(src) == 0 {
		return b.core.Write(ctx, src)
	}
	for n < len(src) {
		k, err := b.core.Write(ctx, src[n:min(len(src), n+b.chunk)])
		n += k
		b.wrote(true)
		if err != nil {
			return n, err
		}
	}
	return n, nil
}

// WriteAt is Write with the output frame index of src[0] given; at must
// not be before WriteIndex(). See audio.Stream.
func (b *Bench) WriteAt(ctx context.Context, at int64, src []float64) (n int, err error) {
	b.inWrite.Store(true)
	b.running.Store(true)
	n, err = b.core.WriteAt(ctx, at, src[:min(len(src), b.chunk)])
	if err != nil || n == len(src) {
		b.wrote(false)
		return n, err
	}
	b.wrote(true)
	m, err := b.Write(ctx, src[n:])
	return n + m, err
}

// wrote publishes the writer's position to the goroutine and whether the
// writer is still writing. While a Write is under way an unpaced bench
// waits for it rather than play silence, so the Write's start, chosen from
// PlayIndex, cannot be overtaken.
func (b *Bench) wrote(more bool) {
	b.queuedTo.Store(b.core.WriteIndex())
	b.inWrite.Store(more)
	signal(b.writeSig)
}

// Read waits until at least one captured frame is ready and copies up to
// len(dst[0]) consecutive frames, deinterleaved, into dst (one slice per
// input); see audio.Stream. Frames lost to FaultDropout or to an overrun
// leave a jump in first between two Reads. It panics when len(dst) is not
// 2 or a dst[c] is shorter than dst[0] (programmer mistakes).
func (b *Bench) Read(ctx context.Context, dst [][]float64) (n int, first int64, err error) {
	if len(dst) != 2 {
		panic(fmt.Sprintf("bench: Read: %d destination channels for a bench with 2 inputs", len(dst)))
	}
	want := len(dst[0])
	if len(dst[1]) < want {
		panic(fmt.Sprintf("bench: Read: dst[1] has %d samples, dst[0] %d", len(dst[1]), want))
	}
	// Where does the next run start, in the core's index?
	_, at, err := b.core.Read(ctx, b.none)
	if err != nil {
		return 0, at + b.readOffset, err
	}
	b.passHoles(at)
	// Read no further than the next dropout.
	limit := int64(want)
	if rem := b.readHoles.start - b.readOffset - at; rem < limit {
		limit = rem
	}
	for c := range dst {
		b.sub[c] = dst[c][:limit]
	}
	n, first, err = b.core.Read(ctx, b.sub)
	b.sub[0], b.sub[1] = nil, nil
	if n > 0 {
		b.consumed.Store(first + int64(n))
		signal(b.readSig)
	}
	b.passHoles(first)
	return n, first + b.readOffset, err
}

// passHoles moves the reader's hole schedule past core index at.
func (b *Bench) passHoles(at int64) {
	for at >= b.readHoles.start-b.readOffset {
		b.readOffset += b.readHoles.length
		b.readHoles.advance()
	}
}

// Close fades the output to silence (unless the device is lost), stops the
// bench's goroutine and shuts the stream: Read and Write then return
// audio.ErrClosed. It is safe to call more than once and from any
// goroutine; it returns nil.
func (b *Bench) Close() error {
	b.closeOnce.Do(func() {
		if !b.core.Lost() {
			b.core.FadeOut(b.core.Output().Fade() + 4*b.periodDur + 250*time.Millisecond)
		}
		close(b.stop)
		<-b.done
		b.core.Shut()
	})
	return nil
}
