package engine

import (
	"fmt"
	"math"
	"math/cmplx"
	"sort"

	"tonetrace/dsp/tone"
	"tonetrace/dsp/trace"
)

// mainsFreqs are the hum frequencies watched: 50 and 60 Hz mains and their
// second and third harmonics.
var mainsFreqs = [...]float64{50, 100, 150, 60, 120, 180}

// Drift estimate settings.
const (
	// driftForget is the weight an earlier drift estimate keeps at each
	// new one (exponential forgetting: about ten estimates of memory).
	driftForget = 0.9
	// driftMinU is the least uncertainty in ppm given one estimate, so
	// a noise-free block does not outweigh all others.
	driftMinU = 0.01
	// driftMinFreq is the lowest stepped-sine frequency used for drift:
	// below it the blocks hold few cycles and a network's transient can
	// bias the frequency fit.
	driftMinFreq = 100.0
	// glitchSub is the sub-block length of the residual-burst check.
	glitchSub = 32
	// humWander is how far, in Hz, a measured mains frequency may lie from
	// 50 or 60 Hz (grids hold it within a few tenths; more is not mains).
	humWander = 1.0
	// humMinCycles is the fewest mains cycles a block needs to measure the
	// mains frequency.
	humMinCycles = 5
)

// monitors holds the state of the wiring and signal checks.
type monitors struct {
	r *run

	// Per kept input (slot 0 response, 1 reference).
	noise   []float64 // noise floor in dBFS from the quiet window
	hum     []float64 // latest hum amplitude (peak, full-scale units)
	humFreq []float64
	humPrev []float64 // hum frequency found by the previous residual check, 0 none
	// humBase is the mains fundamental measured on the input while its
	// hum stands above HumLimitDBFS (0: none); humBuf holds its lines.
	humBase []float64
	humBuf  [][humLines]float64

	// Clock drift, weighted mean with forgetting.
	sw, swp          float64
	driftPPM, driftU float64
	driftN           int
	driftOn          bool

	// Dead inputs.
	respSilent  bool // the response's level did not rise during the burst
	refInverted int  // low-frequency points whose reference is inverted

	resid []float64
	subs  []float64
}

func (m *monitors) init(r *run) {
	m.r = r
	n := len(r.keep)
	m.noise, m.hum, m.humFreq, m.humPrev = nanSlice(n), nanSlice(n), nanSlice(n), make([]float64, n)
	m.humBase, m.humBuf = make([]float64, n), make([][humLines]float64, n)
	m.driftPPM, m.driftU = math.NaN(), math.NaN()
}

func nanSlice(n int) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}

// slot returns the history slot of input c (0-based), or −1.
func (m *monitors) slot(c int) int {
	if m.r == nil {
		return -1
	}
	for k, in := range m.r.keep {
		if in == c {
			return k
		}
	}
	return -1
}

// input returns the 1-based input number and role of slot k.
func (m *monitors) input(k int) (int, string) {
	c := m.r.keep[k]
	return c + 1, m.r.role(c)
}

// quietWindow measures the noise floor and hum of slot k on the silence
// before the latency burst.
func (m *monitors) quietWindow(k int, x []float64) {
	if !finite(x) || len(x) == 0 {
		return
	}
	ss := 0.0
	for _, v := range x {
		ss += v * v
	}
	m.noise[k] = dbfs(math.Sqrt(ss / float64(len(x))))
	a, f, partial := m.humIn(x, nil)
	m.hum[k], m.humFreq[k] = a, f
	m.trackHum(k, x, a, f, partial, true)
	if a >= math.Pow(10, HumLimitDBFS/20) {
		m.r.raise(m.humProblem(k, a, f))
	}
}

// humLines is how many mains harmonics, the fundamental included, the
// stepped sine fits out of its blocks once an input carries hum.
const humLines = 5

// trackHum keeps slot k's mains fundamental from a block x (quiet, or a
// fit's residual, which keeps the hum) whose largest visible mains line is
// a at f. Above HumLimitDBFS it keeps the mains family (50 or 60 Hz) it
// first saw; on the quiet window, with nothing else playing, it measures
// the fundamental's actual frequency (mains wanders by a fraction of a
// hertz) with the four-parameter fit, which fits the harmonics jointly.
// (A residual is no place for that: the network's settling transients
// pull the frequency off by tenths of a hertz.) Below the limit it
// forgets the hum, unless some mains line was hidden from the check
// (partial): near the stimulus the line may be the very hum to fit out.
func (m *monitors) trackHum(k int, x []float64, a, f float64, partial, quiet bool) {
	if math.IsNaN(f) || a < math.Pow(10, HumLimitDBFS/20) {
		if !partial {
			m.humBase[k] = 0
		}
		return
	}
	if m.humBase[k] != 0 && !quiet {
		return
	}
	nominal := 50.0
	if math.Mod(f, 60) == 0 {
		nominal = 60
	}
	m.humBase[k] = nominal
	if quiet && tone.Cycles(len(x), nominal, m.r.fr) >= humMinCycles {
		if fe, err := m.r.est.FitFreq(x, nominal); err == nil && math.Abs(fe.Freq-nominal) <= humWander {
			m.humBase[k] = fe.Freq
		}
	}
}

// humMains returns the mains lines to fit out of slot k's blocks: the
// first humLines harmonics of its measured mains frequency, or none while
// the input is free of hum. The slice is reused by the next call.
func (m *monitors) humMains(k int) []float64 {
	if k >= len(m.humBase) || m.humBase[k] == 0 {
		return nil
	}
	b := &m.humBuf[k]
	for i := range b {
		b[i] = float64(i+1) * m.humBase[k]
	}
	return b[:]
}

// humAny returns the mains lines of the first input that carries hum, or
// none.
func (m *monitors) humAny() []float64 {
	for k := range m.humBase {
		if l := m.humMains(k); l != nil {
			return l
		}
	}
	return nil
}

// humIn returns the largest mains component of x (peak amplitude by
// Goertzel, 2|X|/N) and its frequency, skipping frequencies the block
// cannot resolve (fewer than 3 cycles) or that lie within 2 bins of a
// frequency in avoid; partial reports that it skipped one.
func (m *monitors) humIn(x []float64, avoid []float64) (amp, freq float64, partial bool) {
	fr := m.r.fr
	n := float64(len(x))
	bin := fr / n
	freq = math.NaN()
next:
	for _, h := range mainsFreqs {
		if h >= fr/2 {
			continue
		}
		if n < 3*fr/h {
			partial = true
			continue
		}
		for _, a := range avoid {
			if math.Abs(h-a) < 2*bin {
				partial = true
				continue next
			}
		}
		if a := 2 * cmplx.Abs(tone.Goertzel(x, h, fr)) / n; a > amp || math.IsNaN(freq) {
			amp, freq = a, h
		}
	}
	return amp, freq, partial
}

// residualHum checks the residual of a fit on slot k for hum; hum is
// raised when the same mains frequency stands above the limit in two
// consecutive checks (a single block may hold a transient). avoid lists
// the stimulus frequencies (and harmonics) the residual was cleaned of.
func (m *monitors) residualHum(k int, res []float64, avoid []float64) {
	a, f, partial := m.humIn(res, avoid)
	m.trackHum(k, res, a, f, partial, false)
	if math.IsNaN(f) {
		return
	}
	m.hum[k], m.humFreq[k] = a, f
	if a < math.Pow(10, HumLimitDBFS/20) {
		m.humPrev[k] = 0
		return
	}
	if m.humPrev[k] == f {
		m.r.raise(m.humProblem(k, a, f))
	}
	m.humPrev[k] = f
}

func (m *monitors) humProblem(k int, a, f float64) Problem {
	in, role := m.input(k)
	return Problem{Code: CodeHum, Input: in,
		Message: fmt.Sprintf("%s picks up mains hum: %g Hz at %.1f dBFS", inputName(in, role), f, dbfs(a)),
		Fix:     "check the grounding: one ground point for the interface and the circuit, shielded leads, kept away from transformers and mains cables"}
}

func (m *monitors) deadRefProblem(what string) Problem {
	in := m.r.refIn
	return Problem{Code: CodeDeadRef, Input: in,
		Message: fmt.Sprintf("the reference (input %d) hears nothing of %s", in, what),
		Fix:     fmt.Sprintf("check the loopback lead from %s to input %d, and that input's gain", m.r.outputFor(in), in)}
}

func (m *monitors) deadDUTProblem(what string) Problem {
	in := m.r.respIn
	return Problem{Code: CodeDeadDUT, Input: in,
		Message: fmt.Sprintf("the response (input %d) hears nothing of %s", in, what),
		Fix:     fmt.Sprintf("check the leads from %s to the circuit and from the circuit to input %d, and that the circuit is powered", m.r.outputFor(in), in)}
}

// addDrift adds one clock-mismatch estimate in ppm with its standard
// uncertainty u and raises CodeDrift when the weighted mean exceeds
// DriftLimitPPM by more than four standard uncertainties.
func (m *monitors) addDrift(ppm, u float64) {
	if math.IsNaN(ppm) || math.IsInf(ppm, 0) || math.IsNaN(u) {
		return
	}
	u = max(u, driftMinU)

	w := 1 / (u * u)
	m.sw = driftForget*m.sw + w
	m.swp = driftForget*m.swp + w*ppm
	m.driftN++
	m.driftPPM = m.swp / m.sw
	m.driftU = 1 / math.Sqrt(m.sw)
	if m.driftN < 2 {
		return
	}
	if math.Abs(m.driftPPM) > DriftLimitPPM && math.Abs(m.driftPPM) > 4*m.driftU {
		m.driftOn = true
		in := m.r.refIn
		if in == 0 {
			in = m.r.respIn
		}
		m.r.raise(Problem{Code: CodeDrift, Input: in,
			Message: fmt.Sprintf("the inputs run %+.1f ppm off the outputs' clock: input and output use separate clocks", m.driftPPM),
			Fix:     "use one device for input and output (duplex), or lock both devices to one clock (word clock or S/PDIF); results at high frequencies drift in phase"})
	} else if math.Abs(m.driftPPM) < DriftLimitPPM/2 {
		m.driftOn = false
	}
}

// glitch reports whether the residual res of a fit to a tone of
// amplitude amp holds a burst: a 32-sample stretch whose RMS is GlitchRatio
// times the median stretch and at least GlitchFloor·amp, after at least
// two ordinary stretches — what a handful of lost, repeated or zeroed
// samples leaves. It returns the offset of the burst.
func (m *monitors) glitch(res []float64, amp float64) (int, bool) {
	ns := len(res) / glitchSub
	if ns < 8 || !(amp > 0) {
		return 0, false
	}
	m.subs = grow(m.subs, 2*ns)
	rmss, sorted := m.subs[:ns], m.subs[ns:]
	worst, wi := 0.0, 0
	for i := range ns {
		s := 0.0
		for _, v := range res[i*glitchSub : (i+1)*glitchSub] {
			s += v * v
		}
		s = math.Sqrt(s / glitchSub)
		rmss[i] = s
		if s > worst {
			worst, wi = s, i
		}
	}
	copy(sorted, rmss)
	sort.Float64s(sorted)
	med := sorted[ns/2]
	if !(worst > GlitchRatio*med && worst > GlitchFloor*amp) {
		return 0, false
	}
	// A burst has ordinary stretches before it; a transient decaying
	// from the start of the block (a network still settling) does not.
	calm := 0
	for _, s := range rmss[:wi] {
		if s <= 3*med {
			calm++
		}
	}
	return wi * glitchSub, calm >= 2
}

// residual writes x minus the fitted model of e (DC, fundamental and
// harmonics) into dst, reusing its capacity.
func residual(dst, x []float64, e tone.Estimate, rate float64) []float64 {
	dst = grow(dst, len(x))
	for i, v := range x {
		dst[i] = v - e.DC
	}
	ph := [5]complex128{e.Phasor, e.Harmonics[0], e.Harmonics[1], e.Harmonics[2], e.Harmonics[3]}
	const chunk = 1024
	for k, p := range ph {
		if p == 0 {
			continue
		}
		w := 2 * math.Pi * float64(k+1) * e.Freq / rate
		rot := cmplx.Rect(1, w)
		for i0 := 0; i0 < len(x); i0 += chunk {
			z := p * cmplx.Rect(1, w*float64(i0)) // exact at each chunk start
			for i := i0; i < min(i0+chunk, len(x)); i++ {
				dst[i] -= real(z)
				z *= rot
			}
		}
	}
	return dst
}

// levelPoint is one frequency's input levels relative to the stimulus,
// for the swap and polarity checks.
type levelPoint struct {
	f      float64
	refDB  float64 // |reference/stimulus| in dB
	respDB float64 // |response/stimulus| in dB
	gainDB float64 // |H| in dB
	hDeg   float64 // arg H in degrees, corrected for an inverted loopback
}

// swapSpread reports whether the points suggest swapped inputs: at least
// 5 points over at least a decade; at least 80 % of the response's levels
// within FlatDB of their median (the flat points); and the reference's
// level spreading by more than SwapVaryDB over those same flat points.
// Comparing over the flat points leaves out the interface's own roll-offs,
// which both inputs share. It returns the reference's spread.
func swapSpread(pts []levelPoint) (float64, bool) {
	if len(pts) < 5 {
		return 0, false
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	resp := make([]float64, 0, len(pts))
	for _, p := range pts {
		lo, hi = min(lo, p.f), max(hi, p.f)
		resp = append(resp, p.respDB)
	}
	if hi < 10*lo {
		return 0, false
	}
	sort.Float64s(resp)
	med := resp[len(resp)/2]
	flat := 0
	rlo, rhi := math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		if math.Abs(p.respDB-med) <= FlatDB {
			flat++
			rlo, rhi = min(rlo, p.refDB), max(rhi, p.refDB)
		}
	}
	spread := rhi - rlo
	return spread, float64(flat) >= 0.8*float64(len(pts)) && spread > SwapVaryDB
}

// refWire reports whether the reference's levels over the points are
// known (at least 5 points over a decade) and flat (the central 80 % of
// them within SwapVaryDB, so the interface's own roll-offs at the band
// edges do not count), as a straight loopback is. The checks that take
// the reference for a wire — its polarity, a death in mid-sweep,
// glitches — wait for that: a reference behind the network (swapped
// inputs) varies, rings and inverts on its own.
func refWire(pts []levelPoint) (known, flat bool) {
	if len(pts) < 5 {
		return false, false
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	ref := make([]float64, 0, len(pts))
	for _, p := range pts {
		lo, hi = min(lo, p.f), max(hi, p.f)
		ref = append(ref, p.refDB)
	}
	if hi < 10*lo {
		return false, false
	}
	sort.Float64s(ref)
	n := len(ref) - 1
	q10, q90 := ref[n/10], ref[n-n/10]
	return true, q90-q10 <= SwapVaryDB
}

// refInvertedProblem is the problem of an inverted loopback.
func (m *monitors) refInvertedProblem(how string) Problem {
	r := m.r
	return Problem{Code: CodeInvert, Input: r.refIn,
		Message: fmt.Sprintf("the reference (input %d) is inverted relative to the output: %s", r.refIn, how),
		Fix:     fmt.Sprintf("use a straight lead from %s to input %d (one that swaps signal and ground, or an inverting stage, flips it)", r.outputFor(r.refIn), r.refIn)}
}

// invertedBand looks for an inverted response in a flat band: at least 3
// consecutive points (in frequency) spanning a factor of 4 or more whose
// gains lie within FlatDB of the first and whose phases lie within
// InvertToleranceDeg of ±180°. It returns the band's edges.
func invertedBand(pts []levelPoint) (lo, hi float64, ok bool) {
	s := append([]levelPoint(nil), pts...)
	sort.Slice(s, func(i, j int) bool { return s[i].f < s[j].f })
	inv := func(p levelPoint) bool { return math.Abs(trace.WrapDeg(p.hDeg-180)) <= InvertToleranceDeg }
	for i := 0; i < len(s); i++ {
		if !inv(s[i]) {
			continue
		}
		j := i
		for j+1 < len(s) && inv(s[j+1]) && math.Abs(s[j+1].gainDB-s[i].gainDB) <= FlatDB {
			j++
		}
		if j-i >= 2 && s[j].f >= 4*s[i].f {
			return s[i].f, s[j].f, true
		}
	}
	return 0, 0, false
}

// checkWiring runs the swap and response-polarity checks on the points of
// a sweep or a multitone frame; it reports whether the inputs look
// swapped.
func (m *monitors) checkWiring(pts []levelPoint) (swapped bool) {
	r := m.r
	if r.ref >= 0 {
		if spread, ok := swapSpread(pts); ok {
			swapped = true
			r.raise(Problem{Code: CodeSwap,
				Message: fmt.Sprintf("the inputs look swapped: the reference (input %d) varies by %.0f dB over frequency while the response (input %d) is flat", r.refIn, spread, r.respIn),
				Fix:     fmt.Sprintf("swap the leads at inputs %d and %d, or swap the response and reference inputs in the settings", r.respIn, r.refIn)})
		}
	}
	if lo, hi, ok := invertedBand(pts); ok {
		r.raise(Problem{Code: CodeInvert, Input: r.respIn,
			Message: fmt.Sprintf("the response (input %d) is inverted: its phase is near ±180° across the flat band %.4g–%.4g Hz", r.respIn, lo, hi),
			Fix:     fmt.Sprintf("check the response lead to input %d (signal and ground swapped?), unless the circuit inverts, as an inverting amplifier does", r.respIn)})
	}
	return swapped
}
