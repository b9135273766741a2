package engine

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"sort"

	"tonetrace/dsp/plan"
	"tonetrace/dsp/stimulus"
	"tonetrace/dsp/tone"
	"tonetrace/dsp/trace"
)

// CodeMuted marks points measured while the output was muted. It is not
// a wiring fault: the user muted the output.
const CodeMuted = "muted"

// driftMinCycles is the least number of cycles a stepped-sine block must
// hold to enter the drift estimate.
const driftMinCycles = 50

// stepSched is one scheduled step of the stepped sine, in output indices.
type stepSched struct {
	freq      float64
	planned   float64 // the plan's frequency; freq differs when moved clear of hum
	start     int64   // first sample of the step (its settling part)
	integ     int64   // first sample of the integration block
	settle    int
	length    int
	skip      int     // settling frames left out of the reference's glitch check
	phase     float64 // stimulus phase (radians, sine) at integ
	sweep     int
	index     int
	retry     int   // earlier attempts at this point
	minFrames int64 // least settling plus least integration
}

// maxRetries is how many times a point whose block lost frames (or whose
// reference broke off inside it) is measured again.
const maxRetries = 2

// Generator states.
const (
	genIdle = iota // nothing queued
	genRun         // playing steps
	genTail        // fading out
)

// sweepState collects the points of one sweep.
type sweepState struct {
	n          int
	points     []PointEvent
	firstStart int64
	lastEnd    int64
	minFrames  int64
	completed  bool
	deadResp   int // points whose response was below the dead margin
	deadRef    int // points whose reference was below the dead margin
	swapped    bool
	lead       leadWatch
}

// leadWatch follows the response level through a fixed-plan sweep to
// catch a response lead pulled in the middle of it: the level falls in
// one step from clearly alive to the noise (a network's stopband falls
// off over several points and keeps a coherent tone) and stays there.
type leadWatch struct {
	lastAlive bool    // the previous point heard the response clearly
	aliveDB   float64 // its response level, dB re the output level
	aliveFreq float64
	run       int  // silent points in a row since then
	from      int  // index in the sweep's points of the first of them
	pulled    bool // the lead is gone for the rest of the sweep
}

// Lead-watch thresholds.
const (
	// leadAliveDB is the least response level, dB re the output level,
	// of the point before the silence: from there to below the noise in
	// one step of the plan is beyond any network the checks expect (an
	// 8th-order filter falls 40 dB per quarter decade).
	leadAliveDB = -20
	// leadSilentSNR is the SNR in dB below which the response is noise.
	leadSilentSNR = 10
	// leadSilentPoints is how many silent points in a row name the lead.
	leadSilentPoints = 3
)

// stepMode is the pipelined stepped sine.
type stepMode struct {
	r        *run
	fixed    []float64
	adapt    *plan.Adaptive
	queue    []float64
	retries  []stepSched // points to measure again, before the queue
	qSweep   int
	qIndex   int
	stopping bool

	// Generator.
	state      int
	pos        int64 // output index of the next sample
	runStart   int64
	end        int64   // end of the current step
	cycles     float64 // phase in cycles at the current step's start
	cur        stepSched
	tailCycles float64
	tailFreq   float64
	tailLeft   int
	buf        []float64

	// Analysis.
	pending  []stepSched
	sw       sweepState
	measured []trace.Point // adaptive: the sweep's valid points
	batchOut int           // adaptive: steps scheduled, not yet analysed
	lastSNR  float64       // dB, the last point's
	done     bool
	blkResp  []float64
	blkRef   []float64
	wiring   []levelPoint
}

func newStepMode(r *run) (*stepMode, error) {
	m := &stepMode{r: r, lastSNR: math.Inf(1), buf: make([]float64, 4096)}
	cfg := r.cfg
	switch {
	case cfg.Adaptive != nil:
		m.adapt = cfg.Adaptive
		m.adapt.Reset()
		batch, err := m.adapt.Next(nil)
		if err != nil {
			return nil, fmt.Errorf("%w: adaptive plan: %w", ErrConfig, err)
		}
		if err := m.checkFreqs(batch); err != nil {
			return nil, err
		}
		m.queue = batch
	case len(cfg.Plan) > 0:
		m.fixed = cfg.Plan
	default:
		f, err := plan.PerDecade(cfg.From, cfg.To, cfg.PerDecade)
		if err != nil {
			return nil, fmt.Errorf("%w: %w", ErrConfig, err)
		}
		m.fixed = f
	}
	if m.fixed != nil {
		m.queue = m.fixed
	}
	return m, nil
}

// checkFreqs refuses frequencies the stream cannot play.
func (m *stepMode) checkFreqs(f []float64) error {
	for _, v := range f {
		if !(v > 0 && v < m.r.fr/2) {
			return fmt.Errorf("%w: the adaptive plan asks for %g Hz, outside 0…%g Hz at this sample rate; narrow its From and To", ErrConfig, v, m.r.fr/2)
		}
	}
	return nil
}

func (m *stepMode) name() string { return "steps" }

// settleFrames returns the settling time of a step at f: max(MinSettle,
// SettleCycles periods) plus NetworkSettle, in frames, rounded up.
func (m *stepMode) settleFrames(f float64) int {
	c := m.r.cfg
	s := max(c.MinSettle.Seconds(), c.SettleCycles/f) + c.NetworkSettle.Seconds()
	return int(math.Ceil(s * m.r.fr))
}

// maxStretch bounds how many times its minimum the integration may be
// lengthened for a low SNR, so a stopband below the noise does not cost
// MaxIntegrate at every point.
const maxStretch = 8

// integFrames returns the integration length at f: a whole number of
// cycles of at least MinIntegrate and IntegrateCycles periods (the
// minimum), lengthened, up to maxStretch times that and MaxIntegrate, to
// the N at which the last point's per-sample SNR η would give a gain
// uncertainty of TargetGainU (GainU ≈ 20/ln10·√(2/(N·η)) for two equally
// noisy inputs, Cramér–Rao).
func (m *stepMode) integFrames(f float64) (n, least int) {
	c := m.r.cfg
	fr := m.r.fr
	minSec := max(c.MinIntegrate.Seconds(), c.IntegrateCycles/f)
	least, err := tone.CycleLength(f, fr, minSec)
	if err != nil {
		least = int(math.Ceil(minSec * fr))
	}
	n = least
	if eta := math.Pow(10, m.lastSNR/10); eta > 0 && !math.IsInf(eta, 1) {
		k := 20 / math.Ln10 / c.TargetGainU
		need := min(2*k*k/eta/fr, c.MaxIntegrate.Seconds(), maxStretch*minSec)
		if need > minSec {
			if l, err := tone.CycleLength(f, fr, need); err == nil {
				n = l
			}
		}
	}
	// Mains hum on an input: long enough for the joint fit (see fit) to
	// tell the tone from the hum lines — humMinCycles of the mains, and
	// humSepBins DFT bins between f and the nearest line — up to
	// MaxIntegrate.
	if lines := m.mon().humAny(); len(lines) > 0 {
		need := humMinCycles / lines[0]
		for _, l := range lines {
			need = max(need, humSepBins/math.Abs(f-l))
		}
		need = min(need, c.MaxIntegrate.Seconds())
		if need > float64(n)/fr {
			if l, err := tone.CycleLength(f, fr, need); err == nil {
				n = l
			}
		}
	}
	return n, least
}

// clearOfHum moves a planned frequency that lies closer to a mains hum
// line than even the longest block tells apart well (humMoveBins DFT bins
// of MaxIntegrate) to humSepBins bins from the line, on its own side
// (above, when on it): a point a little off the plan beats a point lost
// to hum, or one whose uncertainty the hum inflates many times.
func (m *stepMode) clearOfHum(f float64) float64 {
	sec := m.r.cfg.MaxIntegrate.Seconds()
	sep := humSepBins / sec
	for _, l := range m.mon().humAny() {
		if d := f - l; math.Abs(d) < humMoveBins/sec {
			f = l + math.Copysign(sep, d)
			if d == 0 {
				f = l + sep
			}
		}
	}
	if f >= m.r.fr/2 {
		return m.r.fr/2 - sep // never beyond Nyquist (lines there are moot anyway)
	}
	return f
}

// humSepBins is how many DFT bins of the integration block a stepped-sine
// frequency should lie from a mains hum line: two keep the joint fit's
// variance within a few percent of the resolved-tone bound.
const humSepBins = 2

// humMoveBins is the distance from a mains hum line, in DFT bins of the
// longest block, below which a stepped-sine point is moved (clearOfHum):
// at half a bin the joint fit's variance is already 1.7 times the
// resolved-tone bound.
const humMoveBins = 0.5

// hasNext reports whether another step can be scheduled now.
func (m *stepMode) hasNext() bool {
	return !m.stopping && (len(m.retries) > 0 || len(m.queue) > 0 || m.fixed != nil && m.r.cfg.Repeat)
}

// makeStep takes the next frequency and decides its step, starting at
// output index at; runStart says the step opens a run (its settling
// must hold the fade-in).
func (m *stepMode) makeStep(at int64, runStart bool) (stepSched, bool) {
	if m.stopping {
		return stepSched{}, false
	}
	var again *stepSched
	if len(m.retries) > 0 {
		again = &m.retries[0]
		m.retries = m.retries[1:]
	} else if len(m.queue) == 0 {
		if m.fixed == nil || !m.r.cfg.Repeat {
			return stepSched{}, false
		}
		m.queue, m.qSweep, m.qIndex = m.fixed, m.qSweep+1, 0
	}
	var f, planned float64
	if again != nil {
		f, planned = again.freq, again.planned
	} else {
		planned = m.queue[0]
		f = m.clearOfHum(planned)
		m.queue = m.queue[1:]
	}
	settle := m.settleFrames(f)
	least := int64(settle)
	if runStart {
		settle = max(settle, m.r.fade)
	}
	n, leastN := m.integFrames(f)
	skip := settle / 2 // the interface's own transient has decayed by then
	if runStart {
		skip = max(skip, m.r.fade)
	}
	s := stepSched{freq: f, planned: planned, start: at, integ: at + int64(settle), settle: settle, length: n, skip: skip,
		sweep: m.qSweep, index: m.qIndex, minFrames: least + int64(leastN)}
	if again != nil {
		s.sweep, s.index, s.retry = again.sweep, again.index, again.retry
	} else {
		m.qIndex++
	}
	if m.adapt != nil {
		m.batchOut++
	}
	return s, true
}

// startStep makes s the current step and schedules its analysis.
func (m *stepMode) startStep(s stepSched) {
	s.phase = 2 * math.Pi * frac(m.cycles+s.freq*float64(s.settle)/m.r.fr)
	m.cur = s
	m.end = s.integ + int64(s.length) + int64(m.r.guard)
	m.pending = append(m.pending, s)
}

// beginTail starts the fade-out at the current position, continuing a
// tone of freq whose phase here is cycles.
func (m *stepMode) beginTail(cycles, freq float64) {
	m.r.closeSpan(m.pos)
	m.state, m.tailCycles, m.tailFreq, m.tailLeft = genTail, cycles, freq, m.r.fade
}

// render fills dst with the next stimulus samples (peak 1); it returns how
// many it wrote and whether the run ended with them.
func (m *stepMode) render(dst []float64) (int, bool) {
	r := m.r
	fade := int64(r.fade)
	n := 0
	for n < len(dst) {
		switch m.state {
		case genRun:
			if m.pos == m.end {
				m.cycles = frac(m.cycles + m.cur.freq*float64(m.end-m.cur.start)/r.fr)
				if s, ok := m.makeStep(m.pos, false); ok {
					m.startStep(s)
				} else {
					m.beginTail(m.cycles, m.cur.freq)
				}
				continue
			}
			k := int(min(m.end-m.pos, int64(len(dst)-n)))
			inc := m.cur.freq / r.fr
			k0 := m.pos - m.cur.start
			out := dst[n : n+k]
			for j := range out {
				t := m.cycles + float64(k0+int64(j))*inc
				out[j] = math.Sin(2 * math.Pi * (t - math.Floor(t)))
			}
			for d := m.pos - m.runStart; d < fade && d < m.pos-m.runStart+int64(k); d++ {
				out[d-(m.pos-m.runStart)] *= stimulus.FadeGain(int(d), r.fade)
			}
			n += k
			m.pos += int64(k)
		case genTail:
			k := min(m.tailLeft, len(dst)-n)
			inc := m.tailFreq / r.fr
			done := r.fade - m.tailLeft
			for j := 0; j < k; j++ {
				i := done + j
				t := m.tailCycles + float64(i)*inc
				v := math.Sin(2*math.Pi*(t-math.Floor(t))) * stimulus.FadeGain(r.fade-1-i, r.fade)
				if d := m.pos + int64(j) - m.runStart; d < fade {
					v *= stimulus.FadeGain(int(d), r.fade)
				}
				dst[n+j] = v
			}
			n += k
			m.pos += int64(k)
			m.tailLeft -= k
			if m.tailLeft == 0 {
				m.state = genIdle
				return n, true
			}
		default:
			return n, true
		}
	}
	return n, false
}

// fill queues steps up to horizon, starting a new run when the generator
// is idle and there is something to play.
func (m *stepMode) fill(ctx context.Context, horizon int64) error {
	r := m.r
	for {
		if m.state == genIdle {
			if m.done || !m.hasNext() {
				return nil
			}
			at := r.startAt()
			if at >= horizon {
				return nil
			}
			s, ok := m.makeStep(at, true)
			if !ok {
				return nil
			}
			m.state, m.pos, m.runStart, m.cycles = genRun, at, at, 0
			r.openSpan(at + int64(r.fade))
			m.startStep(s)
		}
		if m.pos >= horizon {
			return nil
		}
		at := m.pos
		k, ended := m.render(m.buf[:min(int64(len(m.buf)), horizon-m.pos)])
		if err := r.w.write(ctx, at, m.buf[:k]); err != nil {
			return err
		}
		if ended {
			r.w.finish()
		}
	}
}

// stop ends the stimulus with a fade-out and stops scheduling.
func (m *stepMode) stop(ctx context.Context) {
	m.stopping = true
	r := m.r
	if m.state == genRun {
		m.beginTail(frac(m.cycles+m.cur.freq*float64(m.pos-m.cur.start)/r.fr), m.cur.freq)
	}
	for m.state == genTail {
		at := m.pos
		k, ended := m.render(m.buf)
		if r.w.write(ctx, at, m.buf[:k]) != nil {
			break
		}
		if ended {
			break
		}
	}
	r.w.finish()
}

func (m *stepMode) keepFrom() int64 {
	if len(m.pending) == 0 {
		return m.r.hist.end()
	}
	p := m.pending[0]
	return m.r.captureOf(p.integ) - int64(p.settle-p.skip)
}

// gap needs no action: a block that overlaps missing frames reads NaN and
// its point is marked invalid.
func (m *stepMode) gap(from, to int64) {}

// analyze measures every step whose integration block has been captured.
func (m *stepMode) analyze() (bool, error) {
	r := m.r
	for len(m.pending) > 0 {
		p := m.pending[0]
		c0 := r.captureOf(p.integ)
		if r.hist.end() < c0+int64(p.length+r.guard) {
			break
		}
		m.pending = m.pending[1:]
		if err := m.measure(p, c0); err != nil {
			return false, err
		}
		if m.done {
			return true, nil
		}
	}
	return false, nil
}

// measure turns the captured block of step p, at capture index c0, into a
// point and moves the sweep on.
func (m *stepMode) measure(p stepSched, c0 int64) error {
	r := m.r
	if p.sweep != m.sw.n || m.sw.completed {
		m.sw = sweepState{n: p.sweep}
		m.wiring = m.wiring[:0]
		m.mon().refInverted = 0
	}
	if len(m.sw.points) == 0 {
		m.sw.firstStart = p.start
	}
	ev := m.point(p, c0)
	if !ev.Valid && transient(ev) && p.retry < maxRetries && p.sweep == m.qSweep && !m.stopping {
		// Lost frames or a broken-off reference say nothing about the
		// circuit: measure the point again, next.
		p.retry++
		m.retries = append(m.retries, p)
		if m.adapt != nil {
			m.batchOut--
		}
		return nil
	}
	m.sw.points = append(m.sw.points, ev)
	m.sw.minFrames += p.minFrames
	m.sw.lastEnd = c0 + int64(p.length)
	r.out.push(ev)
	total := len(m.fixed)
	if m.adapt != nil {
		total = m.qIndex
	}
	r.out.latest(ProgressEvent{Done: len(m.sw.points), Total: total, Freq: p.freq, Sweep: p.sweep})
	e := r.e
	e.mu.Lock()
	e.result.Points = m.sw.points
	e.mu.Unlock()

	if m.adapt == nil {
		if len(m.sw.points) == len(m.fixed) {
			m.complete()
		}
		return nil
	}
	m.batchOut--
	if m.batchOut > 0 || len(m.queue) > 0 || len(m.retries) > 0 {
		return nil
	}
	next, err := m.adapt.Next(m.measured)
	if err != nil {
		return fmt.Errorf("engine: adaptive plan cannot go on: %w (too few valid points: see the problems reported)", err)
	}
	if err := m.checkFreqs(next); err != nil {
		return err
	}
	if next != nil {
		m.queue = next
		return nil
	}
	m.complete()
	if !m.done {
		m.adapt.Reset()
		batch, err := m.adapt.Next(nil)
		if err != nil {
			return fmt.Errorf("%w: adaptive plan: %w", ErrConfig, err)
		}
		m.queue, m.qSweep, m.qIndex, m.measured = batch, m.qSweep+1, 0, nil
	}
	return nil
}

func (m *stepMode) mon() *monitors { return &m.r.mon }

// transient reports whether an invalid point failed for a passing reason
// — frames lost or the reference broken off in its block — and nothing
// that measuring again would find again (clipping, a dead input, a muted
// output).
func transient(ev PointEvent) bool {
	for _, p := range ev.Problems {
		if p.Code != CodeDropout {
			return false
		}
	}
	return len(ev.Problems) > 0
}

// sweepTrace returns the sweep's points in ascending frequency with their
// validity. A point with no finite ratio (nothing could be estimated) has
// no place in a trace; its PointEvent said why.
func (m *stepMode) sweepTrace() (trace.Trace, []bool) {
	pts := make([]PointEvent, 0, len(m.sw.points))
	for _, p := range m.sw.points {
		if !cmplx.IsNaN(p.Point.H) && !cmplx.IsInf(p.Point.H) {
			pts = append(pts, p)
		}
	}
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].Point.Freq < pts[j].Point.Freq })
	var tr trace.Trace
	valid := make([]bool, len(pts))
	tr.Points = make([]trace.Point, len(pts))
	for i, p := range pts {
		tr.Points[i], valid[i] = p.Point, p.Valid
	}
	m.r.meta(&tr, m.sw.n)
	return tr, valid
}

// complete emits the sweep's trace and records its timing. A sweep whose
// every point found the response dead names a dead response and marks
// the points invalid.
func (m *stepMode) complete() {
	r := m.r
	if n := len(m.sw.points); n > 0 && m.sw.deadResp == n {
		pr := m.mon().deadDUTProblem(fmt.Sprintf("the sweep (every point below %.0f dB of the output level)", -DeadMarginDB))
		r.raise(pr)
		m.invalidate(0, pr)
	}
	// Most points without a reference name a dead one, unless the inputs
	// look swapped: then the reference is behind the network's stopband.
	if n := len(m.sw.points); m.sw.deadRef*2 > n && !m.sw.swapped {
		r.raise(m.mon().deadRefProblem(fmt.Sprintf("the sweep (%d of %d points below %.0f dB of the output level)", m.sw.deadRef, n, -DeadMarginDB)))
	}
	tr, valid := m.sweepTrace()
	r.out.push(TraceEvent{Trace: tr, Valid: valid, Complete: true, Sweep: m.sw.n})
	r.publish(tr, valid, true)
	e := r.e
	e.mu.Lock()
	e.result.Timing.SweepFrames = m.sw.lastEnd - m.sw.firstStart
	e.result.Timing.MinFrames = m.sw.minFrames
	e.result.Timing.Points = len(m.sw.points)
	e.mu.Unlock()
	m.sw.completed = true
	if !r.cfg.Repeat {
		m.done = true
	}
}

func (m *stepMode) partial() {
	if m.sw.completed || len(m.sw.points) == 0 {
		return
	}
	tr, valid := m.sweepTrace()
	m.r.out.push(TraceEvent{Trace: tr, Valid: valid, Complete: false, Sweep: m.sw.n})
	m.r.publish(tr, valid, false)
}

// fit estimates the tone at f in block x of history slot k (0 response,
// 1 reference). While the input carries mains hum, the hum's lines are
// fitted jointly (tone.Estimator.FitAmong), so hum near f neither pulls
// the point off nor hides in its uncertainty; a point too close to a hum
// line to tell them apart is fitted plainly and reported invalid.
func (m *stepMode) fit(x []float64, f float64, k int, bad func(Problem)) (tone.Estimate, error) {
	r := m.r
	lines := m.mon().humMains(k)
	e, err := r.est.FitAmong(x, f, lines)
	if err == nil || len(lines) == 0 || !errors.Is(err, tone.ErrIllConditioned) {
		return e, err
	}
	in, role := m.mon().input(k)
	bad(Problem{Code: CodeHum, Input: in,
		Message: fmt.Sprintf("the point at %.4g Hz lies too close to the mains hum on %s (%.4g Hz and its harmonics) to tell them apart", f, inputName(in, role), lines[0]),
		Fix:     "cure the hum (one ground point, shielded leads) or measure away from the mains harmonics"})
	return r.est.Fit(x, f)
}

// invalidate marks the sweep's points from index from on invalid for pr.
func (m *stepMode) invalidate(from int, pr Problem) {
	m.r.e.mu.Lock() // Result reads the points
	defer m.r.e.mu.Unlock()
	for i := from; i < len(m.sw.points); i++ {
		if p := &m.sw.points[i]; p.Valid {
			p.Valid = false
			p.Problems = append(p.Problems, pr)
		}
	}
}

// watchLead updates the sweep's lead watch with the point at f whose
// response level is levelDB (dB re the output level) and SNR snr; see
// leadWatch. Once the lead is named, every dead point of the sweep is
// invalid, including the silent ones before it was named.
func (m *stepMode) watchLead(f, levelDB float64, dead bool, snr float64, bad func(Problem)) {
	w := &m.sw.lead
	silent := dead && !(snr >= leadSilentSNR)
	switch {
	case w.pulled:
		if dead {
			bad(m.mon().deadDUTProblem(fmt.Sprintf("the stimulus at %.4g Hz since the lead came off", f)))
		}
	case silent && (w.run > 0 || w.lastAlive):
		if w.run == 0 {
			w.from = len(m.sw.points)
		}
		w.run++
		w.lastAlive = false
		if w.run < leadSilentPoints {
			return
		}
		w.pulled = true
		first := f
		if w.from < len(m.sw.points) {
			first = m.sw.points[w.from].Point.Freq
		}
		pr := m.mon().deadDUTProblem(fmt.Sprintf("the stimulus from %.4g Hz on (its level fell from %.1f dB re the output level to the noise in one step after %.4g Hz and stayed there, as when a lead comes off)", first, w.aliveDB, w.aliveFreq))
		m.r.raise(pr)
		bad(pr)
		m.invalidate(w.from, pr)
	default:
		w.run = 0
		w.lastAlive = !dead && levelDB >= leadAliveDB
		w.aliveDB, w.aliveFreq = levelDB, f
	}
}

// point estimates one point and runs the per-point monitors.
func (m *stepMode) point(p stepSched, c0 int64) PointEvent {
	r := m.r
	mon := m.mon()
	f, n := p.freq, p.length
	// The wide block runs from the second half of the settling time to
	// the end of the integration block: the reference is checked for
	// glitches over all of it, the integration block is measured. (The
	// guard stays out: it is the slack for latency errors and drift.)
	pre := p.settle - p.skip
	wide := pre + n
	m.blkResp = grow(m.blkResp, wide)
	resp := r.hist.read(m.blkResp, 0, c0-int64(pre))[pre : pre+n]
	var ref, refWide []float64
	if r.ref >= 0 {
		m.blkRef = grow(m.blkRef, wide)
		refWide = r.hist.read(m.blkRef, 1, c0-int64(pre))
		ref = refWide[pre : pre+n]
	}
	ev := PointEvent{Index: p.index, Sweep: p.sweep, Valid: true, Planned: p.planned}
	bad := func(pr Problem) {
		ev.Valid = false
		ev.Problems = append(ev.Problems, pr)
	}
	amp := r.levelAmp()
	stim := cmplx.Rect(amp, p.phase-math.Pi/2) // sine → cosine phasor
	dropFix := "close other busy programs, use a larger device buffer, and check the USB connection"
	if !finite(resp) || ref != nil && !finite(ref) {
		ev.Point = trace.NewPoint(f, cmplx.NaN())
		bad(Problem{Code: CodeDropout, Message: fmt.Sprintf("frames were lost during the point at %.4g Hz", f), Fix: dropFix})
		return ev
	}
	// The stimulus itself, as the inputs would hear it through a unity
	// loop: the reference when there is no reference input, and the
	// stand-in when the reference input is dead.
	stimRef := tone.Estimate{Freq: f, Phasor: stim, N: n, SNR: math.Inf(1), THD: math.NaN()}
	eResp, err := m.fit(resp, f, 0, bad)
	eRef := stimRef
	if err == nil && ref != nil {
		eRef, err = m.fit(ref, f, 1, bad)
	}
	if err != nil {
		ev.Point = trace.NewPoint(f, cmplx.NaN())
		bad(Problem{Code: CodeDropout, Message: fmt.Sprintf("the point at %.4g Hz could not be fitted: %v", f, err), Fix: dropFix})
		return ev
	}
	ev.Point = tone.Ratio(eResp, eRef)

	muted := r.s.Output().Muted()
	if muted {
		bad(Problem{Code: CodeMuted, Message: fmt.Sprintf("the output was muted during the point at %.4g Hz", f), Fix: "unmute the output"})
	}
	respClip := peakAbs(resp) >= ClipLevel
	refClip := ref != nil && peakAbs(ref) >= ClipLevel
	for _, c := range []struct {
		clip bool
		in   int
		x    []float64
	}{{respClip, r.resp, resp}, {refClip, r.ref, ref}} {
		if c.clip {
			cnt := 0
			for _, v := range c.x {
				if math.Abs(v) >= ClipLevel {
					cnt++
				}
			}
			r.raiseClip(c.in, cnt, r.seconds(c0))
			bad(Problem{Code: CodeClip, Input: c.in + 1,
				Message: fmt.Sprintf("%s clipped during the point at %.4g Hz", inputName(c.in+1, r.role(c.in)), f),
				Fix:     "lower the output level or the input gain"})
		}
	}

	dead := r.deadAmp()
	refDead := ref != nil && !muted && eRef.Amplitude() < dead
	respDead := !muted && eResp.Amplitude() < dead
	// A reference below the dead margin makes the point invalid. It names
	// a dead reference at once when the reference did not hear the burst;
	// otherwise when it is dead at most of a sweep's points (see
	// complete): a reference that heard the burst and then hears nothing
	// at some frequencies may be behind a network's stopband (swapped
	// inputs).
	known, flat := refWire(m.wiring)
	if refDead {
		// Response over nothing is no number; response over the stimulus
		// keeps what the response input heard (invalid, but kept).
		ev.Point = tone.Ratio(eResp, stimRef)
		m.sw.deadRef++
		pr := mon.deadRefProblem(fmt.Sprintf("the stimulus at %.4g Hz (%.0f dBFS, expected about %.0f dBFS; the point is kept relative to the stimulus)", f, dbfs(eRef.Amplitude()), dbfs(amp)))
		bad(pr)
		if r.st.sign == 0 {
			r.raise(pr)
		}
	}
	if respDead && mon.respSilent {
		bad(mon.deadDUTProblem(fmt.Sprintf("the stimulus at %.4g Hz (%.0f dBFS)", f, dbfs(eResp.Amplitude()))))
	}
	if respDead {
		m.sw.deadResp++
	}
	if m.adapt == nil && !muted {
		m.watchLead(f, dbfs(eResp.Amplitude()/amp), respDead, eResp.SNR, bad)
	}

	avoid := [5]float64{f, 2 * f, 3 * f, 4 * f, 5 * f}
	if ref != nil && !refDead && !refClip {
		if finite(refWide) && peakAbs(refWide) < ClipLevel && (!known || flat) {
			if ew, err := r.est.Fit(refWide, f); err == nil {
				mon.resid = residual(mon.resid, refWide, ew, r.fr)
				if at, g := mon.glitch(mon.resid, ew.Amplitude()); g {
					pr := Problem{Code: CodeDropout, Input: r.refIn,
						Message: fmt.Sprintf("the reference tone at %.4g Hz breaks off (samples lost, repeated or zeroed) %.1f ms before its block ends", f, float64(wide-at)/r.fr*1000),
						Fix:     dropFix}
					if at+glitchSub > pre {
						bad(pr) // inside the integration block: the point is wrong
					}
					r.raise(pr)
				}
			}
		}
		mon.resid = residual(mon.resid, ref, eRef, r.fr)
		mon.residualHum(1, mon.resid, avoid[:])
	}
	if !respDead && !respClip {
		mon.resid = residual(mon.resid, resp, eResp, r.fr)
		mon.residualHum(0, mon.resid, avoid[:])
	}
	// Drift: the frequency the reference (or, without one, the response)
	// actually has, on blocks long enough to tell.
	dx, de, dok := ref, eRef, ref != nil && !refDead && !refClip
	if ref == nil {
		dx, de, dok = resp, eResp, !respDead && !respClip
	}
	if dok && f >= driftMinFreq && tone.Cycles(n, f, r.fr) >= driftMinCycles && de.SNR > 20 {
		if fe, err := r.est.FitFreq(dx, f); err == nil {
			mon.addDrift((fe.Freq-f)/f*1e6, fe.FreqU/f*1e6)
		}
	}

	if ev.Valid && !respDead {
		hDeg := ev.Point.PhaseDeg()
		if ref != nil && r.st.sign < 0 {
			hDeg += 180
		}
		m.wiring = append(m.wiring, levelPoint{f: f,
			refDB: dbfs(eRef.Amplitude() / amp), respDB: dbfs(eResp.Amplitude() / amp),
			gainDB: ev.Point.GainDB(), hDeg: hDeg})
		if ref != nil && f <= 500 {
			g := eRef.Phasor / stim
			if math.Abs(trace.WrapDeg(cmplx.Phase(g)*180/math.Pi-180)) <= InvertToleranceDeg {
				mon.refInverted++
			}
		}
		if known, flat := refWire(m.wiring); ref != nil && known && flat {
			if r.st.sign < 0 {
				r.raise(mon.refInvertedProblem("the loopback turns the latency test burst upside down"))
			}
			if mon.refInverted >= 2 {
				r.raise(mon.refInvertedProblem("its phase is near ±180° at low frequencies"))
			}
		}
		if mon.checkWiring(m.wiring) {
			m.sw.swapped = true
		}
	}
	if s := ev.Point.SNR; !math.IsNaN(s) && ev.Valid {
		m.lastSNR = s
	}
	if m.adapt != nil && ev.Valid && !cmplx.IsNaN(ev.Point.H) && !cmplx.IsInf(ev.Point.H) {
		m.measured = append(m.measured, ev.Point)
	}
	return ev
}
