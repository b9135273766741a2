// Package trace holds a frequency response — measured, predicted or fitted —
// as a list of points, each carrying the complex transfer ratio
// H(f) = response/reference and what is known about its quality.
//
// Every tonetrace command that writes a response uses one CSV form:
//
//	# tool: tonetrace 0.1.0
//	# command: analyze rec.wav -o out.csv
//	freq_hz,gain_db,phase_deg,gain_u_db,phase_u_deg,coherence
//	100,-0.04,-5.71,0.002,0.01,0.9999
//
// Comment lines starting with '#' carry "key: value" metadata and come
// first; then a header row that starts freq_hz,gain_db,phase_deg and may add
// optional columns (see [Column]); then one row per point in ascending
// frequency. An empty field in an optional column means "not measured".
package trace

import (
	"math"
	"math/cmplx"
)

// Point is one frequency of a response.
//
// Optional quantities hold NaN when they were not measured; [NewPoint]
// starts every optional field at NaN.
type Point struct {
	// Freq is the frequency in hertz.
	Freq float64
	// H is the complex ratio response/reference at Freq.
	H complex128
	// GainU is the standard uncertainty of the gain, in dB.
	GainU float64
	// PhaseU is the standard uncertainty of the phase, in degrees.
	PhaseU float64
	// Coherence is the ordinary coherence γ² between reference and
	// response, from 0 to 1.
	Coherence float64
	// SNR is the signal-to-noise ratio behind the point, in dB: for a
	// tone estimate the worse of the two inputs; for a broadband (H1)
	// estimate the ratio of coherent to incoherent power at the response,
	// γ²/(1−γ²), +Inf when the coherence is exactly 1.
	SNR float64
	// THD is the total harmonic distortion of the response input, in
	// percent of the fundamental.
	THD float64
}

// NewPoint returns a point at freq with ratio h and every optional
// quantity unknown (NaN).
func NewPoint(freq float64, h complex128) Point {
	nan := math.NaN()
	return Point{Freq: freq, H: h, GainU: nan, PhaseU: nan, Coherence: nan, SNR: nan, THD: nan}
}

// FromPolar returns a point at freq with the given gain in dB and phase in
// degrees, and every optional quantity unknown.
func FromPolar(freq, gainDB, phaseDeg float64) Point {
	return NewPoint(freq, cmplx.Rect(math.Pow(10, gainDB/20), phaseDeg*math.Pi/180))
}

// GainDB returns 20·log10|H|; −Inf when H is zero.
func (p Point) GainDB() float64 { return 20 * math.Log10(cmplx.Abs(p.H)) }

// PhaseDeg returns the phase of H in degrees, wrapped to (−180, 180].
func (p Point) PhaseDeg() float64 { return WrapDeg(cmplx.Phase(p.H) * 180 / math.Pi) }

// WrapDeg wraps an angle in degrees to (−180, 180].
func WrapDeg(deg float64) float64 {
	w := math.Remainder(deg, 360)
	if w <= -180 {
		w += 360
	}
	return w
}

// MetaItem is one "key: value" metadata line of a trace.
type MetaItem struct {
	Key, Value string
}

// Trace is a response: metadata in order, then points in ascending
// frequency.
type Trace struct {
	Meta   []MetaItem
	Points []Point
}

// SetMeta sets the value of key, replacing an earlier value in place or
// appending a new item.
func (t *Trace) SetMeta(key, value string) {
	for i := range t.Meta {
		if t.Meta[i].Key == key {
			t.Meta[i].Value = value
			return
		}
	}
	t.Meta = append(t.Meta, MetaItem{Key: key, Value: value})
}

// MetaValue returns the value of key and whether it is present.
func (t *Trace) MetaValue(key string) (string, bool) {
	for _, m := range t.Meta {
		if m.Key == key {
			return m.Value, true
		}
	}
	return "", false
}

// UnwrappedPhaseDeg returns the phase of each point in degrees, unwrapped
// so that neighbouring points differ by at most 180°. The first point keeps
// its wrapped phase. dst is reused when it has the capacity.
func UnwrappedPhaseDeg(dst []float64, points []Point) []float64 {
	dst = resize(dst, len(points))
	for i, p := range points {
		ph := p.PhaseDeg()
		if i > 0 {
			ph = dst[i-1] + WrapDeg(ph-dst[i-1])
		}
		dst[i] = ph
	}
	return dst
}

// GroupDelay returns the group delay τ = −dφ/dω in seconds at each point,
// from the unwrapped phase, by the three-point derivative for unequal
// spacing inside the trace and one-sided differences at its ends. With
// fewer than two points, or where two frequencies coincide, the delay is
// NaN. dst is reused when it has the capacity.
func GroupDelay(dst []float64, points []Point) []float64 {
	n := len(points)
	dst = resize(dst, n)
	if n < 2 {
		for i := range dst {
			dst[i] = math.NaN()
		}
		return dst
	}
	ph := UnwrappedPhaseDeg(nil, points)
	w := func(i int) float64 { return 2 * math.Pi * points[i].Freq }
	rad := func(i int) float64 { return ph[i] * math.Pi / 180 }
	slope := func(a, b int) float64 {
		dw := w(b) - w(a)
		if dw == 0 {
			return math.NaN()
		}
		return (rad(b) - rad(a)) / dw
	}
	dst[0] = -slope(0, 1)
	dst[n-1] = -slope(n-2, n-1)
	for i := 1; i < n-1; i++ {
		h1 := w(i) - w(i-1)
		h2 := w(i+1) - w(i)
		if h1 == 0 || h2 == 0 {
			dst[i] = math.NaN()
			continue
		}
		// Second-order accurate derivative on an unequal grid.
		d := -h2/(h1*(h1+h2))*rad(i-1) + (h2-h1)/(h1*h2)*rad(i) + h1/(h2*(h1+h2))*rad(i+1)
		dst[i] = -d
	}
	return dst
}

func resize(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}
