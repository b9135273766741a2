package engine

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strconv"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/tone"
	"tonetrace/dsp/trace"
)

// mode is a measurement method driven by the run loop.
type mode interface {
	// fill queues stimulus up to output index horizon.
	fill(ctx context.Context, horizon int64) error
	// analyze consumes the captured blocks that are complete; it reports
	// whether the measurement is over.
	analyze() (done bool, err error)
	// keepFrom is the earliest capture index still needed.
	keepFrom() int64
	// stop queues a faded end to the stimulus if it is playing.
	stop(ctx context.Context)
	// partial emits what was measured of an unfinished sweep or average.
	partial()
	// gap tells the mode that capture frames [from, to) are missing or
	// disturbed.
	gap(from, to int64)
	// name is the Status phase while the mode runs.
	name() string
}

// run is the state of one Engine.Run.
type run struct {
	e   *Engine
	s   audio.Stream
	cfg Config
	out *outbox

	rate        int
	fr          float64
	nIn         int
	resp, ref   int // 0-based inputs; ref −1 without a reference input
	respIn      int // 1-based
	refIn       int // 1-based, 0 without a reference input
	lead        int64
	ahead       int64
	maxAhead    int64 // the most ahead may grow to after underruns
	fade        int
	guard       int
	hold        int64
	statusEvery int64
	maxFrames   int64

	est     *tone.Estimator
	estFund *tone.Estimator // fundamental only, for hum in residuals

	w    writer
	hist history
	keep []int // inputs kept in hist: resp, then ref
	buf  [][]float64

	st    startup
	mode  mode
	phase string

	// Output spans at full level (fades excluded), for the silence check.
	spans    []span
	zeroFrom int64 // capture index where a run of exact zeros began, −1 none
	nonZero  int64 // capture index of the last non-zero watched sample

	// Capture bookkeeping.
	started bool
	first0  int64 // capture index of the first frame read
	expect  int64 // capture index the next read should start at
	lastLvl float64

	// Monitors.
	mon       monitors
	problems  problemSet
	win       []inputWindow
	winStart  int64
	statsLast audio.Stats
	lastSt    Status
	lostErr   bool
}

// span is an interval [from, to) of output indices in which the stimulus
// plays at full level; to is math.MaxInt64 while it lasts.
type span struct{ from, to int64 }

// minZeroRun is the shortest run of exact zeros in the reference, between
// non-zero samples while the stimulus plays, that counts as a dropout: an
// interface's converter never delivers it, a lost buffer does.
const minZeroRun = 8

// openSpan records that the stimulus plays at full level from output
// index from on.
func (r *run) openSpan(from int64) {
	r.spans = append(r.spans, span{from: from, to: math.MaxInt64})
	if len(r.spans) > 64 {
		r.spans = append(r.spans[:0], r.spans[len(r.spans)-32:]...)
	}
}

// closeSpan ends the open span at output index to.
func (r *run) closeSpan(to int64) {
	if n := len(r.spans); n > 0 && r.spans[n-1].to == math.MaxInt64 {
		r.spans[n-1].to = to
	}
}

// watchZeros looks for runs of exact zeros in the reference (the response
// without one) within the n frames read at capture index first.
func (r *run) watchZeros(first int64, n int) {
	c := r.ref
	if c < 0 {
		c = r.resp
	}
	for i, v := range r.buf[c][:n] {
		k := first + int64(i)
		if v == 0 {
			if r.zeroFrom < 0 && r.nonZero == k-1 {
				r.zeroFrom = k
			}
			continue
		}
		if r.zeroFrom >= 0 && k-r.zeroFrom >= minZeroRun {
			r.checkZeros(r.zeroFrom, k)
		}
		r.zeroFrom, r.nonZero = -1, k
	}
}

// checkZeros raises a dropout for the zeros [from, to) when the stimulus
// played at full level around them.
func (r *run) checkZeros(from, to int64) {
	if !r.st.done || !r.st.found || r.s.Output().Muted() {
		return
	}
	for _, sp := range r.spans {
		if r.captureOf(sp.from) < from && (sp.to == math.MaxInt64 || to < r.captureOf(sp.to)) {
			in := r.refIn
			if in == 0 {
				in = r.respIn
			}
			r.raise(Problem{Code: CodeDropout, Input: in,
				Message: fmt.Sprintf("input %d delivered %d samples of digital silence in the middle of the stimulus at %.2f s (a lost buffer)", in, to-from, r.seconds(from)),
				Fix:     "close other busy programs, use a larger device buffer, and check the USB connection"})
			return
		}
	}
}

// inputWindow accumulates one input's levels over a status interval.
type inputWindow struct {
	sumSq   float64
	n       int
	peak    float64
	clipped int
	lastRMS float64
	lastPk  float64
	lastClp int
}

// setup resolves the configuration and prepares the mode.
func (r *run) setup() error {
	s := r.s
	r.rate = s.Rate()
	r.fr = float64(r.rate)
	in, _ := s.Channels()
	r.nIn = in
	rt := s.Routing()
	r.respIn, r.resp = rt.Response, rt.Response-1
	r.refIn, r.ref = 0, -1
	if rt.Reference != audio.NoReference {
		r.refIn, r.ref = rt.Reference, rt.Reference-1
	}
	if r.resp < 0 || r.resp >= in || r.ref >= in {
		return fmt.Errorf("%w: the stream's routing (response input %d, reference input %d) does not fit its %d inputs; fix the routing", ErrConfig, rt.Response, rt.Reference, in)
	}
	cfg, err := resolve(r.e.cfg, r.rate)
	if err != nil {
		return err
	}
	r.cfg = cfg
	ms := func(d time.Duration) int64 { return int64(math.Round(d.Seconds() * r.fr)) }
	r.lead = int64(s.Lead())
	r.ahead = max(ms(cfg.Ahead), r.lead+3*r.lead/2)
	r.maxAhead = max(r.ahead, ms(maxAutoAhead))
	r.fade = max(1, int(ms(cfg.Fade)))
	r.guard = int(ms(cfg.Guard))
	r.hold = ms(cfg.ProblemHold)
	r.statusEvery = max(1, ms(cfg.StatusInterval))
	r.maxFrames = ms(cfg.MaxDuration)
	r.est = &tone.Estimator{Rate: r.fr}
	r.estFund = &tone.Estimator{Rate: r.fr, MaxHarmonic: 1}
	r.keep = []int{r.resp}
	if r.ref >= 0 {
		r.keep = append(r.keep, r.ref)
	}
	r.hist.ch = make([][]float64, len(r.keep))
	const readFrames = 2048
	r.buf = make([][]float64, in)
	for c := range r.buf {
		r.buf[c] = make([]float64, readFrames)
	}
	r.win = make([]inputWindow, in)
	r.zeroFrom, r.nonZero = -1, math.MinInt64
	r.w.s = s
	r.mon.init(r)

	out := s.Output()
	if cfg.LevelDBFS != 0 {
		if err := out.SetLevel(cfg.LevelDBFS); err != nil {
			return fmt.Errorf("%w: %w", ErrConfig, err)
		}
	}
	r.lastLvl = out.Level()
	if math.IsInf(r.lastLvl, -1) {
		return fmt.Errorf("%w: the output level is −Inf dBFS (silence); set a level such as −20 dBFS", ErrConfig)
	}
	if out.Muted() {
		return fmt.Errorf("%w: the output is muted; unmute it and start the measurement again", ErrNoSignal)
	}
	switch cfg.Method {
	case Steps:
		m, err := newStepMode(r)
		if err != nil {
			return err
		}
		r.mode = m
	case Multitone:
		m, err := newMultiMode(r)
		if err != nil {
			return err
		}
		r.mode = m
	}
	r.phase = "latency"
	r.statsLast = s.Stats()
	return nil
}

// resolve fills the defaults of cfg for a stream at rate and checks it.
func resolve(c Config, rate int) (Config, error) {
	fr := float64(rate)
	bad := func(format string, a ...any) (Config, error) {
		return c, fmt.Errorf("%w: "+format, append([]any{ErrConfig}, a...)...)
	}
	if c.Method != Steps && c.Method != Multitone {
		return bad("method %d is unknown; use Steps or Multitone", int(c.Method))
	}
	if c.From == 0 {
		c.From = 20
	}
	if c.To == 0 {
		c.To = min(20000, 0.45*fr)
	}
	if !(c.From > 0) || !(c.To > c.From) || !(c.To < fr/2) || math.IsInf(c.To, 0) {
		return bad("band %g…%g Hz is invalid at %d Hz; use 0 < From < To < %g Hz", c.From, c.To, rate, fr/2)
	}
	if c.PerDecade == 0 {
		c.PerDecade = 10
	}
	if c.PerDecade < 1 || c.PerDecade > 1000 {
		return bad("%d points per decade is out of range; use 1…1000 (default 10)", c.PerDecade)
	}
	for i, f := range c.Plan {
		if !(f > 0 && f < fr/2) {
			return bad("plan frequency %d (%g Hz) must lie between 0 and %g Hz (half the sample rate)", i, f, fr/2)
		}
	}
	if math.IsNaN(c.LevelDBFS) || c.LevelDBFS > 0 {
		return bad("level %g dBFS is invalid; use a level at most the output cap (0 keeps the stage's level)", c.LevelDBFS)
	}
	def := func(d *time.Duration, v time.Duration, name string) error {
		if *d == 0 {
			*d = v
		}
		if *d < 0 {
			return fmt.Errorf("%w: %s %v is negative; use a positive duration (default %v)", ErrConfig, name, *d, v)
		}
		return nil
	}
	defs := []struct {
		d    *time.Duration
		v    time.Duration
		name string
	}{
		{&c.MinSettle, 5 * time.Millisecond, "MinSettle"},
		{&c.MinIntegrate, 10 * time.Millisecond, "MinIntegrate"},
		{&c.MaxIntegrate, time.Second, "MaxIntegrate"},
		{&c.Guard, time.Millisecond, "Guard"},
		{&c.MaxLatency, 250 * time.Millisecond, "MaxLatency"},
		{&c.QuietTime, 100 * time.Millisecond, "QuietTime"},
		{&c.Ahead, 100 * time.Millisecond, "Ahead"},
		{&c.Fade, 5 * time.Millisecond, "Fade"},
		{&c.StatusInterval, 100 * time.Millisecond, "StatusInterval"},
		{&c.ProblemHold, 3 * time.Second, "ProblemHold"},
		{&c.DrainTimeout, 500 * time.Millisecond, "DrainTimeout"},
	}
	for _, d := range defs {
		if err := def(d.d, d.v, d.name); err != nil {
			return c, err
		}
	}
	if c.FixedLatency < 0 {
		return bad("FixedLatency %d frames is negative; use the latency a loopback calibration measured, or 0 to measure it", c.FixedLatency)
	}
	if c.NetworkSettle < 0 || c.MaxDuration < 0 {
		return bad("NetworkSettle %v and MaxDuration %v must not be negative (0: none)", c.NetworkSettle, c.MaxDuration)
	}
	if c.MaxIntegrate < c.MinIntegrate {
		return bad("MaxIntegrate %v is below MinIntegrate %v; raise it", c.MaxIntegrate, c.MinIntegrate)
	}
	if c.MaxLatency > time.Minute {
		return bad("MaxLatency %v is longer than 60 s; use a realistic bound such as 250 ms", c.MaxLatency)
	}
	if c.SettleCycles == 0 {
		c.SettleCycles = 3
	}
	if c.IntegrateCycles == 0 {
		c.IntegrateCycles = 4
	}
	if c.TargetGainU == 0 {
		c.TargetGainU = 0.01
	}
	if !(c.SettleCycles > 0) || !(c.IntegrateCycles > 0) || !(c.TargetGainU > 0) ||
		math.IsInf(c.SettleCycles, 0) || math.IsInf(c.IntegrateCycles, 0) || math.IsInf(c.TargetGainU, 0) {
		return bad("SettleCycles %g, IntegrateCycles %g and TargetGainU %g must be positive and finite (defaults 3, 4, 0.01 dB)", c.SettleCycles, c.IntegrateCycles, c.TargetGainU)
	}
	if c.Period == 0 {
		// The power of two nearest a third of a second.
		c.Period = 1 << int(math.Round(math.Log2(fr/3)))
	}
	if c.Periods == 0 {
		c.Periods = 4
	}
	if c.Periods < 1 {
		return bad("Periods %d must be at least 1 (default 4)", c.Periods)
	}
	return c, nil
}

// loop is the body of Run after setup.
func (r *run) loop(ctx context.Context) error {
	if err := r.startBurst(ctx); err != nil {
		return r.streamErr(ctx, err)
	}
	for {
		if err := r.fill(ctx); err != nil {
			return r.streamErr(ctx, err)
		}
		n, first, err := r.s.Read(ctx, r.buf)
		if err != nil {
			return r.streamErr(ctx, err)
		}
		r.ingest(first, n)
		if !r.st.done {
			if err := r.checkLatency(); err != nil {
				return err
			}
			if r.st.done {
				r.phase = r.mode.name()
			}
		}
		if r.st.done {
			done, err := r.mode.analyze()
			if err != nil {
				return err
			}
			if done {
				r.phase = "done"
				return nil
			}
		}
		r.trim()
		r.maybeStatus()
		r.out.flush()
		if r.maxFrames > 0 && r.expect-r.first0 >= r.maxFrames {
			if r.cfg.Repeat {
				return nil
			}
			return fmt.Errorf("%w (%v); raise MaxDuration or measure fewer points", ErrTimeLimit, r.cfg.MaxDuration)
		}
	}
}

// fill keeps the playout queue Ahead of the device.
func (r *run) fill(ctx context.Context) error {
	horizon := r.s.PlayIndex() + r.ahead
	return r.mode.fill(ctx, horizon)
}

// startAt returns the output index at which a stimulus run may start
// now: not before the end of the latency window, and far enough ahead of
// the device that its first samples are not late.
func (r *run) startAt() int64 {
	return max(r.st.earliest, r.s.PlayIndex()+2*r.lead)
}

// captureOf maps an output index to the capture index at which the
// inputs hear it: plus the latency and, once a drift is flagged, minus
// the frames the input clock has lost since the burst (inputs that see a
// frequency ε higher run 1/(1+ε) as many frames as the outputs).
func (r *run) captureOf(out int64) int64 {
	return out + r.st.lat - r.driftShift(out)
}

// driftShift returns the frames by which the capture of output index out
// falls behind the latency because of a flagged drift.
func (r *run) driftShift(out int64) int64 {
	if !r.mon.driftOn {
		return 0
	}
	return int64(math.Round(r.mon.driftPPM * 1e-6 * float64(out-r.st.burstAt)))
}

// streamErr turns a Read or Write error into Run's result.
func (r *run) streamErr(ctx context.Context, err error) error {
	if ctx.Err() != nil && errors.Is(err, ctx.Err()) {
		return ctx.Err()
	}
	if errors.Is(err, audio.ErrDeviceLost) {
		r.lostErr = true
		r.raise(Problem{Code: CodeUnplug,
			Message: "the audio device stopped delivering audio (unplugged, its sound server stopped, or stalled); everything measured so far is kept",
			Fix:     "reconnect the device, then start the measurement again"})
		return fmt.Errorf("engine: measurement stopped: %w", err)
	}
	return fmt.Errorf("engine: %w", err)
}

// ingest takes n frames read at capture index first.
func (r *run) ingest(first int64, n int) {
	if !r.started {
		r.started, r.first0, r.expect, r.winStart = true, first, first, first
	}
	if first > r.expect {
		r.zeroFrom = -1
		missing := first - r.expect
		r.raise(Problem{Code: CodeDropout,
			Message: fmt.Sprintf("%d captured frames are missing at %.2f s (the stream skipped them)", missing, r.seconds(r.expect)),
			Fix:     "close other busy programs, use a larger device buffer, and check the USB connection"})
		r.mode.gap(r.expect, first)
	}
	r.hist.append(first, r.buf, r.keep, n)
	r.watchZeros(first, n)
	for c := 0; c < r.nIn; c++ {
		w := &r.win[c]
		x := r.buf[c][:n]
		clip := 0
		for _, v := range x {
			w.sumSq += v * v
			a := math.Abs(v)
			if a > w.peak {
				w.peak = a
			}
			if a >= ClipLevel {
				clip++
			}
		}
		w.n += n
		w.clipped += clip
		if clip > 0 && (c == r.resp || c == r.ref) {
			r.raiseClip(c, clip, r.seconds(first))
		}
	}
	if first+int64(n) > r.expect {
		r.expect = first + int64(n)
	}
	if lvl := r.s.Output().Level(); lvl != r.lastLvl {
		r.lastLvl = lvl
		// The inputs are steady again once the ramp (Fade long, starting
		// within Lead) has played and reached them.
		from := r.s.PlayIndex()
		steady := from + r.lead + int64(r.s.Output().Fade().Seconds()*r.fr) + 1
		if r.st.done {
			r.mode.gap(r.captureOf(from), r.captureOf(steady))
		}
	}
}

// raiseClip reports clipping on input c (0-based).
func (r *run) raiseClip(c, count int, at float64) {
	role := r.role(c)
	r.raise(Problem{Code: CodeClip, Input: c + 1,
		Message: fmt.Sprintf("%s clipped: %d samples at full scale near %.2f s", inputName(c+1, role), count, at),
		Fix:     "lower the output level or the input gain; a circuit with gain may need a lower level"})
}

// outputFor names the output that should feed input in (1-based): the
// output of the same number when it carries the stimulus, else the first
// stimulus output.
func (r *run) outputFor(in int) string {
	m := r.s.Output().Mask()
	if m.Has(in) {
		return fmt.Sprintf("output %d", in)
	}
	if ch := m.Channels(); len(ch) > 0 {
		return fmt.Sprintf("output %d", ch[0])
	}
	return "the stimulus output"
}

// role names input c (0-based).
func (r *run) role(c int) string {
	switch c {
	case r.resp:
		return "response"
	case r.ref:
		return "reference"
	}
	return ""
}

// raise records a problem at the current capture position.
func (r *run) raise(p Problem) { r.problems.raise(p, r.expect, r.hold) }

// seconds returns the audio time of capture index at since the run
// started.
func (r *run) seconds(at int64) float64 { return float64(at-r.first0) / r.fr }

// levelAmp returns the stage's level as a linear amplitude: the peak the
// inputs would see through a unity loop.
func (r *run) levelAmp() float64 { return math.Pow(10, r.s.Output().Level()/20) }

// deadAmp is the amplitude below which an input counts as dead.
func (r *run) deadAmp() float64 { return r.levelAmp() * math.Pow(10, -DeadMarginDB/20) }

// trim drops captured frames no longer needed.
func (r *run) trim() {
	from := r.mode.keepFrom()
	if !r.st.done {
		from = min(from, r.st.windowStart())
	}
	r.hist.trim(from)
}

// maybeStatus emits a status at the end of each status interval and at
// once when a new problem appears.
func (r *run) maybeStatus() {
	if r.expect-r.winStart < r.statusEvery && !r.problems.fresh {
		return
	}
	r.checkStats()
	st := r.status()
	if r.problems.fresh {
		r.problems.fresh = false
		r.out.push(StatusEvent{Status: st})
	} else {
		r.out.latest(StatusEvent{Status: st})
	}
}

// checkStats raises a dropout for counters that moved.
func (r *run) checkStats() {
	st := r.s.Stats()
	d := r.statsLast
	r.statsLast = st
	fix := "close other busy programs, use a larger device buffer, and check the USB connection"
	if st.Dropped > d.Dropped {
		r.raise(Problem{Code: CodeDropout,
			Message: fmt.Sprintf("the capture buffer overflowed: %d frames dropped (the engine fell behind)", st.Dropped-d.Dropped), Fix: fix})
	}
	if st.Underruns > d.Underruns {
		r.raise(Problem{Code: CodeDropout,
			Message: fmt.Sprintf("the stimulus ran dry %d times (%d silent frames): the engine did not keep up", st.Underruns-d.Underruns, st.UnderrunFrames-d.UnderrunFrames), Fix: fix})
	}
	if st.Late > d.Late {
		r.raise(Problem{Code: CodeDropout,
			Message: fmt.Sprintf("%d stimulus samples reached the device too late and were skipped", st.Late-d.Late), Fix: fix})
	}
	if st.Underruns > d.Underruns || st.Late > d.Late {
		// The machine kept the engine from writing in time: queue
		// further ahead from now on, so the next such pause is bridged.
		r.ahead = min(2*r.ahead, r.maxAhead)
	}
}

// maxAutoAhead bounds how far ahead the engine queues the stimulus after
// it has doubled its lead for underruns (Config.Ahead may set more): it
// must stay inside the stream's playout queue (500 ms on a device).
const maxAutoAhead = 400 * time.Millisecond

// status builds the current status and starts a new interval.
func (r *run) status() Status {
	st := Status{
		Frame:        r.expect,
		Seconds:      r.seconds(r.expect),
		Phase:        r.phase,
		Latency:      int(r.st.lat),
		LatencyKnown: r.st.done && r.st.found,
		LatencyInput: r.st.from,
		DriftPPM:     r.mon.driftPPM,
		DriftU:       r.mon.driftU,
		LevelDBFS:    r.s.Output().Level(),
		Stats:        r.statsLast,
		Problems:     r.problems.current(r.expect, r.hold),
	}
	st.Inputs = make([]InputStatus, r.nIn)
	for c := range r.win {
		w := &r.win[c]
		if w.n > 0 {
			w.lastRMS = math.Sqrt(w.sumSq / float64(w.n))
			w.lastPk, w.lastClp = w.peak, w.clipped
		}
		st.Inputs[c] = InputStatus{
			Input: c + 1, Role: r.role(c),
			RMSDBFS: dbfs(w.lastRMS), PeakDBFS: dbfs(w.lastPk), Clipped: w.lastClp,
			NoiseDBFS: math.NaN(), HumDBFS: math.NaN(), HumFreq: math.NaN(),
		}
		if k := r.mon.slot(c); k >= 0 {
			st.Inputs[c].NoiseDBFS = r.mon.noise[k]
			st.Inputs[c].HumDBFS = dbfs(r.mon.hum[k])
			st.Inputs[c].HumFreq = r.mon.humFreq[k]
			if math.IsNaN(r.mon.hum[k]) {
				st.Inputs[c].HumDBFS = math.NaN()
			}
		}
		*w = inputWindow{lastRMS: w.lastRMS, lastPk: w.lastPk, lastClp: w.lastClp}
	}
	r.winStart = r.expect
	r.lastSt = st
	return st
}

// finish ends the run: a faded end to the stimulus, the partial trace of
// an unfinished measurement, a last status, the error, and the result.
func (r *run) finish(err error, wall time.Duration) {
	if r.mode != nil {
		if !r.lostErr {
			ctx, cancel := context.WithTimeout(context.Background(), 100*time.Millisecond)
			r.mode.stop(ctx)
			cancel()
		}
		r.mode.partial()
	}
	if r.win != nil {
		if err == nil {
			r.phase = "done"
		}
		r.checkStats()
		r.problems.fresh = false
		r.out.push(StatusEvent{Status: r.status()})
	}
	if err != nil {
		r.out.push(ErrorEvent{Err: err})
	}
	e := r.e
	e.mu.Lock()
	e.result.Problems = r.problems.all()
	e.result.Latency, e.result.LatencyFound = int(r.st.lat), r.st.found
	e.result.Timing.Rate = r.rate
	e.result.Timing.Wall = wall
	if r.started {
		e.result.Timing.AudioFrames = r.expect - r.first0
	}
	e.mu.Unlock()
}

// publish stores a trace in the result.
func (r *run) publish(tr trace.Trace, valid []bool, complete bool) {
	e := r.e
	e.mu.Lock()
	e.result.Trace, e.result.Valid, e.result.Complete = tr, valid, complete
	e.mu.Unlock()
}

// meta sets the common metadata of a trace.
func (r *run) meta(tr *trace.Trace, sweep int) {
	tr.SetMeta("method", r.cfg.Method.String())
	tr.SetMeta("rate_hz", strconv.Itoa(r.rate))
	tr.SetMeta("level_dbfs", strconv.FormatFloat(r.s.Output().Level(), 'g', 6, 64))
	tr.SetMeta("latency_frames", strconv.FormatInt(r.st.lat, 10))
	tr.SetMeta("sweep", strconv.Itoa(sweep))
	if r.mon.driftN > 0 {
		tr.SetMeta("drift_ppm", strconv.FormatFloat(r.mon.driftPPM, 'f', 2, 64))
	}
}
