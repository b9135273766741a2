package tui

import (
	"math"
	"slices"
	"sort"

	"tonetrace/dsp/trace"
	"tonetrace/tui/plot"
)

// series is one trace prepared for drawing and for reading at the cursor:
// its points and the derived arrays, rebuilt by set and reused after.
type series struct {
	name  string
	style int

	points []trace.Point
	curve  plot.Curve // Freq, Gain (dB), Phase (unwrapped degrees)
	delay  []float64  // group delay in seconds per point
	gainU  []float64  // gain uncertainty in dB per point
	phaseU []float64  // phase uncertainty in degrees per point
	coh    []float64  // coherence per point

	// Phase wrapped to (−180, 180] with a NaN gap at each wrap, and the
	// frequencies that go with it.
	wrapF, wrapP []float64
}

// set copies points and derives the arrays. Points with a frequency that
// is not positive and finite are dropped; the rest are sorted.
func (s *series) set(points []trace.Point) {
	s.points = s.points[:0]
	for _, p := range points {
		if p.Freq > 0 && !math.IsInf(p.Freq, 0) {
			s.points = append(s.points, p)
		}
	}
	if !slices.IsSortedFunc(s.points, cmpFreq) {
		slices.SortStableFunc(s.points, cmpFreq)
	}
	s.derive()
}

func cmpFreq(a, b trace.Point) int {
	switch {
	case a.Freq < b.Freq:
		return -1
	case a.Freq > b.Freq:
		return 1
	}
	return 0
}

// derive rebuilds the arrays from s.points.
func (s *series) derive() {
	s.curve.Name, s.curve.Style = s.name, s.style
	s.curve = plot.CurveFromPoints(s.curve, s.points)
	s.delay = trace.GroupDelay(s.delay, s.points)
	n := len(s.points)
	s.gainU, s.phaseU, s.coh = s.gainU[:0], s.phaseU[:0], s.coh[:0]
	for _, p := range s.points {
		s.gainU = append(s.gainU, p.GainU)
		s.phaseU = append(s.phaseU, p.PhaseU)
		s.coh = append(s.coh, p.Coherence)
	}
	s.wrapF, s.wrapP = wrapWithGaps(s.wrapF[:0], s.wrapP[:0], s.curve.Freq[:n], s.curve.Phase[:n])
}

// wrapWithGaps appends to dstF and dstP the phase wrapped to (−180, 180]
// with a NaN between two points where the wrapped phase jumps by more than
// 180°, so the plot breaks the line instead of drawing a vertical stroke.
func wrapWithGaps(dstF, dstP, freq, unwrapped []float64) ([]float64, []float64) {
	prev := math.NaN()
	for i, f := range freq {
		w := trace.WrapDeg(unwrapped[i])
		if i > 0 && math.Abs(w-prev) > 180 {
			dstF = append(dstF, math.Sqrt(f*freq[i-1]))
			dstP = append(dstP, math.NaN())
		}
		dstF = append(dstF, f)
		dstP = append(dstP, w)
		prev = w
	}
	return dstF, dstP
}

// empty reports whether the series has no points.
func (s *series) empty() bool { return len(s.points) == 0 }

// reading is what a series says at one frequency.
type reading struct {
	Freq, Gain, Phase, Delay, GainU, PhaseU, Coherence float64
}

// at interpolates the series at frequency f, linearly in log frequency,
// on the gain in dB and the unwrapped phase. Outside the series' range
// everything but Freq is NaN.
func (s *series) at(f float64) reading {
	r := reading{Freq: f, Gain: math.NaN(), Phase: math.NaN(), Delay: math.NaN(),
		GainU: math.NaN(), PhaseU: math.NaN(), Coherence: math.NaN()}
	i, t, ok := locate(s.curve.Freq[:len(s.points)], f)
	if !ok {
		return r
	}
	r.Gain = lerp(s.curve.Gain, i, t)
	r.Phase = lerp(s.curve.Phase, i, t)
	r.Delay = lerp(s.delay, i, t)
	r.GainU = lerp(s.gainU, i, t)
	r.PhaseU = lerp(s.phaseU, i, t)
	r.Coherence = lerp(s.coh, i, t)
	return r
}

// locate finds f in the ascending freq: the index i and the fraction t of
// the way in log frequency from freq[i] to freq[i+1]. A single point
// matches only its own frequency.
func locate(freq []float64, f float64) (int, float64, bool) {
	n := len(freq)
	if n == 0 || !(f > 0) || f < freq[0] || f > freq[n-1] {
		return 0, 0, false
	}
	if n == 1 {
		return 0, 0, true
	}
	i := sort.SearchFloat64s(freq, f) // first ≥ f
	if i == 0 {
		return 0, 0, true
	}
	i--
	if i >= n-1 {
		return n - 2, 1, true
	}
	lo, hi := freq[i], freq[i+1]
	if hi <= lo {
		return i, 0, true
	}
	return i, math.Log(f/lo) / math.Log(hi/lo), true
}

func lerp(v []float64, i int, t float64) float64 {
	if t == 0 || i+1 >= len(v) {
		return v[i]
	}
	if t == 1 {
		return v[i+1]
	}
	return v[i] + t*(v[i+1]-v[i])
}

// setDifference makes s the difference a − b at the frequencies of a
// where b is defined: gain in dB and phase in degrees (wrapped to
// (−180, 180], then unwrapped along the trace).
func (s *series) setDifference(a, b *series) {
	n := len(a.points)
	s.curve.Name, s.curve.Style = s.name, s.style
	s.curve.Freq = s.curve.Freq[:0]
	s.curve.Gain = s.curve.Gain[:0]
	s.curve.Phase = s.curve.Phase[:0]
	s.points = s.points[:0]
	prev := math.NaN()
	for i := 0; i < n; i++ {
		f := a.curve.Freq[i]
		rb := b.at(f)
		if math.IsNaN(rb.Gain) {
			continue
		}
		g := a.curve.Gain[i] - rb.Gain
		ph := trace.WrapDeg(a.curve.Phase[i] - rb.Phase)
		if !math.IsNaN(prev) {
			ph = prev + trace.WrapDeg(ph-prev)
		}
		prev = ph
		s.curve.Freq = append(s.curve.Freq, f)
		s.curve.Gain = append(s.curve.Gain, g)
		s.curve.Phase = append(s.curve.Phase, ph)
		s.points = append(s.points, trace.FromPolar(f, g, ph))
	}
	m := len(s.points)
	s.wrapF, s.wrapP = wrapWithGaps(s.wrapF[:0], s.wrapP[:0], s.curve.Freq[:m], s.curve.Phase[:m])
	s.delay = s.delay[:0]
	s.gainU, s.phaseU, s.coh = s.gainU[:0], s.phaseU[:0], s.coh[:0]
	for range m {
		nan := math.NaN()
		s.delay = append(s.delay, nan)
		s.gainU = append(s.gainU, nan)
		s.phaseU = append(s.phaseU, nan)
		s.coh = append(s.coh, nan)
	}
}

// liveTrace is the live measurement: the sweep in progress over the last
// complete one.
type liveTrace struct {
	prev, cur []trace.Point
	complete  bool
}

// merged appends to dst the points to show: the current sweep, then the
// previous sweep's points above the current sweep's highest frequency.
func (l *liveTrace) merged(dst []trace.Point) []trace.Point {
	dst = append(dst, l.cur...)
	if l.complete {
		return dst
	}
	front := math.Inf(-1)
	for _, p := range l.cur {
		front = max(front, p.Freq)
	}
	for _, p := range l.prev {
		if p.Freq > front {
			dst = append(dst, p)
		}
	}
	return dst
}

// setTrace replaces the current sweep.
func (l *liveTrace) setTrace(points []trace.Point, complete bool) {
	l.cur = append(l.cur[:0], points...)
	l.complete = complete
	if complete {
		l.prev = append(l.prev[:0], points...)
	}
}

// add puts one point into the current sweep, in frequency order,
// replacing a point at the same frequency.
func (l *liveTrace) add(p trace.Point, restart bool) {
	if restart {
		l.prev = l.merged(l.prev[:0:0])
		l.cur = l.cur[:0]
	}
	l.complete = false
	i, found := slices.BinarySearchFunc(l.cur, p, cmpFreq)
	if found {
		l.cur[i] = p
		return
	}
	l.cur = slices.Insert(l.cur, i, p)
}

// clear forgets both sweeps.
func (l *liveTrace) clear() {
	l.prev, l.cur, l.complete = l.prev[:0], l.cur[:0], false
}
