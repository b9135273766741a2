package plan

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"tonetrace/dsp/trace"
)

// Analytic responses of REFERENCES §5 (check values [V] against ngspice-39
// AC analysis). They are confirmed against the table in
// TestAnalyticModels before the plan is driven with them.
const (
	rcR, rcC = 10e3, 15e-9 // first-order RC, fc = 1/(2πRC) = 1061.0330 Hz
	rlcL     = 10e-3       // series RLC band-pass, output across R
	rlcC     = 100e-9      // f0 = 1/(2π√(LC)) = 5032.921 Hz
	rlcR     = 100.0       // Q = √(L/C)/R = 3.16228
)

type response struct {
	name string
	h    func(f float64) complex128
}

// rcLowPass is H = 1/(1 + jωRC), REFERENCES §5.
func rcLowPass(f float64) complex128 {
	return 1 / complex(1, 2*math.Pi*f*rcR*rcC)
}

// rlcBandPass is H = jωRC/(1 − ω²LC + jωRC), output across R, REFERENCES §5.
func rlcBandPass(f float64) complex128 {
	w := 2 * math.Pi * f
	return complex(0, w*rlcR*rlcC) / complex(1-w*w*rlcL*rlcC, w*rlcR*rlcC)
}

// twinTNotch is H = (s²+ω0²)/(s²+4ω0s+ω0²), ω0 = 1/(RC), REFERENCES §5.
func twinTNotch(f float64) complex128 {
	w0 := 1 / (rcR * rcC)
	s := complex(0, 2*math.Pi*f)
	return (s*s + complex(w0*w0, 0)) / (s*s + complex(4*w0, 0)*s + complex(w0*w0, 0))
}

func notchF0() float64 { return 1 / (2 * math.Pi * rcR * rcC) }

func TestAnalyticModels(t *testing.T) {
	const tolDB, tolDeg = 1e-4, 1e-4 // the table's printed precision
	fc := 1 / (2 * math.Pi * rcR * rcC)
	cases := []struct {
		name          string
		h             func(float64) complex128
		f, gain, phse float64
	}{
		// REFERENCES §5 first-order RC low-pass [V ngspice-39].
		{"rc 0.1fc", rcLowPass, 0.1 * fc, -0.0432, -5.7106},
		{"rc fc", rcLowPass, fc, -3.0103, -45},
		{"rc 10fc", rcLowPass, 10 * fc, -20.0432, -84.2894},
		// REFERENCES §5 series RLC band-pass [V ngspice-39].
		{"rlc 1k", rlcBandPass, 1000, -23.7051, 86.2574},
		{"rlc f1", rlcBandPass, 4299.670, -3.0103, 45},
		{"rlc f2", rlcBandPass, 5891.219, -3.0103, -45},
		// REFERENCES §5 twin-T notch [V ngspice-39].
		{"twin-T 0.5f0", twinTNotch, 0.5 * fc, -9.0908, -69.4440},
		{"twin-T 2f0", twinTNotch, 2 * fc, -9.0908, 69.4440},
		{"twin-T 0.1f0", twinTNotch, 0.1 * fc, -0.6567, -22.0007},
	}
	for _, c := range cases {
		p := trace.NewPoint(c.f, c.h(c.f))
		if math.Abs(p.GainDB()-c.gain) > tolDB+5e-5 || math.Abs(p.PhaseDeg()-c.phse) > tolDeg+5e-5 {
			t.Errorf("%s: %.4f dB %.4f°, want %.4f dB %.4f°", c.name, p.GainDB(), p.PhaseDeg(), c.gain, c.phse)
		}
	}
}

// drive runs the plan against h until it is done and returns every
// measured point; it fails the test after 1000 rounds.
func drive(t *testing.T, a *Adaptive, h func(float64) complex128) (pts []trace.Point, rounds int) {
	t.Helper()
	for rounds = 0; rounds < 1000; rounds++ {
		next, err := a.Next(pts)
		if err != nil {
			t.Fatal(err)
		}
		if next == nil {
			return pts, rounds
		}
		for _, f := range next {
			pts = append(pts, trace.NewPoint(f, h(f)))
		}
	}
	t.Fatalf("plan did not finish in %d rounds", rounds)
	return nil, 0
}

// interpError returns the largest error of the piecewise-linear
// interpolation (in log f) of pts against h on a dense grid over
// [from, to], as gain dB and phase degrees, skipping frequencies for which
// skip returns true.
func interpError(pts []trace.Point, h func(float64) complex128, from, to float64, skip func(float64) bool) (maxDB, maxDeg float64) {
	pts = slices.Clone(pts)
	slices.SortFunc(pts, func(x, y trace.Point) int { return cmp.Compare(x.Freq, y.Freq) })
	ph := trace.UnwrappedPhaseDeg(nil, pts)
	dense, _ := PerDecade(from, to, 2000)
	j := 0
	for _, f := range dense {
		if skip != nil && skip(f) {
			continue
		}
		for j < len(pts)-2 && pts[j+1].Freq < f {
			j++
		}
		u0, u1 := math.Log10(pts[j].Freq), math.Log10(pts[j+1].Freq)
		s := (math.Log10(f) - u0) / (u1 - u0)
		g := pts[j].GainDB() + s*(pts[j+1].GainDB()-pts[j].GainDB())
		p := ph[j] + s*(ph[j+1]-ph[j])
		tp := trace.NewPoint(f, h(f))
		maxDB = math.Max(maxDB, math.Abs(g-tp.GainDB()))
		maxDeg = math.Max(maxDeg, math.Abs(trace.WrapDeg(p-tp.PhaseDeg())))
	}
	return maxDB, maxDeg
}

// unsplittable returns a skip function that is true inside intervals of
// pts narrower than minRatio² (ones the plan is not allowed to split).
func unsplittable(pts []trace.Point, minRatio float64) func(float64) bool {
	fs := make([]float64, len(pts))
	for i, p := range pts {
		fs[i] = p.Freq
	}
	slices.Sort(fs)
	return func(f float64) bool {
		i, _ := slices.BinarySearch(fs, f)
		if i == 0 || i == len(fs) {
			return false
		}
		return fs[i]/fs[i-1] < minRatio*minRatio*(1+1e-9)
	}
}

// uniformFor returns the smallest uniform density (points per decade)
// whose interpolation error on [from, to] is no worse than maxDB and
// maxDeg, and its number of points.
func uniformFor(h func(float64) complex128, from, to, maxDB, maxDeg float64, skip func(float64) bool) (perDecade, points int) {
	for n := 1; n <= 1000; n++ {
		g, _ := PerDecade(from, to, n)
		u := make([]trace.Point, len(g))
		for i, f := range g {
			u[i] = trace.NewPoint(f, h(f))
		}
		if udb, udeg := interpError(u, h, from, to, skip); udb <= maxDB && udeg <= maxDeg {
			return n, len(g)
		}
	}
	return -1, -1
}

// Tolerances for the adaptive-plan checks.
const (
	planTolDB  = 0.1 // gain tolerance given to the plan, dB
	planTolDeg = 1.0 // phase tolerance given to the plan, degrees
	// accuracyFactor is how far beyond the tolerance the final
	// interpolation may stray (the deviation test is an estimate).
	accuracyFactor = 2.0
	// savingRatio is the largest adaptive/uniform point-count ratio
	// accepted as "far fewer points".
	savingRatio = 0.7
)

func analyticResponses() []response {
	return []response{{"rc low-pass", rcLowPass}, {"rlc band-pass", rlcBandPass}, {"twin-T notch", twinTNotch}}
}

// TestAdaptiveAccuracyAndSaving drives the plan with the three REFERENCES
// §5 networks and checks (a) the piecewise-linear curve through the
// measured points matches the analytic response within accuracyFactor
// times the tolerance on a dense grid (2000 points per decade), outside
// intervals already at the minimum spacing (only the twin-T's infinitely
// deep null needs those), and (b) a uniform log grid reaching the same
// accuracy needs many more points.
func TestAdaptiveAccuracyAndSaving(t *testing.T) {
	for _, r := range analyticResponses() {
		t.Run(r.name, func(t *testing.T) {
			a := &Adaptive{From: 20, To: 20000, TolDB: planTolDB, TolDeg: planTolDeg, MaxPoints: 1000}
			pts, rounds := drive(t, a, r.h)
			skip := unsplittable(pts, DefaultMinRatio)
			edb, edeg := interpError(pts, r.h, 20, 20000, skip)
			if edb > accuracyFactor*planTolDB || edeg > accuracyFactor*planTolDeg {
				t.Errorf("interpolation error %.3f dB %.3f°, want within %g × (%g dB, %g°)", edb, edeg, accuracyFactor, planTolDB, planTolDeg)
			}
			n, uniform := uniformFor(r.h, 20, 20000, edb, edeg, skip)
			if n < 0 || float64(len(pts)) > savingRatio*float64(uniform) {
				t.Errorf("adaptive used %d points, uniform grid of %d per decade needs %d for the same accuracy", len(pts), n, uniform)
			}
			t.Logf("%d points in %d rounds, error %.3f dB %.3f°; uniform needs %d/decade = %d points", len(pts), rounds, edb, edeg, n, uniform)
			checkSpacing(t, pts, DefaultMinRatio, 20, 20000)
		})
	}
}

// checkSpacing asserts that no two neighbouring measured frequencies are
// closer than minRatio, except the ends of the starting grid.
func checkSpacing(t *testing.T, pts []trace.Point, minRatio, from, to float64) {
	t.Helper()
	grid, _ := PerDecade(from, to, 1)
	fs := make([]float64, len(pts))
	for i, p := range pts {
		fs[i] = p.Freq
	}
	slices.Sort(fs)
	for i := 1; i < len(fs); i++ {
		if slices.Contains(grid, fs[i]) && slices.Contains(grid, fs[i-1]) {
			continue
		}
		if r := fs[i] / fs[i-1]; r < minRatio*(1-1e-9) {
			t.Errorf("neighbours %.6g and %.6g Hz are closer (ratio %.6f) than MinRatio %.6f", fs[i-1], fs[i], r, minRatio)
		}
	}
}

func TestAdaptiveBudget(t *testing.T) {
	// Unconstrained, the plan needs 31 points for the band-pass at these
	// tolerances (TestAdaptiveAccuracyAndSaving), so every budget below
	// must be spent exactly.
	for _, budget := range []int{5, 6, 8, 12, 20, 30} {
		t.Run(fmt.Sprint(budget), func(t *testing.T) {
			a := &Adaptive{From: 20, To: 20000, TolDB: planTolDB, TolDeg: planTolDeg, MaxPoints: budget}
			pts, _ := drive(t, a, rlcBandPass)
			if len(pts) != budget {
				t.Errorf("measured %d points, budget %d", len(pts), budget)
			}
			if next, err := a.Next(pts); next != nil || err != nil {
				t.Errorf("after the budget Next gave %v, %v", next, err)
			}
			// The worst intervals go first: most inserted points lie
			// around the resonance at 5.03 kHz (REFERENCES §5), in
			// 1–20 kHz, and with room for one it goes in 1–10 kHz.
			start, _ := PerDecade(20, 20000, 1)
			inserted, nearPeak := 0, 0
			for _, p := range pts {
				if slices.Contains(start, p.Freq) {
					continue
				}
				inserted++
				if p.Freq > 1000 && p.Freq < 20000 {
					nearPeak++
				}
				if budget == 6 && (p.Freq < 1000 || p.Freq > 10000) {
					t.Errorf("the one inserted point is at %.4g Hz, outside the decade of the resonance", p.Freq)
				}
			}
			if inserted > 0 && 2*nearPeak <= inserted {
				t.Errorf("only %d of %d inserted points lie in 1–20 kHz", nearPeak, inserted)
			}
		})
	}
}

// TestAdaptiveClustering checks that the points crowd where the curve
// bends: around the RLC resonance f0 = 5032.921 Hz and the twin-T null
// f0 = 1061.03 Hz (REFERENCES §5).
func TestAdaptiveClustering(t *testing.T) {
	const (
		// nearFactor bounds the neighbourhood f0/2 … 2·f0 (0.6 decades,
		// 20 % of the 3-decade span).
		nearFactor = 2.0
		// minNearShare is the share of points required there.
		minNearShare = 0.5
		// densestWithin is how close (ratio) the narrowest interval must be
		// to f0.
		densestWithin = 1.1
	)
	cases := []struct {
		name string
		h    func(float64) complex128
		f0   float64
	}{
		{"rlc band-pass", rlcBandPass, 1 / (2 * math.Pi * math.Sqrt(rlcL*rlcC))},
		{"twin-T notch", twinTNotch, notchF0()},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a := &Adaptive{From: 20, To: 20000, TolDB: planTolDB, TolDeg: planTolDeg, MaxPoints: 1000}
			pts, _ := drive(t, a, c.h)
			near := 0
			fs := make([]float64, len(pts))
			for i, p := range pts {
				fs[i] = p.Freq
				if p.Freq >= c.f0/nearFactor && p.Freq <= c.f0*nearFactor {
					near++
				}
			}
			if share := float64(near) / float64(len(pts)); share < minNearShare {
				t.Errorf("%d of %d points (%.0f %%) within a factor %g of f0 = %.1f Hz, want at least %.0f %%",
					near, len(pts), 100*share, nearFactor, c.f0, 100*minNearShare)
			}
			slices.Sort(fs)
			best := 1
			for i := 2; i < len(fs); i++ {
				if fs[i]/fs[i-1] < fs[best]/fs[best-1] {
					best = i
				}
			}
			mid := math.Sqrt(fs[best] * fs[best-1])
			if mid < c.f0/densestWithin || mid > c.f0*densestWithin {
				t.Errorf("densest interval at %.1f Hz, want within a factor %g of f0 = %.1f Hz", mid, densestWithin, c.f0)
			}
		})
	}
}

// TestAdaptiveStraightStays checks that responses that are straight lines
// in log f never leave the starting grid: a flat gain, and an ideal
// differentiator H = jf/1 kHz (+20 dB/decade, +90°; common practice:
// an ideal integrator/differentiator is a straight line on a Bode plot).
func TestAdaptiveStraightStays(t *testing.T) {
	cases := []struct {
		name  string
		start int
		h     func(float64) complex128
	}{
		{"flat -6 dB", 1, func(float64) complex128 { return 0.5 }},
		{"flat inverted", 3, func(float64) complex128 { return -1 }},
		{"differentiator", 1, func(f float64) complex128 { return complex(0, f/1000) }},
		{"double integrator", 2, func(f float64) complex128 { return complex(-1e6/(f*f), 0) }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a := &Adaptive{From: 20, To: 20000, StartPerDecade: c.start}
			pts, rounds := drive(t, a, c.h)
			want, _ := PerDecade(20, 20000, c.start)
			if rounds != 1 || len(pts) != len(want) {
				t.Errorf("took %d rounds and %d points, want the starting grid of %d in one round", rounds, len(pts), len(want))
			}
		})
	}
}

// TestAdaptiveOrderAndDuplicates checks that the plan depends only on the
// set of measured points, not their order, and that a repeated frequency
// counts once with the later value.
func TestAdaptiveOrderAndDuplicates(t *testing.T) {
	ref := &Adaptive{From: 20, To: 20000}
	want, _ := drive(t, ref, rlcBandPass)

	rng := rand.New(rand.NewPCG(1, 2))
	a := &Adaptive{From: 20, To: 20000}
	var pts []trace.Point
	for range 100 {
		shuffled := slices.Clone(pts)
		rng.Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
		// A stale duplicate first (wrong value) and points outside the
		// range must not change anything.
		if len(pts) > 0 {
			stale := trace.NewPoint(pts[0].Freq, 1000)
			shuffled = append([]trace.Point{stale}, shuffled...)
			shuffled = append(shuffled, pts[0], trace.NewPoint(5, 1), trace.NewPoint(50000, 1), trace.NewPoint(math.Inf(1), 1),
				trace.NewPoint(pts[0].Freq*1.001, complex(math.NaN(), 0)))
		}
		next, err := a.Next(shuffled)
		if err != nil {
			t.Fatal(err)
		}
		if next == nil {
			break
		}
		for _, f := range next {
			pts = append(pts, trace.NewPoint(f, rlcBandPass(f)))
		}
	}
	if len(pts) != len(want) {
		t.Fatalf("shuffled run measured %d points, ordered run %d", len(pts), len(want))
	}
	for i := range pts {
		if pts[i].Freq != want[i].Freq {
			t.Fatalf("point %d: %.9g Hz vs %.9g Hz", i, pts[i].Freq, want[i].Freq)
		}
	}
}

func TestAdaptiveResetAndNull(t *testing.T) {
	// A null exactly on the grid (|H| = 0 at 1 kHz) is floored at
	// GainFloorDB and must not break the plan.
	null := func(f float64) complex128 {
		w0 := 2 * math.Pi * 1000
		s := complex(0, 2*math.Pi*f)
		if f == 1000 {
			return 0
		}
		return (s*s + complex(w0*w0, 0)) / (s*s + complex(4*w0, 0)*s + complex(w0*w0, 0))
	}
	a := &Adaptive{From: 100, To: 10000, MaxPoints: 60}
	first, _ := drive(t, a, null)
	for _, p := range first {
		if math.IsNaN(p.Freq) || math.IsInf(p.Freq, 0) {
			t.Fatalf("plan asked for %v", p.Freq)
		}
	}
	// The plan stops when the null is boxed in at the minimum spacing,
	// inside the budget.
	fs := make([]float64, len(first))
	for i, p := range first {
		fs[i] = p.Freq
	}
	slices.Sort(fs)
	i := slices.Index(fs, 1000)
	if len(first) > 60 || i <= 0 || i >= len(fs)-1 {
		t.Fatalf("%d points, null at index %d", len(first), i)
	}
	lim := DefaultMinRatio * DefaultMinRatio
	if fs[i]/fs[i-1] >= lim || fs[i+1]/fs[i] >= lim {
		t.Errorf("neighbours of the null at %.6g and %.6g Hz are not at the minimum spacing", fs[i-1], fs[i+1])
	}
	a.Reset()
	again, _ := drive(t, a, null)
	if len(again) != len(first) {
		t.Errorf("after Reset the plan used %d points, first run %d", len(again), len(first))
	}
}

func TestDefaultMinRatio(t *testing.T) {
	// A hundredth of a decade, 10^(1/100).
	if want := math.Pow(10, 0.01); math.Abs(DefaultMinRatio-want) > 1e-15 {
		t.Errorf("DefaultMinRatio = %.17g, want %.17g", DefaultMinRatio, want)
	}
}

func TestAdaptiveErrors(t *testing.T) {
	cases := []struct {
		name string
		a    Adaptive
	}{
		{"zero start", Adaptive{From: 0, To: 100}},
		{"reversed", Adaptive{From: 100, To: 10}},
		{"negative density", Adaptive{From: 10, To: 100, StartPerDecade: -1}},
		{"negative gain tolerance", Adaptive{From: 10, To: 100, TolDB: -0.1}},
		{"NaN phase tolerance", Adaptive{From: 10, To: 100, TolDeg: math.NaN()}},
		{"negative budget", Adaptive{From: 10, To: 100, MaxPoints: -1}},
		{"budget below grid", Adaptive{From: 10, To: 100000, MaxPoints: 4}},
		{"ratio below one", Adaptive{From: 10, To: 100, MinRatio: 0.5}},
		{"ratio one", Adaptive{From: 10, To: 100, MinRatio: 1}},
		{"ratio infinite", Adaptive{From: 10, To: 100, MinRatio: math.Inf(1)}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			next, err := c.a.Next(nil)
			if !errors.Is(err, ErrRange) || next != nil {
				t.Errorf("got %v, %v; want an error wrapping ErrRange", next, err)
			}
		})
	}
	t.Run("too few measured", func(t *testing.T) {
		a := &Adaptive{From: 10, To: 1000}
		if _, err := a.Next(nil); err != nil {
			t.Fatal(err)
		}
		if next, err := a.Next([]trace.Point{trace.NewPoint(10, 1)}); err == nil || next != nil {
			t.Errorf("one measured point: got %v, %v; want an error", next, err)
		}
	})
}

// ExampleAdaptive drives a plan with the first-order RC low-pass of
// REFERENCES §5 (fc = 1061.033 Hz) standing in for real measurements.
func ExampleAdaptive() {
	h := func(f float64) complex128 { return 1 / complex(1, f/1061.033) }
	a := &Adaptive{From: 20, To: 20000, TolDB: 0.5, TolDeg: 5}
	var measured []trace.Point
	for {
		next, err := a.Next(measured)
		if err != nil {
			panic(err)
		}
		if next == nil {
			break
		}
		fmt.Printf("measure %d:", len(next))
		for _, f := range next {
			fmt.Printf(" %.0f", f)
			measured = append(measured, trace.NewPoint(f, h(f)))
		}
		fmt.Println()
	}
	// Output:
	// measure 5: 20 100 1000 10000 20000
	// measure 2: 316 3162
	// measure 2: 562 1778
}
