// Package extract reads the numbers a bench user wants off a frequency
// response: what kind of filter it is, its passband level, the half-power
// corners with their phase, the peak and its Q, the notch and its depth,
// the asymptotic slopes at both ends and the group delay.
//
// A trace is any []trace.Point in strictly ascending frequency — measured,
// predicted or fitted, evenly or unevenly spaced in log frequency, clean or
// noisy. Every reading is interpolated between the points, never taken from
// the nearest one. Around each place of interest a local model passes
// through the nearby points; the model is one of
//
//   - a cubic in (log10 f, dB) for the gain with a cubic in (log10 f,
//     unwrapped degrees) for the phase — the plain choice;
//   - a complex cubic in log10 f through H — follows a notch, where H is
//     smooth but its dB value has a cusp;
//   - a complex cubic through 1/H — follows a resonance, where 1/H is
//     smooth;
//   - a second-order rational function of s fitted to H by least squares
//     (Levy's linearisation with Sanathanan–Koerner reweighting) — exact
//     for any network of second order, so a resonance or a notch that falls
//     between two points is still placed and sized correctly.
//
// Each candidate is refitted without one of the nearby points and asked to
// predict that point's gain; the candidate with the smallest error is
// used, so the data decide. Crossings of a level are roots of the model
// inside the bracketing interval (bisection), extremes are found by a scan
// and golden-section search, group delay τ = −dφ/dω is the model's
// derivative. Slopes are least-squares lines in (log10 f, dB) over the
// last half decade at each end; where that window catches the dying
// skirt of a feature further in, an end is judged by its slope at the end
// frequency instead (see [Options.FlatSlope]), so that a coarse or banded
// trace whose ends have not quite settled keeps its shape. Where the gain
// is noisy (see [Options.NoiseDB]) a peak or notch must stand out from
// the noise, and one that barely does is interpolated in dB only.
//
// The corners are the half-power points: the gain crosses the passband
// level minus [HalfPowerDB] = 10·log10(2) ≈ 3.0103 dB, not minus exactly
// 3 dB, so a first-order low-pass reports its corner at exactly 1/(2πRC)
// and the phase there at exactly −45°.
//
// Every float field of [Params] that could not be measured holds NaN; a
// missing peak or notch has NaN frequency (see [Peak.Found]).
//
//	p, err := extract.Analyze(points)
//	if err != nil { … }
//	for _, line := range p.Lines() { fmt.Println(line) }
package extract

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"tonetrace/dsp/trace"
)

// HalfPowerDB is 10·log10(2) dB, the drop from the passband at which
// corners and bandwidth edges are taken (the "−3 dB" points).
const HalfPowerDB = 3.010299956639812

// Shape is the kind of response, judged from the two ends of the trace
// and its interior extremes; see [Options] for the thresholds.
type Shape int

const (
	// ShapeOther is anything not described below: a trace whose ends
	// both rise or both fall (an integrator, a trace that starts beyond
	// the corner), a low end that falls while the high end is flat, or an
	// end that is neither flat nor heading one way out to the edge of the
	// trace (its window straddles a peak or a dip, as when a trace stops
	// just past a notch).
	ShapeOther Shape = iota
	// ShapeFlat: the spread of the gain stays within Options.FlatRangeDB
	// plus six times the noise level (an amplifier, a cable, an all-pass
	// network).
	ShapeFlat
	// ShapeLowpass: flat low end, high end falling at least
	// Options.FlatSlope dB/decade to its last point, or flat but more than
	// Options.ShelfMaxDB lower (a stop band on the measurement floor). May
	// carry a resonant peak.
	ShapeLowpass
	// ShapeHighpass: low end rising (falling toward its first point), or
	// flat and more than Options.ShelfMaxDB lower; flat high end.
	ShapeHighpass
	// ShapeBandpass: low end rising and high end falling.
	ShapeBandpass
	// ShapeNotch (band-stop): both ends flat at the same level and an
	// interior dip at least Options.NotchMinDB below them (or one end
	// returning from the dip, as for ShapePeaking).
	ShapeNotch
	// ShapePeaking: both ends flat at the same level and an interior bump,
	// or a dip shallower than Options.NotchMinDB (a peaking equaliser's
	// boost or cut, a resonance on a flat line).
	//
	// A notch or peaking response may also have only one flat end: the
	// other end is still on the skirt of the bump or dip, heading back
	// toward the flat end's level (not beyond it by more than the bump
	// threshold) with a slope that dies away toward the end.
	ShapePeaking
	// ShapeShelf: both ends flat, at levels more than Options.ShelfMinDB
	// and at most Options.ShelfMaxDB apart (a shelving equaliser, a lag or
	// lead network).
	ShapeShelf
)

// String returns the shape's name: "other", "flat", "low-pass",
// "high-pass", "band-pass", "notch", "peaking" or "shelf".
func (s Shape) String() string {
	switch s {
	case ShapeFlat:
		return "flat"
	case ShapeLowpass:
		return "low-pass"
	case ShapeHighpass:
		return "high-pass"
	case ShapeBandpass:
		return "band-pass"
	case ShapeNotch:
		return "notch"
	case ShapePeaking:
		return "peaking"
	case ShapeShelf:
		return "shelf"
	case ShapeOther:
		return "other"
	}
	return fmt.Sprintf("Shape(%d)", int(s))
}

// Corner is a frequency where the gain crosses PassbandGainDB −
// HalfPowerDB.
type Corner struct {
	// Freq is the crossing frequency in hertz.
	Freq float64
	// GainDB is the gain at Freq in dB: the passband level minus
	// HalfPowerDB, to rounding.
	GainDB float64
	// PhaseDeg is the phase at Freq in degrees, interpolated on the phase
	// unwrapped from the lowest frequency of the trace (so a fourth-order
	// low-pass reports −180°, not +180°).
	PhaseDeg float64
	// GroupDelay is −dφ/dω at Freq in seconds.
	GroupDelay float64
	// Rising is true when the gain increases with frequency through the
	// crossing (the corner of a high-pass, the lower edge of a band-pass).
	Rising bool
}

// Peak is the highest interior maximum of the gain.
//
// It is reported (Found) when the trace is not flat, the highest point
// lies strictly inside the trace and it rises above both end points by at
// least Options.MinBumpDB and four times the noise level
// (Options.NoiseDB). Otherwise every field is NaN.
type Peak struct {
	// Freq is the frequency of the maximum in hertz: the maximum of the
	// local model around the highest point (see the package doc), which
	// may lie between two points and above both.
	Freq float64
	// GainDB is the interpolated gain at the maximum, in dB.
	GainDB float64
	// PhaseDeg is the unwrapped phase at Freq, in degrees.
	PhaseDeg float64
	// GroupDelay is −dφ/dω at Freq, in seconds.
	GroupDelay float64
	// EdgeGainDB is the level in dB at which the edges F1 and F2 were
	// taken: GainDB − HalfPowerDB, except for ShapePeaking, where it is
	// the midpoint in dB between the peak and the plateaus (the bandwidth
	// convention of the Audio EQ Cookbook for peaking equalisers).
	EdgeGainDB float64
	// F1 and F2 are the nearest crossings of EdgeGainDB below and above
	// Freq, in hertz; NaN where the gain does not fall that far inside
	// the trace.
	F1, F2 float64
	// Bandwidth is F2 − F1 in hertz; NaN when either edge is missing.
	Bandwidth float64
	// Q is Freq/Bandwidth (dimensionless); NaN when Bandwidth is.
	Q float64
}

// Found reports whether the trace has a peak.
func (p Peak) Found() bool { return !math.IsNaN(p.Freq) }

// Notch is the deepest interior minimum of the gain.
//
// It is reported (Found) when the trace is not flat, the lowest point lies
// strictly inside the trace and it lies below both end points by at least
// Options.MinBumpDB and four times the noise level. Otherwise every field
// is NaN.
type Notch struct {
	// Freq is the frequency of the minimum of |H| in hertz: the minimum of
	// the local model around the lowest point (see the package doc).
	Freq float64
	// GainDB is the interpolated gain at the minimum, in dB. For an ideal
	// notch it is as deep as the model's zero comes to the sampled axis
	// (often below −100 dB), and −Inf if it lands on it exactly.
	GainDB float64
	// DepthDB is PassbandGainDB − GainDB: how far, in dB, the notch lies
	// below the passband (a positive number; +Inf for an ideal notch).
	DepthDB float64
	// EdgeGainDB is the level in dB at which the edges F1 and F2 were
	// taken: PassbandGainDB − HalfPowerDB for ShapeNotch (the stop band's
	// half-power edges), the midpoint in dB between the dip and the
	// plateaus for ShapePeaking; NaN for other shapes.
	EdgeGainDB float64
	// F1 and F2 are the nearest crossings of EdgeGainDB below and above
	// Freq, in hertz; NaN where missing.
	F1, F2 float64
	// Bandwidth is F2 − F1 in hertz, NaN when either edge is missing.
	Bandwidth float64
	// Q is Freq/Bandwidth; NaN when Bandwidth is.
	Q float64
}

// Found reports whether the trace has a notch.
func (n Notch) Found() bool { return !math.IsNaN(n.Freq) }

// Params are the readings of one trace. Float fields hold NaN when they
// could not be measured.
type Params struct {
	// Shape is the kind of response.
	Shape Shape

	// PassbandGainDB is the reference level in dB that corners, depths and
	// edges are measured from:
	//   - low-pass and shelf: the low-frequency plateau (LowLevelDB);
	//   - high-pass: the high-frequency plateau (HighLevelDB);
	//   - band-pass: the interpolated peak gain (Peak.GainDB), or the
	//     highest point when no peak is reported;
	//   - notch and peaking: the mean of the two plateaus;
	//   - flat: the median gain of all points;
	//   - other: the interpolated peak gain, or the highest point when the
	//     maximum lies at an end of the trace.
	PassbandGainDB float64

	// PassbandDelay is the group delay of the passband in seconds:
	// the least-squares slope of phase against linear frequency over the
	// plateau's end window for low-pass and high-pass, over the whole
	// trace for flat; the delay at the peak for band-pass and other shapes
	// with a peak.
	//
	// It is NaN for notch, peaking and shelf: their plateaus are not a
	// passband, and the phase slope there belongs to the skirt of the
	// section — below f0 a peaking boost advances the phase in
	// proportion to frequency, a constant negative delay of
	// −(A − 1/A)/(Q·2πf0) for the Audio EQ Cookbook's analog prototype
	// (A = 10^(gain/40); −40 µs for +6 dB, Q 1 at 2.8 kHz). The delay at
	// a peak is in Peak.GroupDelay.
	PassbandDelay float64

	// LowLevelDB and HighLevelDB are the levels in dB of the plateaus at
	// the low and high ends of the trace, taken at the end frequency: the
	// median of the end window's gains after removing its least-squares
	// slope, or, for an end that is flat only at the end of a dying skirt
	// (see Options.FlatSlope), the gain that the skirt reaches at the end
	// frequency. NaN when that end is not flat.
	LowLevelDB, HighLevelDB float64

	// SlopeLow and SlopeHigh are the asymptotic slopes in dB/decade at
	// the low and high ends: least-squares lines over the last
	// Options.EndDecades of the trace. NaN when that end is flat (see
	// Options.FlatSlope), and for the end of a peaking or notch response
	// that the trace leaves on the skirt of the peak or dip, on its way
	// back to the plateau (its slope is the skirt's, not an asymptote).
	SlopeLow, SlopeHigh float64

	// Corners are all crossings of PassbandGainDB − HalfPowerDB, in
	// ascending frequency. Empty when the gain never falls that far.
	Corners []Corner

	// Peak is the highest interior maximum; see [Peak].
	Peak Peak
	// Notch is the deepest interior minimum; see [Notch].
	Notch Notch

	// ShelfMidFreq is, for ShapeShelf, the frequency in hertz where the
	// gain crosses the midpoint in dB between the two plateaus (the
	// Audio EQ Cookbook's shelf frequency); NaN for other shapes.
	ShelfMidFreq float64
}

// Options are the thresholds that judge flatness and shape. The zero value
// selects every default.
type Options struct {
	// EndDecades is the width, in decades, of the window at each end of
	// the trace over which slopes and plateau levels are fitted. Default
	// 0.5; a window holds at least 2 points and at most half the trace.
	EndDecades float64
	// FlatSlope is the slope magnitude in dB/decade below which an end
	// counts as flat (a plateau). Default 3 dB/decade.
	//
	// The slope is the least-squares slope over the end window, or the
	// slope at the end frequency where the window holds the dying skirt
	// of a peak, a dip or a shelf further in: the slopes of the window's
	// two halves have the same sign, the outer one is smaller, and the
	// gain keeps going its way to the end. The slope is then taken to
	// die away geometrically toward the end (as the gain of any rational
	// response settles onto a constant, as f^∓2) and extrapolated to it.
	// A coarse trace that stops before such a skirt has fully settled is
	// thus not taken for a low-pass or high-pass.
	FlatSlope float64
	// FlatRangeDB is the spread of gain (highest − lowest point) within
	// which the whole trace is ShapeFlat, widened by 6·NoiseDB. Default
	// 1 dB.
	FlatRangeDB float64
	// ShelfMinDB is the difference between the two end plateaus above which
	// the trace is a shelf rather than a notch or peaking response.
	// Default 1 dB.
	ShelfMinDB float64
	// ShelfMaxDB is the difference between the two end plateaus above which
	// the lower one is taken for a stop band that has reached the noise
	// floor of the measurement (or a leakage path), making the trace a
	// low-pass or high-pass rather than a shelf. Default 30 dB.
	ShelfMaxDB float64
	// MinBumpDB is how far an interior extreme must stand out from both
	// end points to be reported as a peak or a notch (and at least
	// 4·NoiseDB). Default 0.1 dB.
	MinBumpDB float64
	// NotchMinDB is the depth below the plateaus from which a dip makes a
	// notch (band-stop) rather than a peaking cut. Default 20 dB.
	NotchMinDB float64
	// NoiseDB is the standard deviation of the gain's noise in dB. A
	// peak or notch must stand out by 4·NoiseDB (and MinBumpDB) to be
	// reported, the flat range widens by 6·NoiseDB, and an extreme that
	// does not stand out by 6·NoiseDB from its second neighbours is
	// interpolated in dB only. Default (0): estimated as the median GainU
	// of the points where any is known, else as the RMS scatter of the
	// gain about the least-squares line of the quieter end window.
	NoiseDB float64
}

// Defaults of [Options].
const (
	DefaultEndDecades  = 0.5
	DefaultFlatSlope   = 3.0
	DefaultFlatRangeDB = 1.0
	DefaultShelfMinDB  = 1.0
	DefaultShelfMaxDB  = 30.0
	DefaultMinBumpDB   = 0.1
	DefaultNotchMinDB  = 20.0
)

func (o Options) withDefaults() Options {
	def := func(v *float64, d float64) {
		if !(*v > 0) || math.IsInf(*v, 1) {
			*v = d
		}
	}
	def(&o.EndDecades, DefaultEndDecades)
	def(&o.FlatSlope, DefaultFlatSlope)
	def(&o.FlatRangeDB, DefaultFlatRangeDB)
	def(&o.ShelfMinDB, DefaultShelfMinDB)
	def(&o.ShelfMaxDB, DefaultShelfMaxDB)
	def(&o.MinBumpDB, DefaultMinBumpDB)
	def(&o.NotchMinDB, DefaultNotchMinDB)
	return o
}

// Errors returned by Analyze, wrapped with the details.
var (
	// ErrTooFewPoints: the trace has fewer than 3 points.
	ErrTooFewPoints = errors.New("too few points")
	// ErrFrequency: a frequency is zero, negative or not finite.
	ErrFrequency = errors.New("frequency must be finite and above 0 Hz; drop DC or invalid points")
	// ErrOrder: frequencies do not ascend strictly.
	ErrOrder = errors.New("frequencies must ascend strictly; sort the points and merge duplicates")
	// ErrGain: |H| is zero or H is not finite, so the gain in dB is not a
	// finite number.
	ErrGain = errors.New("gain is not finite; drop the point or remeasure it")
)

// PointError reports a bad point of the trace.
type PointError struct {
	// Index is the position of the point in the trace.
	Index int
	// Freq is its frequency in hertz.
	Freq float64
	// Err is one of ErrFrequency, ErrOrder, ErrGain.
	Err error
}

// Error returns "extract: point i at f Hz: " followed by the problem and
// its fix.
func (e *PointError) Error() string {
	return fmt.Sprintf("extract: point %d at %g Hz: %v", e.Index, e.Freq, e.Err)
}

// Unwrap returns the sentinel error, for errors.Is.
func (e *PointError) Unwrap() error { return e.Err }

// Analyze reads the parameters of a response with default [Options].
// points must hold at least 3 points in strictly ascending, positive,
// finite frequency with finite, non-zero H. It allocates its scratch
// space on every call; an [Analyzer] reuses it.
func Analyze(points []trace.Point) (Params, error) {
	var a Analyzer
	var p Params
	err := a.AnalyzeInto(&p, points)
	return p, err
}

// Analyzer reads parameters from traces, reusing its scratch buffers from
// one call to the next. The zero value is ready, with default Options. An
// Analyzer must not be used by two goroutines at once.
type Analyzer struct {
	// Options are the thresholds; zero fields take their defaults.
	Options Options

	u, f, g, ph, work []float64
	h                 []complex128
	m                 model
	pk, nt            extreme
	tau               float64 // delay removed before complex fits, s
	noise             float64 // standard deviation of gain noise, dB
}

// AnalyzeInto reads the parameters of points into dst, reusing the
// capacity of dst.Corners. With the buffers warm it does not allocate.
// On error dst is left with Shape ShapeOther, NaN fields and no corners.
func (a *Analyzer) AnalyzeInto(dst *Params, points []trace.Point) error {
	reset(dst)
	if err := validate(points); err != nil {
		return err
	}
	o := a.Options.withDefaults()
	n := len(points)
	a.u = grow(a.u, n)
	a.f = grow(a.f, n)
	a.g = grow(a.g, n)
	a.work = grow(a.work, n)
	if cap(a.h) < n {
		a.h = make([]complex128, n)
	}
	a.h = a.h[:n]
	for i, pt := range points {
		a.u[i] = math.Log10(pt.Freq)
		a.f[i] = pt.Freq
		a.h[i] = pt.H
		a.g[i] = 20 * math.Log10(cmplx.Abs(pt.H))
	}
	a.ph = trace.UnwrappedPhaseDeg(a.ph, points)
	u, g := a.u, a.g

	// The two end windows.
	nw := func(count int) int { return max(2, min(count, (n+1)/2)) }
	loN := 0
	for loN < n && u[loN] <= u[0]+o.EndDecades*(1+1e-12) {
		loN++
	}
	loN = nw(loN)
	hiN := 0
	for hiN < n && u[n-1-hiN] >= u[n-1]-o.EndDecades*(1+1e-12) {
		hiN++
	}
	hiN = nw(hiN)
	slopeLo, levelLo, rmsLo := a.endFit(0, loN, u[0])
	slopeHi, levelHi, rmsHi := a.endFit(n-hiN, n, u[n-1])
	// An end counts as flat when its slope over the window is below
	// FlatSlope, or when the window holds the dying skirt of a feature
	// further in and the slope extrapolated to the end is (see endSkirt;
	// confirmed below). The skirt, not a line, then describes the window.
	loFlat := math.Abs(slopeLo) < o.FlatSlope
	hiFlat := math.Abs(slopeHi) < o.FlatSlope
	skLo, skHi := noSkirt(), noSkirt()
	if !loFlat {
		skLo = a.endSkirt(0, loN, true)
	}
	if !hiFlat {
		skHi = a.endSkirt(n-hiN, n, false)
	}
	loSettles := !loFlat && math.Abs(skLo.endSlope) < o.FlatSlope
	hiSettles := !hiFlat && math.Abs(skHi.endSlope) < o.FlatSlope
	if loSettles {
		rmsLo = skLo.rms
	}
	if hiSettles {
		rmsHi = skHi.rms
	}
	a.noise = o.NoiseDB
	if !(a.noise > 0) || math.IsInf(a.noise, 1) {
		a.noise = a.noiseFrom(points, rmsLo, rmsHi)
	}
	bump := math.Max(o.MinBumpDB, 4*a.noise)
	// A slope tells where an end is heading only if the gain keeps going
	// its way to the end; a window that straddles a peak or a dip gives
	// the end no direction, and no skirt either.
	loMono := a.monotoneEnd(0, loN, true, slopeLo, bump)
	hiMono := a.monotoneEnd(n-hiN, n, false, slopeHi, bump)
	if loSettles && loMono {
		loFlat, levelLo = true, skLo.level
	}
	if hiSettles && hiMono {
		hiFlat, levelHi = true, skHi.level
	}
	loRise := !loFlat && loMono && slopeLo > 0
	hiFall := !hiFlat && hiMono && slopeHi < 0
	// A latency shows as phase falling in proportion to frequency at the
	// high end, where the phase of a lumped network has settled. Below
	// 30° over the window it is too small to matter and is not removed,
	// which keeps second-order networks exact for the rational model.
	a.tau = -lsqSlope(a.f[n-hiN:], a.ph[n-hiN:]) / 360
	if math.Abs(a.tau*(a.f[n-1]-a.f[n-hiN])*360) < 30 {
		a.tau = 0
	}
	kMax, kMin := 0, 0
	for i := 1; i < n; i++ {
		if g[i] > g[kMax] {
			kMax = i
		}
		if g[i] < g[kMin] {
			kMin = i
		}
	}
	flat := g[kMax]-g[kMin] <= o.FlatRangeDB+6*a.noise

	// Interior extremes, interpolated: they also judge the shape, since a
	// narrow peak or notch may fall between the points.
	a.pk.ok, a.nt.ok = false, false
	if !flat && kMax > 0 && kMax < n-1 && g[kMax]-math.Max(g[0], g[n-1]) >= bump {
		a.pk.set(a, kMax, 1)
	}
	if !flat && kMin > 0 && kMin < n-1 && math.Min(g[0], g[n-1])-g[kMin] >= bump {
		a.nt.set(a, kMin, -1)
	}
	gMax, gMin := g[kMax], g[kMin]
	if a.pk.ok {
		gMax = a.pk.v
	}
	if a.nt.ok {
		gMin = a.nt.v
	}

	// An end still on the skirt of the peak or the notch, on its way back
	// to the plateau at the other end.
	retLo := !flat && !loFlat && hiFlat && loMono && a.returning(skLo, slopeLo, true, levelHi, bump)
	retHi := !flat && loFlat && !hiFlat && hiMono && a.returning(skHi, slopeHi, false, levelLo, bump)
	if !loFlat && !retLo {
		dst.SlopeLow = slopeLo
	} else if loFlat {
		dst.LowLevelDB = levelLo
	}
	if !hiFlat && !retHi {
		dst.SlopeHigh = slopeHi
	} else if hiFlat {
		dst.HighLevelDB = levelHi
	}

	// Shape.
	shape := ShapeOther
	boost := true // for ShapePeaking: the bump outweighs the dip
	plateau := math.NaN()
	switch {
	case flat:
		shape = ShapeFlat
	case loFlat && hiFlat && levelLo-levelHi > o.ShelfMaxDB:
		shape = ShapeLowpass // the high plateau is a stop band or a floor
	case loFlat && hiFlat && levelHi-levelLo > o.ShelfMaxDB:
		shape = ShapeHighpass
	case loFlat && hiFlat && math.Abs(levelLo-levelHi) > o.ShelfMinDB:
		shape = ShapeShelf
	case loFlat && hiFlat, retLo, retHi:
		switch {
		case retLo:
			plateau = levelHi
		case retHi:
			plateau = levelLo
		default:
			plateau = 0.5 * (levelLo + levelHi)
		}
		up, down := gMax-plateau, plateau-gMin
		boost = up >= down
		if !boost && down >= o.NotchMinDB {
			shape = ShapeNotch
		} else {
			shape = ShapePeaking
		}
	case loFlat && hiFall:
		shape = ShapeLowpass
	case loRise && hiFlat:
		shape = ShapeHighpass
	case loRise && hiFall:
		shape = ShapeBandpass
	}
	dst.Shape = shape

	if a.pk.ok {
		dst.Peak.Freq = math.Pow(10, a.pk.t)
		dst.Peak.GainDB = a.pk.v
		dst.Peak.PhaseDeg, dst.Peak.GroupDelay = a.pk.m.phase(a.pk.t)
	}
	if a.nt.ok {
		dst.Notch.Freq = math.Pow(10, a.nt.t)
		dst.Notch.GainDB = a.nt.v
	}

	// Reference level.
	var ref float64
	switch shape {
	case ShapeLowpass, ShapeShelf:
		ref = levelLo
	case ShapeHighpass:
		ref = levelHi
	case ShapeNotch, ShapePeaking:
		ref = plateau
	case ShapeFlat:
		a.work = append(a.work[:0], g...)
		ref = median(a.work)
	default: // band-pass, other
		ref = gMax
	}
	dst.PassbandGainDB = ref

	// Passband delay.
	switch shape {
	case ShapeLowpass:
		dst.PassbandDelay = -lsqSlope(a.f[:loN], a.ph[:loN]) / 360
	case ShapeHighpass:
		dst.PassbandDelay = -lsqSlope(a.f[n-hiN:], a.ph[n-hiN:]) / 360
	case ShapeFlat:
		dst.PassbandDelay = -lsqSlope(a.f, a.ph) / 360
	case ShapeBandpass, ShapeOther:
		dst.PassbandDelay = dst.Peak.GroupDelay
	}

	// Corners.
	level := ref - HalfPowerDB
	for i := 0; i+1 < n; i++ {
		if a.cornersAround(dst, &a.pk, i, level) || a.cornersAround(dst, &a.nt, i, level) {
			continue
		}
		above0, above1 := g[i] > level, g[i+1] > level
		if above0 == above1 {
			continue
		}
		t := a.crossing(&a.m, i, level)
		dst.Corners = append(dst.Corners, corner(&a.m, t, level, above1))
	}

	// Edges of the peak and the notch.
	if a.pk.ok {
		pk := &dst.Peak
		pk.EdgeGainDB = pk.GainDB - HalfPowerDB
		if shape == ShapePeaking && boost {
			pk.EdgeGainDB = 0.5 * (pk.GainDB + ref)
		}
		pk.F1, pk.F2 = a.edges(&a.pk, pk.EdgeGainDB)
		pk.Bandwidth = pk.F2 - pk.F1
		pk.Q = pk.Freq / pk.Bandwidth
	}
	if a.nt.ok {
		nt := &dst.Notch
		nt.DepthDB = ref - nt.GainDB
		switch {
		case shape == ShapeNotch:
			nt.EdgeGainDB = ref - HalfPowerDB
		case shape == ShapePeaking && !boost:
			nt.EdgeGainDB = 0.5 * (nt.GainDB + ref)
		}
		if !math.IsNaN(nt.EdgeGainDB) {
			nt.F1, nt.F2 = a.edges(&a.nt, nt.EdgeGainDB)
			nt.Bandwidth = nt.F2 - nt.F1
			nt.Q = nt.Freq / nt.Bandwidth
		}
	}

	if shape == ShapeShelf {
		mid := 0.5 * (levelLo + levelHi)
		for i := 0; i+1 < n; i++ {
			if (g[i] > mid) != (g[i+1] > mid) {
				dst.ShelfMidFreq = math.Pow(10, a.crossing(&a.m, i, mid))
				break
			}
		}
	}
	return nil
}

// extreme is an interior maximum (sign +1) or minimum (sign −1) of the
// gain, interpolated around the extreme point k.
type extreme struct {
	ok   bool
	sign float64
	k    int
	t, v float64 // u and gain in dB of the interpolated extreme
	m    model   // the model it was found on
}

func (e *extreme) set(a *Analyzer, k int, sign float64) {
	e.ok, e.sign, e.k = true, sign, k
	e.t, e.v = a.extremum(&e.m, k, sign)
}

// within reports whether the interpolated extreme lies strictly inside
// the interval [u[i], u[i+1]].
func (e *extreme) within(u []float64, i int) bool {
	return e.ok && u[i] < e.t && e.t < u[i+1]
}

func corner(m *model, t, level float64, rising bool) Corner {
	c := Corner{Freq: math.Pow(10, t), GainDB: level, Rising: rising}
	c.PhaseDeg, c.GroupDelay = m.phase(t)
	return c
}

// cornersAround appends the crossings of level inside interval i when
// the extreme e lies inside it, found on the extreme's own model: a peak
// between two points can rise above a level that neither point reaches.
// It reports whether it handled the interval.
func (a *Analyzer) cornersAround(dst *Params, e *extreme, i int, level float64) bool {
	if !e.within(a.u, i) {
		return false
	}
	a0, ax, a1 := a.g[i] > level, e.v > level, a.g[i+1] > level
	var t0, t1 float64
	ok0, ok1 := true, true
	if a0 != ax {
		t0, ok0 = e.m.bisect(a.u[i], e.t, level)
	}
	if ax != a1 {
		t1, ok1 = e.m.bisect(e.t, a.u[i+1], level)
	}
	if !ok0 || !ok1 {
		return false
	}
	if a0 != ax {
		dst.Corners = append(dst.Corners, corner(&e.m, t0, level, ax))
	}
	if ax != a1 {
		dst.Corners = append(dst.Corners, corner(&e.m, t1, level, a1))
	}
	return true
}

// edges returns the nearest frequencies below and above the extreme e
// where the gain crosses level, NaN where it does not within the trace.
func (a *Analyzer) edges(e *extreme, level float64) (f1, f2 float64) {
	g, u := a.g, a.u
	f1, f2 = math.NaN(), math.NaN()
	// inside: on the extreme's side of level.
	inside := func(v float64) bool { return (v-level)*e.sign > 0 }
	if !inside(e.v) {
		return f1, f2
	}
	// The points bracketing the extreme: j ≤ it ≤ j+1 … or the extreme
	// point itself when the interpolation settled on it.
	left, right := e.k, e.k
	switch {
	case e.within(u, e.k-1):
		left, right = e.k-1, e.k
	case e.within(u, e.k):
		left, right = e.k, e.k+1
	}
	// When the extreme's model disagrees with a point next to the
	// level (a least-squares model need not pass through the points), the
	// crossing comes from the interval's own interpolation, if the points
	// bracket the level.
	bracket := inside(g[left]) != inside(g[right])
	if left != right && !inside(g[left]) {
		if t, ok := e.m.bisect(u[left], e.t, level); ok {
			f1 = math.Pow(10, t)
		} else if bracket {
			f1 = math.Pow(10, a.crossing(&a.m, left, level))
		} else if t, ok := e.m.bisect(u[max(left-1, 0)], e.t, level); ok {
			f1 = math.Pow(10, t)
		}
	} else {
		for i := left; i > 0; i-- {
			if !inside(g[i-1]) {
				f1 = math.Pow(10, a.crossing(&a.m, i-1, level))
				break
			}
		}
	}
	if left != right && !inside(g[right]) {
		if t, ok := e.m.bisect(e.t, u[right], level); ok {
			f2 = math.Pow(10, t)
		} else if bracket {
			f2 = math.Pow(10, a.crossing(&a.m, left, level))
		} else if t, ok := e.m.bisect(e.t, u[min(right+1, len(u)-1)], level); ok {
			f2 = math.Pow(10, t)
		}
	} else {
		for i := right; i+1 < len(g); i++ {
			if !inside(g[i+1]) {
				f2 = math.Pow(10, a.crossing(&a.m, i, level))
				break
			}
		}
	}
	return f1, f2
}

// endFit fits a least-squares line to the gain over points [i0, i1) and
// returns its slope in dB/decade, the plateau level at uEnd (the median of
// the gains after removing the fitted slope, referred to uEnd) and the RMS
// residual in dB (NaN with fewer than 3 points).
func (a *Analyzer) endFit(i0, i1 int, uEnd float64) (slope, level, rms float64) {
	u, g := a.u[i0:i1], a.g[i0:i1]
	slope = lsqSlope(u, g)
	w := a.work[:0]
	var mean float64
	for i := range u {
		w = append(w, g[i]-slope*(u[i]-uEnd))
		mean += w[i]
	}
	mean /= float64(len(w))
	var ss float64
	for _, v := range w {
		ss += (v - mean) * (v - mean)
	}
	rms = math.NaN()
	if len(w) > 2 {
		rms = math.Sqrt(ss / float64(len(w)-2))
	}
	return slope, median(w), rms
}

// skirt describes how the slope of an end window changes toward the end
// of the trace; see endSkirt.
type skirt struct {
	decay    float64 // p in 1/decade, |slope| ∝ 10^(p·v); NaN when the slope does not die away
	endSlope float64 // slope extrapolated to the end in dB/decade; NaN when decay is
	level    float64 // gain of the fitted skirt at the end in dB; NaN when decay is
	rms      float64 // RMS residual of the fitted skirt in dB; NaN when decay is
}

// noSkirt returns the skirt of an end that has none: every field NaN.
func noSkirt() skirt {
	nan := math.NaN()
	return skirt{decay: nan, endSlope: nan, level: nan, rms: nan}
}

// endSkirt examines the end window [i0, i1) (at the low end of the trace
// when low is true) for a slope that dies away toward the end of the
// trace, as on the skirt of a peak, a dip or a shelf that settles onto a
// plateau beyond the end. Least-squares lines through the half of the
// window nearer the end (outer) and the half farther in (inner), which
// share the middle point when the count is odd, give two slopes at the
// halves' mean distances v from the end. When the slopes have the same
// sign and the outer one is the smaller, the slope is taken to decay
// geometrically toward the end, |s(v)| = |s_end|·10^(p·v) — the way the
// gain of any rational response approaches a constant, as f^∓2 — and
// extrapolated to v = 0. An asymptote (a constant slope, or one growing
// toward the end) yields NaN, as does a window of fewer than 4 points.
func (a *Analyzer) endSkirt(i0, i1 int, low bool) skirt {
	sk := noSkirt()
	cnt := i1 - i0
	if cnt < 4 {
		return sk
	}
	half := (cnt + 1) / 2
	oi0, oi1, ii0, ii1 := i0, i0+half, i1-half, i1 // outer and inner halves, low end
	uEnd := a.u[i0]
	if !low {
		oi0, oi1, ii0, ii1 = i1-half, i1, i0, i0+half
		uEnd = a.u[i1-1]
	}
	dist := func(j0, j1 int) float64 {
		var v float64
		for _, x := range a.u[j0:j1] {
			v += math.Abs(x - uEnd)
		}
		return v / float64(j1-j0)
	}
	sIn := lsqSlope(a.u[ii0:ii1], a.g[ii0:ii1])
	sOut := lsqSlope(a.u[oi0:oi1], a.g[oi0:oi1])
	vIn, vOut := dist(ii0, ii1), dist(oi0, oi1)
	r := sOut / sIn
	if !(r > 0 && r < 1) || !(vIn > vOut) {
		return sk
	}
	p := -math.Log10(r) / (vIn - vOut)
	sk.decay = p
	sk.endSlope = sOut * math.Pow(10, -p*vOut)
	// The level at the end: g = L + B·10^(p·v) fitted by least squares
	// over the whole window, at v = 0.
	u, g := a.u[i0:i1], a.g[i0:i1]
	w := a.work[:cnt]
	var mw, mg float64
	for i := range u {
		w[i] = math.Pow(10, p*math.Abs(u[i]-uEnd))
		mw += w[i]
		mg += g[i]
	}
	mw /= float64(cnt)
	mg /= float64(cnt)
	var sww, swg float64
	for i := range u {
		sww += (w[i] - mw) * (w[i] - mw)
		swg += (w[i] - mw) * (g[i] - mg)
	}
	b := swg / sww
	l := mg - b*mw
	var ss float64
	for i := range u {
		e := g[i] - l - b*w[i]
		ss += e * e
	}
	sk.level = l + b
	sk.rms = math.Sqrt(ss / float64(cnt-2))
	return sk
}

// monotoneEnd reports whether the end point of the window [i0, i1) (at
// the low end of the trace when low is true) is, within tol dB, the
// extreme of the window that the slope (dB/decade) heads for: the highest
// point when the gain rises toward the end, the lowest when it falls.
func (a *Analyzer) monotoneEnd(i0, i1 int, low bool, slope, tol float64) bool {
	end, dir := i1-1, math.Copysign(1, slope) // dir: +1 when rising toward the end
	if low {
		end, dir = i0, -dir
	}
	for _, v := range a.g[i0:i1] {
		if (a.g[end]-v)*dir < -tol {
			return false
		}
	}
	return true
}

// minSkirtDecay is the least decay rate, in 1/decade, of the slope of a
// skirt returning to a plateau (see returning): the slope must at least
// halve every 0.6 decade. Far from its centre the skirt of a
// second-order section settles as f^∓2 (p = 2); within a decade of a
// broad one (Q 0.5) it decays at about p = 0.7. An asymptote does not
// decay (p ≤ 0). The stop band of a resonant low-pass also eases toward
// its asymptote past the peak (p up to about 1 within half a decade of a
// Q 10 peak), but far below the plateau and at tens of dB/decade, which
// returning and FlatSlope reject.
const minSkirtDecay = 0.5

// returning reports whether an end that is not flat is the skirt of the
// interpolated peak or notch on its way back to the plateau at level
// plateau (dB) at the other end: the slope points from the extreme toward
// the plateau, the gain at the end has not passed the plateau by more
// than bump dB, and the slope dies away toward the end (see endSkirt).
func (a *Analyzer) returning(sk skirt, slope float64, low bool, plateau, bump float64) bool {
	if !(sk.decay >= minSkirtDecay) {
		return false
	}
	// side is +1 when the gain comes down from above toward the
	// plateau, −1 when it comes up from below.
	side := math.Copysign(1, slope)
	if !low {
		side = -side
	}
	if (sk.level-plateau)*side < -bump {
		return false
	}
	if side > 0 {
		return a.pk.ok && a.pk.v-plateau >= bump
	}
	return a.nt.ok && plateau-a.nt.v >= bump
}

// noiseFrom estimates the standard deviation of the gain noise in dB: the
// median of the points' GainU where any is known, else the smaller RMS
// residual of the two end windows' lines, else 0.
func (a *Analyzer) noiseFrom(points []trace.Point, rmsLo, rmsHi float64) float64 {
	w := a.work[:0]
	for _, p := range points {
		if p.GainU >= 0 && !math.IsInf(p.GainU, 1) {
			w = append(w, p.GainU)
		}
	}
	if len(w) > 0 {
		return median(w)
	}
	switch {
	case math.IsNaN(rmsLo) && math.IsNaN(rmsHi):
		return 0
	case math.IsNaN(rmsLo):
		return rmsHi
	case math.IsNaN(rmsHi):
		return rmsLo
	}
	return math.Min(rmsLo, rmsHi)
}

// lsqSlope returns the least-squares slope of y against x (len ≥ 2).
func lsqSlope(x, y []float64) float64 {
	var mx, my float64
	for i := range x {
		mx += x[i]
		my += y[i]
	}
	mx /= float64(len(x))
	my /= float64(len(x))
	var sxy, sxx float64
	for i := range x {
		dx := x[i] - mx
		sxy += dx * (y[i] - my)
		sxx += dx * dx
	}
	return sxy / sxx
}

// median sorts v in place and returns its median.
func median(v []float64) float64 {
	slices.Sort(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return 0.5 * (v[n/2-1] + v[n/2])
}

func validate(points []trace.Point) error {
	if len(points) < 3 {
		return fmt.Errorf("extract: %w: got %d, need at least 3; measure more frequencies", ErrTooFewPoints, len(points))
	}
	for i, p := range points {
		if !(p.Freq > 0) || math.IsInf(p.Freq, 1) {
			return &PointError{Index: i, Freq: p.Freq, Err: ErrFrequency}
		}
		if i > 0 && !(p.Freq > points[i-1].Freq) {
			return &PointError{Index: i, Freq: p.Freq, Err: ErrOrder}
		}
		m := cmplx.Abs(p.H)
		if !(m > 0) || math.IsInf(m, 1) || cmplx.IsNaN(p.H) {
			return &PointError{Index: i, Freq: p.Freq, Err: ErrGain}
		}
	}
	return nil
}

func reset(dst *Params) {
	nan := math.NaN()
	corners := dst.Corners[:0]
	*dst = Params{
		Shape:          ShapeOther,
		PassbandGainDB: nan,
		PassbandDelay:  nan,
		LowLevelDB:     nan,
		HighLevelDB:    nan,
		SlopeLow:       nan,
		SlopeHigh:      nan,
		Corners:        corners,
		Peak: Peak{Freq: nan, GainDB: nan, PhaseDeg: nan, GroupDelay: nan,
			EdgeGainDB: nan, F1: nan, F2: nan, Bandwidth: nan, Q: nan},
		Notch: Notch{Freq: nan, GainDB: nan, DepthDB: nan, EdgeGainDB: nan,
			F1: nan, F2: nan, Bandwidth: nan, Q: nan},
		ShelfMidFreq: nan,
	}
}

func grow(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}
