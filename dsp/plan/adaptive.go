package plan

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"tonetrace/dsp/trace"
)

// Defaults an [Adaptive] plan uses for fields left at zero.
const (
	// DefaultStartPerDecade is the density of the starting grid: one point
	// per decade (10, 100, 1k, 10k … plus the two ends).
	DefaultStartPerDecade = 1
	// DefaultTolDB is the gain tolerance in dB.
	DefaultTolDB = 0.2
	// DefaultTolDeg is the phase tolerance in degrees.
	DefaultTolDeg = 2.0
	// DefaultMaxPoints is the point budget.
	DefaultMaxPoints = 200
)

// GainFloorDB is the gain an [Adaptive] plan gives a point whose |H| is
// zero or below −300 dB, so a perfect null does not make the curve
// infinite.
const GainFloorDB = -300.0

// DefaultMinRatio is the smallest ratio f2/f1 an [Adaptive] plan leaves
// between neighbouring points when MinRatio is zero: 10^(1/100), a
// hundredth of a decade.
const DefaultMinRatio = 1.023292992280754

// Adaptive is a frequency plan that refines itself from measurements.
//
// It starts on the log grid PerDecade(From, To, StartPerDecade) and then,
// each time it is given the points measured so far, returns the
// frequencies where the piecewise-linear curve through those points — gain
// in dB and unwrapped phase in degrees, both over log10 f — is expected to
// be off by more than TolDB or TolDeg, until no interval needs a point, the
// budget MaxPoints is spent, or every interval that needs a point is too
// narrow to split (MinRatio).
//
// # The deviation test
//
// Sort the measured points by frequency; let u = log10 f, y the gain in
// dB (or the unwrapped phase in degrees, see [trace.UnwrappedPhaseDeg]).
// For each interior point i with neighbours at distances h₁ = uᵢ − uᵢ₋₁ and
// h₂ = uᵢ₊₁ − uᵢ, the three-point deviation dᵢ is yᵢ minus the straight
// line through its neighbours, evaluated at uᵢ. For a parabola dᵢ equals
// −(y″/2)·h₁·h₂, so the local curvature is estimated as
//
//	cᵢ = 2·|dᵢ| / (h₁·h₂)    (dB or degrees per decade²)
//
// The interval between points j and j+1 (width h in decades) takes the
// larger curvature of the two triplets that contain it, c = max(cⱼ, cⱼ₊₁),
// and its expected error midway is e = c·h²/8, the midpoint error of a
// straight chord across a parabola. Its score is
//
//	s = max(e_gain/TolDB, e_phase/TolDeg)
//
// and it is split at its geometric midpoint √(fⱼ·fⱼ₊₁) when s > 1, when
// both halves keep a ratio of at least MinRatio, and when that midpoint
// was not asked for before. When more intervals qualify than the budget
// allows, those with the highest score go first. With only two measured
// points no curvature is known, and the one interval is split.
//
// A response that is a straight line in log f (flat, or a constant slope
// such as 20 dB/decade with constant phase) therefore stays on the
// starting grid. Like any sampling plan it can miss a feature narrower
// than the starting grid that leaves no trace in the three-point
// deviations; raise StartPerDecade when such features are expected.
//
// The zero value of each tuning field selects its default. Create a new
// Adaptive (or call [Adaptive.Reset]) for each run; the fields are read
// once, on the first call to [Adaptive.Next].
type Adaptive struct {
	// From and To bound the plan in hertz; 0 < From < To. Both are
	// measured.
	From, To float64
	// StartPerDecade is the density of the starting grid in points per
	// decade; 0 means [DefaultStartPerDecade]; must not be negative.
	StartPerDecade int
	// TolDB is the gain tolerance in dB (0: [DefaultTolDB]; +Inf ignores
	// gain; must not be negative).
	TolDB float64
	// TolDeg is the phase tolerance in degrees (0: [DefaultTolDeg]; +Inf
	// ignores phase; must not be negative).
	TolDeg float64
	// MaxPoints is the budget: the most distinct frequencies the plan
	// asks for, the starting grid included (0: [DefaultMaxPoints]); it
	// must hold the starting grid.
	MaxPoints int
	// MinRatio is the smallest ratio f2/f1 the plan creates between
	// neighbouring frequencies (0: [DefaultMinRatio]; otherwise > 1).
	MinRatio float64

	cfg     adaptiveConfig
	started bool
	done    bool
	asked   []float64 // every frequency returned so far, ascending
}

type adaptiveConfig struct {
	from, to       float64
	start          int
	tolDB, tolDeg  float64
	maxPoints      int
	minLogSpacing2 float64 // log10(MinRatio²): the narrowest interval to split
}

// Reset forgets every frequency asked for so far, so the next call to
// [Adaptive.Next] starts over from the starting grid with the current
// field values.
func (a *Adaptive) Reset() {
	a.started, a.done = false, false
	a.asked = a.asked[:0]
}

// Next returns the next batch of frequencies to measure, in ascending
// order, or nil when the plan is complete.
//
// The first call returns the starting grid and ignores measured. Later
// calls take every point measured so far, in any order; points outside
// [From, To] or with a non-finite frequency or ratio H (a failed
// measurement) are ignored, and of two points
// at the same frequency the later one in the slice wins. A gain below
// [GainFloorDB] counts as GainFloorDB. Once Next has returned nil it keeps
// returning nil until [Adaptive.Reset].
//
// Errors: invalid fields (first call), or fewer than two usable measured
// points on a later call (measure the batch returned before).
func (a *Adaptive) Next(measured []trace.Point) ([]float64, error) {
	if !a.started {
		cfg, err := a.config()
		if err != nil {
			return nil, err
		}
		grid, err := PerDecade(cfg.from, cfg.to, cfg.start)
		if err != nil {
			return nil, err
		}
		if len(grid) > cfg.maxPoints {
			return nil, fmt.Errorf("%w: the starting grid has %d points but the budget is %d; raise MaxPoints or lower StartPerDecade",
				ErrRange, len(grid), cfg.maxPoints)
		}
		a.cfg, a.started, a.done = cfg, true, false
		a.asked = append(a.asked[:0], grid...)
		return slices.Clone(grid), nil
	}
	if a.done {
		return nil, nil
	}
	c := &a.cfg

	pts := usable(measured, c.from, c.to)
	if len(pts) < 2 {
		return nil, fmt.Errorf("plan: adaptive plan needs at least two measured points between %g Hz and %g Hz, got %d; pass every point measured so far",
			c.from, c.to, len(pts))
	}
	used := len(a.asked)
	for _, p := range pts {
		if !a.wasAsked(p.Freq) {
			used++
		}
	}
	remaining := c.maxPoints - used
	if remaining <= 0 {
		a.done = true
		return nil, nil
	}

	cands := a.candidates(pts)
	if len(cands) == 0 {
		a.done = true
		return nil, nil
	}
	slices.SortFunc(cands, func(x, y candidate) int { return cmp.Compare(y.score, x.score) })
	if len(cands) > remaining {
		cands = cands[:remaining]
	}
	out := make([]float64, len(cands))
	for i, cd := range cands {
		out[i] = cd.freq
	}
	slices.Sort(out)
	a.asked = append(a.asked, out...)
	slices.Sort(a.asked)
	return out, nil
}

type candidate struct {
	freq, score float64
}

// candidates scores every interval between neighbouring points (sorted,
// distinct) and returns the midpoints of those that should be split.
func (a *Adaptive) candidates(pts []trace.Point) []candidate {
	c := &a.cfg
	m := len(pts)
	u := make([]float64, m)
	gain := make([]float64, m)
	for i, p := range pts {
		u[i] = math.Log10(p.Freq)
		g := p.GainDB()
		if !(g >= GainFloorDB) { // also catches NaN and −Inf
			g = GainFloorDB
		}
		gain[i] = g
	}
	phase := trace.UnwrappedPhaseDeg(nil, pts)

	// Curvature estimates at interior points, in units per decade².
	curvG := make([]float64, m)
	curvP := make([]float64, m)
	for i := 1; i < m-1; i++ {
		h1, h2 := u[i]-u[i-1], u[i+1]-u[i]
		curvG[i] = 2 * math.Abs(chordDeviation(u, gain, i)) / (h1 * h2)
		curvP[i] = 2 * math.Abs(chordDeviation(u, phase, i)) / (h1 * h2)
	}

	var out []candidate
	for j := 0; j < m-1; j++ {
		h := u[j+1] - u[j]
		if h < c.minLogSpacing2 {
			continue
		}
		var score float64
		if m == 2 {
			score = math.Inf(1)
		} else {
			cg, cp := 0.0, 0.0
			if j >= 1 {
				cg, cp = curvG[j], curvP[j]
			}
			if j+1 <= m-2 {
				cg, cp = math.Max(cg, curvG[j+1]), math.Max(cp, curvP[j+1])
			}
			e := h * h / 8
			score = math.Max(cg*e/c.tolDB, cp*e/c.tolDeg)
			if math.IsNaN(score) {
				score = math.Inf(1)
			}
		}
		if score <= 1 {
			continue
		}
		f := math.Sqrt(pts[j].Freq * pts[j+1].Freq)
		if a.wasAsked(f) {
			continue
		}
		out = append(out, candidate{freq: f, score: score})
	}
	return out
}

// chordDeviation returns y[i] minus the straight line through
// (u[i−1], y[i−1]) and (u[i+1], y[i+1]) evaluated at u[i].
func chordDeviation(u, y []float64, i int) float64 {
	t := (u[i] - u[i-1]) / (u[i+1] - u[i-1])
	return y[i] - (y[i-1] + t*(y[i+1]-y[i-1]))
}

// wasAsked reports whether f is (within sameFreqRel) a frequency already
// returned.
func (a *Adaptive) wasAsked(f float64) bool {
	i, _ := slices.BinarySearch(a.asked, f)
	if i < len(a.asked) && near(a.asked[i], f) {
		return true
	}
	return i > 0 && near(a.asked[i-1], f)
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// usable returns the points inside [from, to] with finite frequency and
// ratio, sorted by frequency, one per frequency (the last given wins).
func usable(measured []trace.Point, from, to float64) []trace.Point {
	lo, hi := from*(1-sameFreqRel), to*(1+sameFreqRel)
	pts := make([]trace.Point, 0, len(measured))
	for _, p := range measured {
		h := p.H
		if p.Freq >= lo && p.Freq <= hi && !math.IsInf(p.Freq, 0) && finite(real(h)) && finite(imag(h)) {
			pts = append(pts, p)
		}
	}
	slices.SortStableFunc(pts, func(x, y trace.Point) int { return cmp.Compare(x.Freq, y.Freq) })
	out := pts[:0]
	for _, p := range pts {
		if n := len(out); n > 0 && near(out[n-1].Freq, p.Freq) {
			out[n-1] = p // stable sort keeps slice order: later wins
			continue
		}
		out = append(out, p)
	}
	return out
}

// config validates the fields and fills defaults.
func (a *Adaptive) config() (adaptiveConfig, error) {
	if err := checkRange(a.From, a.To); err != nil {
		return adaptiveConfig{}, err
	}
	c := adaptiveConfig{from: a.From, to: a.To, start: a.StartPerDecade, tolDB: a.TolDB, tolDeg: a.TolDeg, maxPoints: a.MaxPoints}
	if c.start < 0 {
		return c, fmt.Errorf("%w: StartPerDecade %d is negative; use 0 for the default (%d) or a positive density", ErrRange, c.start, DefaultStartPerDecade)
	}
	if c.start == 0 {
		c.start = DefaultStartPerDecade
	}
	for _, t := range []struct {
		name string
		v    *float64
		def  float64
		unit string
	}{{"TolDB", &c.tolDB, DefaultTolDB, "dB"}, {"TolDeg", &c.tolDeg, DefaultTolDeg, "degrees"}} {
		if math.IsNaN(*t.v) || *t.v < 0 {
			return c, fmt.Errorf("%w: %s %g %s must be positive; use 0 for the default (%g) or +Inf to ignore it", ErrRange, t.name, *t.v, t.unit, t.def)
		}
		if *t.v == 0 {
			*t.v = t.def
		}
	}
	if c.maxPoints < 0 {
		return c, fmt.Errorf("%w: MaxPoints %d is negative; use 0 for the default (%d)", ErrRange, c.maxPoints, DefaultMaxPoints)
	}
	if c.maxPoints == 0 {
		c.maxPoints = DefaultMaxPoints
	}
	r := a.MinRatio
	if r == 0 {
		r = DefaultMinRatio
	}
	if !(r > 1) || math.IsInf(r, 1) {
		return c, fmt.Errorf("%w: MinRatio %g must be a finite ratio above 1 (e.g. 1.0233 for a hundredth of a decade); use 0 for the default", ErrRange, a.MinRatio)
	}
	c.minLogSpacing2 = 2 * math.Log10(r) * (1 - 1e-12)
	return c, nil
}
