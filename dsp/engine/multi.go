package engine

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"gonum.org/v1/gonum/dsp/fourier"

	"tonetrace/dsp/multitone"
	"tonetrace/dsp/stimulus"
	"tonetrace/dsp/trace"
)

// multiMode loops a periodic multitone and analyses whole periods.
type multiMode struct {
	r      *run
	mt     *multitone.Multitone
	period []float64 // one period at peak 1
	p      int
	tones  []multitone.Tone
	an     *multitone.Analyzer
	avg    *multitone.Averager
	frame  multitone.Frame

	// Generator.
	running  bool
	origin   int64 // output index of the loop's first sample
	pos      int64
	stopping bool
	buf      []float64

	// Analysis.
	next      int64 // next period to analyse, counted from origin
	skipUntil int64 // capture index: periods starting before it are discarded
	count     int   // periods in the current average
	sweep     int
	done      bool
	completed bool // the current average was emitted complete
	refBuf    []float64
	respBuf   []float64
	fft       *fourier.FFT
	coef      []complex128
	resid     []float64
	prev      []complex128 // last period's phasors for the drift estimate
	prevJ     int64
	prevShift int64
	havePrev  bool
	respDead  bool
	clipped   bool  // a period of the current average clipped
	refDead   []int // per tone: periods of the current average with a dead reference
	wiring    []levelPoint
	humSet    []float64 // the mains lines the analyzer fits out
}

// syncHum hands the analyzer the mains lines the monitors currently see,
// when they changed, so it fits them out of every period (the tones were
// designed to keep clear of them).
func (m *multiMode) syncHum() {
	lines := m.r.mon.humAny()
	if slices.Equal(lines, m.humSet) {
		return
	}
	if err := m.an.SetInterferers(lines); err != nil {
		return // a line on a tone: leave the analysis as it was
	}
	m.humSet = append(m.humSet[:0], lines...)
}

func newMultiMode(r *run) (*multiMode, error) {
	cfg := r.cfg
	mt, err := multitone.Design(multitone.Options{
		Rate: r.fr, Period: cfg.Period, From: cfg.From, To: cfg.To, PerDecade: cfg.PerDecade,
		LevelDBFS: 0, CapDBFS: 0, Reduction: cfg.Reduction,
		Avoid: multitone.MainsLines(humLines), // so hum can be fitted out
	})
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrConfig, err)
	}
	p := mt.Len()
	return &multiMode{
		r: r, mt: mt, period: mt.Period(), p: p, tones: mt.Tones(),
		an: multitone.NewAnalyzer(mt), avg: multitone.NewAverager(mt),
		buf:    make([]float64, 4096),
		refBuf: make([]float64, p), respBuf: make([]float64, p),
		fft: fourier.NewFFT(p), coef: make([]complex128, p/2+1), resid: make([]float64, p),
		prev: make([]complex128, mt.NumTones()), refDead: make([]int, mt.NumTones()),
	}, nil
}

func (m *multiMode) name() string { return "multitone" }

// sample returns the stimulus at output index i (peak 1), faded in over
// the first Fade.
func (m *multiMode) sample(i int64) float64 {
	d := i - m.origin
	v := m.period[d%int64(m.p)]
	if d < int64(m.r.fade) {
		v *= stimulus.FadeGain(int(d), m.r.fade)
	}
	return v
}

// fill keeps the loop queued up to horizon.
func (m *multiMode) fill(ctx context.Context, horizon int64) error {
	r := m.r
	if !m.running {
		if m.done || m.stopping {
			return nil
		}
		at := r.startAt()
		if at >= horizon {
			return nil
		}
		m.running, m.origin, m.pos = true, at, at
		r.openSpan(at + int64(r.fade))
	}
	for m.pos < horizon && !m.stopping {
		n := int(min(int64(len(m.buf)), horizon-m.pos))
		for i := range n {
			m.buf[i] = m.sample(m.pos + int64(i))
		}
		if err := r.w.write(ctx, m.pos, m.buf[:n]); err != nil {
			return err
		}
		m.pos += int64(n)
	}
	return nil
}

// stop continues the loop for a fade-out and ends it.
func (m *multiMode) stop(ctx context.Context) {
	m.stopping = true
	if !m.running {
		return
	}
	r := m.r
	r.closeSpan(m.pos)
	n := r.fade
	tail := make([]float64, n)
	for i := range tail {
		tail[i] = m.sample(m.pos+int64(i)) * stimulus.FadeGain(n-1-i, n)
	}
	if r.w.write(ctx, m.pos, tail) == nil {
		m.pos += int64(n)
	}
	r.w.finish()
	m.running = false
}

func (m *multiMode) keepFrom() int64 {
	if !m.running && m.next == 0 {
		return m.r.hist.end()
	}
	return m.r.captureOf(m.origin + m.next*int64(m.p))
}

// gap discards the periods overlapping capture frames [from, to) and the
// first whole period after them, which may hold the circuit's transient.
func (m *multiMode) gap(from, to int64) {
	m.skipUntil = max(m.skipUntil, to+int64(m.p))
	m.havePrev = false
}

func (m *multiMode) analyze() (bool, error) {
	r := m.r
	if !m.running && m.next == 0 {
		return m.done, nil
	}
	for !m.done {
		out := m.origin + m.next*int64(m.p)
		c0 := r.captureOf(out)
		if r.hist.end() < c0+int64(m.p) {
			break
		}
		j := m.next
		m.next++
		if j == 0 || c0 < m.skipUntil {
			m.havePrev = false
			continue
		}
		m.analyzePeriod(j, c0, r.driftShift(out))
	}
	return m.done, nil
}

// stimulusAsRef makes the stimulus tone k (amplitude a at the inputs
// through a unity loop) the reference of t, whose reference input is
// dead: response over nothing is no number, response over the stimulus
// keeps what the response input heard (invalid, but kept).
func (m *multiMode) stimulusAsRef(t *multitone.ToneResult, k int, a float64) {
	t.SetReference(cmplx.Rect(a, m.tones[k].Phase), 0)
}

// analyzePeriod analyses period j of the loop captured at c0.
func (m *multiMode) analyzePeriod(j, c0, shift int64) {
	r := m.r
	mon := &r.mon
	resp := r.hist.read(m.respBuf, 0, c0)
	var ref []float64
	amp := r.levelAmp()
	if r.ref >= 0 {
		ref = r.hist.read(m.refBuf, 1, c0)
	} else {
		// Without a reference input the stimulus is the reference; the
		// period starts at loop sample 0, as the capture does.
		for i := range m.refBuf {
			m.refBuf[i] = m.period[i] * amp
		}
		ref = m.refBuf
	}
	if !finite(resp) || !finite(ref) {
		m.havePrev = false
		return
	}
	clipped := peakAbs(resp) >= ClipLevel || peakAbs(ref) >= ClipLevel
	if clipped {
		// ingest has raised the clip problem; the period still counts,
		// but the average it enters is marked invalid.
		m.clipped = true
	}
	m.syncHum()
	if err := m.an.AnalyzeInto(&m.frame, ref, resp); err != nil && !errors.Is(err, multitone.ErrNoReference) {
		m.havePrev = false
		return
	}
	muted := r.s.Output().Muted()
	deadFrac := math.Pow(10, -DeadMarginDB/20)
	nRefDead, nRefNoise, nRespDead := 0, 0, 0
	m.wiring = m.wiring[:0]
	for k := range m.frame.Tones {
		t := &m.frame.Tones[k]
		a := m.tones[k].Amplitude * amp
		refDead := r.ref >= 0 && cmplx.Abs(t.Ref) < a*deadFrac
		respDead := cmplx.Abs(t.Resp) < a*deadFrac
		if refDead {
			nRefDead++
			if t.Ref == 0 || abs2(t.Ref) < 16*t.RefNoise {
				nRefNoise++
			}
			m.refDead[k]++ // the tone's average is marked invalid
			m.stimulusAsRef(t, k, a)
		}
		if respDead {
			nRespDead++
		}
		if refDead || respDead || muted {
			continue
		}
		hDeg := cmplx.Phase(t.H) * 180 / math.Pi
		if r.ref >= 0 && r.st.sign < 0 {
			hDeg += 180
		}
		m.wiring = append(m.wiring, levelPoint{f: t.Freq,
			refDB: dbfs(cmplx.Abs(t.Ref) / a), respDB: dbfs(cmplx.Abs(t.Resp) / a),
			gainDB: dbfs(cmplx.Abs(t.H)), hDeg: hDeg})
	}
	nt := len(m.frame.Tones)
	if muted {
		m.havePrev = false
		return
	}
	swapped := mon.checkWiring(m.wiring)
	// Most tones hold nothing but noise at the reference, or are below
	// the margin after the reference missed the burst: a dead reference
	// (unless the inputs look swapped and the reference is behind the
	// network's stopband).
	known, flat := refWire(m.wiring)
	if r.ref >= 0 && known && flat && r.st.sign < 0 {
		r.raise(mon.refInvertedProblem("the loopback turns the latency test burst upside down"))
	}
	if nRefNoise*2 > nt && (!known || flat) && !swapped || r.st.sign == 0 && nRefDead*2 > nt {
		r.raise(mon.deadRefProblem(fmt.Sprintf("the multitone (%d of %d tones below %.0f dB of the level)", nRefDead, nt, -DeadMarginDB)))
	}
	// Dead: every tone below the margin, or most of them once the burst
	// found the response silent.
	m.respDead = nRespDead == nt || mon.respSilent && nRespDead*2 > nt
	if m.respDead {
		r.raise(mon.deadDUTProblem(fmt.Sprintf("the multitone (%d of %d tones below %.0f dB of the level)", nRespDead, nt, -DeadMarginDB)))
	}
	m.driftCheck(j, shift)
	if !clipped {
		m.residualChecks(ref, resp, !known || flat)
	}

	m.avg.Add(&m.frame)
	m.count++
	m.completed = false
	tr, valid := m.traceNow()
	r.out.latest(TraceEvent{Trace: tr, Valid: valid, Live: true, Sweep: m.sweep})
	r.out.latest(ProgressEvent{Done: m.count, Total: r.cfg.Periods, Freq: math.NaN(), Sweep: m.sweep})
	if m.count >= r.cfg.Periods {
		r.out.push(TraceEvent{Trace: tr, Valid: valid, Complete: true, Sweep: m.sweep})
		r.publish(tr, valid, true)
		m.completed = true
		m.sweep++
		if r.cfg.Repeat {
			m.avg.Reset()
			m.count, m.clipped = 0, false
			clear(m.refDead)
		} else {
			m.done = true
		}
	}
}

// driftCheck estimates the clock mismatch from the phase advance of the
// reference tones (the response without a reference) since the previous
// period. A capture clock that makes the inputs see a frequency ε higher
// advances tone k by 2π·f_k·ε·P/rate per period; the advance is unwrapped
// from the lowest tone up and fitted by weighted least squares.
func (m *multiMode) driftCheck(j, shift int64) {
	r := m.r
	cur := func(t *multitone.ToneResult) (complex128, float64) {
		if r.ref >= 0 {
			return t.Ref, t.RefNoise
		}
		return t.Resp, t.RespNoise
	}
	if m.havePrev && m.prevJ == j-1 {
		var sff, sfd, delta float64
		used := 0
		for k := range m.frame.Tones {
			t := &m.frame.Tones[k]
			z, noise := cur(t)
			p := m.prev[k]
			// Only tones well above the noise (and the dead margin) tell
			// the clock.
			floor := m.tones[k].Amplitude * r.levelAmp() * math.Pow(10, -DeadMarginDB/20)
			if z == 0 || p == 0 || cmplx.IsNaN(z) || abs2(z) < 100*noise || abs2(p) < 100*noise ||
				cmplx.Abs(z) < floor || cmplx.Abs(p) < floor {
				continue
			}
			used++
			v := max(noise/abs2(z)+noise/abs2(p), 1e-14)
			w := 1 / v
			om := 2 * math.Pi * t.Freq / r.fr
			d := cmplx.Phase(z * cmplx.Conj(p))
			pred := om * delta
			d = pred + math.Remainder(d-pred, 2*math.Pi)
			sff += w * om * om
			sfd += w * om * d
			delta = sfd / sff
		}
		if used >= 3 && sff > 0 {
			// The windows moved by the drift correction between periods.
			total := delta + float64(shift-m.prevShift)
			pp := float64(m.p)
			m.r.mon.addDrift(total/pp*1e6, 1/math.Sqrt(sff)/pp*1e6)
		}
	}
	for k := range m.frame.Tones {
		m.prev[k], _ = cur(&m.frame.Tones[k])
	}
	m.prevJ, m.prevShift, m.havePrev = j, shift, true
}

// residualChecks removes the tones from each input (their bins and DC
// zeroed in the spectrum) and checks what is left: a burst in the
// reference is a discontinuity (checked when glitches is set: the
// reference looks like a wire), a mains line is hum.
func (m *multiMode) residualChecks(ref, resp []float64, glitches bool) {
	r := m.r
	for k := range r.keep {
		x := resp
		if k == 1 {
			x = ref
		}
		m.fft.Coefficients(m.coef, x)
		m.coef[0] = 0
		for _, t := range m.tones {
			m.coef[t.Bin] = 0
		}
		m.fft.Sequence(m.resid, m.coef)
		inv := 1 / float64(m.p)
		ss := 0.0
		for i := range m.resid {
			m.resid[i] *= inv
			ss += x[i] * x[i]
		}
		if k == 1 && glitches {
			a := math.Sqrt(2 * ss / float64(m.p))
			if at, g := r.mon.glitch(m.resid, a); g {
				r.raise(Problem{Code: CodeDropout, Input: r.refIn,
					Message: fmt.Sprintf("the reference multitone breaks off %.1f ms into a period (samples lost, repeated or zeroed)", float64(at)/r.fr*1000),
					Fix:     "close other busy programs, use a larger device buffer, and check the USB connection"})
			}
		}
		r.mon.residualHum(k, m.resid, nil)
	}
}

// traceNow returns the running average as a trace: one point per tone
// with a finite ratio in some period (an exactly silent reference gives
// none), invalid when the response is dead, a period clipped, or the
// tone's reference was dead in a period of the average.
func (m *multiMode) traceNow() (trace.Trace, []bool) {
	var tr trace.Trace
	m.avg.TraceInto(&tr)
	valid := make([]bool, len(tr.Points))
	k := 0
	for i, p := range tr.Points {
		for k < len(m.tones) && m.tones[k].Freq < p.Freq {
			k++
		}
		valid[i] = !m.respDead && !m.clipped && k < len(m.tones) && m.refDead[k] == 0
	}
	m.r.meta(&tr, m.sweep)
	return tr, valid
}

func (m *multiMode) partial() {
	if m.completed || m.count == 0 {
		return
	}
	tr, valid := m.traceNow()
	m.r.out.push(TraceEvent{Trace: tr, Valid: valid, Complete: false, Sweep: m.sweep})
	m.r.publish(tr, valid, false)
}

func abs2(c complex128) float64 { return real(c)*real(c) + imag(c)*imag(c) }
