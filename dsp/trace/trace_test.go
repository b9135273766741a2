package trace

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// First-order RC network of REFERENCES.md §5: R = 10 kΩ, C = 15 nF.
const (
	rcR  = 10e3
	rcC  = 15e-9
	rcRC = rcR * rcC // time constant, s
)

// rcLowPass returns H(f) = 1/(1 + jωRC) of the first-order RC low-pass
// (REFERENCES.md §5 [V]).
func rcLowPass(f float64) complex128 {
	return 1 / complex(1, 2*math.Pi*f*rcRC)
}

// rcGroupDelay is the first-order low-pass group delay
// τ(ω) = RC/(1 + (ωRC)²), from −d/dω of φ = −atan(ωRC) (handbook formula,
// from memory [M]; REFERENCES.md §5 values of R and C).
func rcGroupDelay(f float64) float64 {
	x := 2 * math.Pi * f * rcRC
	return rcRC / (1 + x*x)
}

// TestRCTable checks GainDB and PhaseDeg of the analytic RC low-pass
// against the table of REFERENCES.md §5 (ngspice-39 AC analysis [V]),
// fc = 1/(2πRC) = 1061.0330 Hz.
func TestRCTable(t *testing.T) {
	const (
		tableGainTol  = 5e-5 // dB: the table has 4 decimals
		tablePhaseTol = 5e-5 // degrees
	)
	fc := 1 / (2 * math.Pi * rcRC)
	if math.Abs(fc-1061.0330) > 5e-5 {
		t.Fatalf("fc = %.4f Hz, REFERENCES.md §5 gives 1061.0330 Hz", fc)
	}
	cases := []struct {
		name         string
		ratio        float64
		gain, phase  float64 // low-pass
		hgain, hphas float64 // high-pass
	}{
		{"0.1 fc", 0.1, -0.0432, -5.7106, -20.0432, 84.2894},
		{"0.5 fc", 0.5, -0.9691, -26.5651, -6.9897, 63.4349},
		{"fc", 1, -3.0103, -45.0000, -3.0103, 45.0000},
		{"2 fc", 2, -6.9897, -63.4349, -0.9691, 26.5651},
		{"10 fc", 10, -20.0432, -84.2894, -0.0432, 5.7106},
	}
	for _, tc := range cases {
		f := tc.ratio * fc
		lp := NewPoint(f, rcLowPass(f))
		jw := complex(0, 2*math.Pi*f*rcRC)
		hp := NewPoint(f, jw/(1+jw))
		for _, c := range []struct {
			kind        string
			p           Point
			gain, phase float64
		}{{"low-pass", lp, tc.gain, tc.phase}, {"high-pass", hp, tc.hgain, tc.hphas}} {
			if d := math.Abs(c.p.GainDB() - c.gain); d > tableGainTol {
				t.Errorf("%s %s: gain %.5f dB, table %.4f dB", c.kind, tc.name, c.p.GainDB(), c.gain)
			}
			if d := math.Abs(c.p.PhaseDeg() - c.phase); d > tablePhaseTol {
				t.Errorf("%s %s: phase %.5f°, table %.4f°", c.kind, tc.name, c.p.PhaseDeg(), c.phase)
			}
		}
	}
}

func TestFromPolar(t *testing.T) {
	const tol = 1e-12
	// At fc the low-pass is 0.5 − j0.5 (REFERENCES.md §8 [V]): −3.0103 dB, −45°.
	p := FromPolar(1061.033, 20*math.Log10(math.Sqrt(0.5)), -45)
	if d := cmplx.Abs(p.H - complex(0.5, -0.5)); d > tol {
		t.Errorf("FromPolar(-3.01 dB, -45°) = %v, want 0.5-0.5i", p.H)
	}
	for _, v := range []float64{p.GainU, p.PhaseU, p.Coherence, p.SNR, p.THD} {
		if !math.IsNaN(v) {
			t.Errorf("optional field %v, want NaN", v)
		}
	}
	if z := FromPolar(1, math.Inf(-1), 30); z.H != 0 || !math.IsInf(z.GainDB(), -1) {
		t.Errorf("gain -inf gives H = %v, gain %v; want 0 and -Inf", z.H, z.GainDB())
	}
}

// TestWrapDeg checks the (−180, 180] convention at its edges (the half-open
// interval of the principal value, as cmplx.Phase returns (−π, π] [S: Go
// math/cmplx documentation]).
func TestWrapDeg(t *testing.T) {
	cases := []struct {
		name    string
		in, out float64
	}{
		{"zero", 0, 0},
		{"minus 180 maps to 180", -180, 180},
		{"180 stays", 180, 180},
		{"just above minus 180", -179.999, -179.999},
		{"just above 180", 180.001, -179.999},
		{"540", 540, 180},
		{"minus 540", -540, 180},
		{"360", 360, 0},
		{"minus 360", -360, 0},
		{"190", 190, -170},
		{"minus 190", -190, 170},
		{"many turns", 3600 + 45, 45},
		{"many negative turns", -7200 - 90, -90},
	}
	const tol = 1e-9
	for _, tc := range cases {
		got := WrapDeg(tc.in)
		if math.Abs(got-tc.out) > tol {
			t.Errorf("%s: WrapDeg(%v) = %v, want %v", tc.name, tc.in, got, tc.out)
		}
		if !(got > -180 && got <= 180) {
			t.Errorf("%s: WrapDeg(%v) = %v outside (−180, 180]", tc.name, tc.in, got)
		}
	}
	if !math.IsNaN(WrapDeg(math.NaN())) || !math.IsNaN(WrapDeg(math.Inf(1))) {
		t.Error("WrapDeg of NaN or Inf is not NaN")
	}
	// PhaseDeg of a negative real ratio is +180 (cmplx.Phase(−1) = π).
	if got := NewPoint(1, -1).PhaseDeg(); got != 180 {
		t.Errorf("PhaseDeg(H = -1) = %v, want 180", got)
	}
}

// delayPoints returns a pure delay H = e^{−jωτ} at irregular frequencies
// spaced closely enough (< 1/(2τ)) for unwrapping.
func delayPoints(tau float64, n int) []Point {
	pts := make([]Point, n)
	f := 20.0
	for i := range pts {
		pts[i] = NewPoint(f, cmplx.Rect(1, -2*math.Pi*f*tau))
		f += 90 + 60*math.Sin(float64(i)) // 30 to 150 Hz steps
	}
	return pts
}

// TestGroupDelayPureDelay: for φ = −ωτ the group delay −dφ/dω is τ at every
// frequency (definition of group delay; Oppenheim & Schafer, Discrete-Time
// Signal Processing 1989, §5.1 [M]). The three-point and one-sided
// differences are exact for a linear phase.
func TestGroupDelayPureDelay(t *testing.T) {
	const (
		tau = 1.25e-3 // s
		tol = 1e-9    // relative: rounding of the wrapped phases only
	)
	pts := delayPoints(tau, 300)
	gd := GroupDelay(nil, pts)
	for i, g := range gd {
		if math.Abs(g-tau) > tol*tau {
			t.Fatalf("point %d (%.1f Hz): group delay %v s, want %v s", i, pts[i].Freq, g, tau)
		}
	}
	un := UnwrappedPhaseDeg(nil, pts)
	for i := range pts {
		want := un[0] - 360*tau*(pts[i].Freq-pts[0].Freq)
		if math.Abs(un[i]-want) > 1e-9*math.Abs(want)+1e-9 {
			t.Fatalf("point %d: unwrapped phase %v°, want %v°", i, un[i], want)
		}
	}
	if un[len(un)-1] > -360 {
		t.Errorf("the last unwrapped phase %v° did not accumulate past −360°", un[len(un)-1])
	}
}

// TestGroupDelayRCLowPass compares GroupDelay of the RC low-pass, sampled
// at 1000 points per decade from 10 Hz to 100 kHz, with τ = RC/(1+(ωRC)²).
func TestGroupDelayRCLowPass(t *testing.T) {
	const (
		perDecade = 1000
		// Interior: the three-point derivative is second order; its
		// relative error here is about (Δω/ω)² = (ln 10/1000)² = 5.3e−6
		// where the phase is closest to 1/ω (high frequencies).
		interiorTol = 1e-5
		// Ends: one-sided differences are first order, about
		// (Δω/ω)/2·|τ′/τ|·ω ≤ 2.3e−3.
		endTol = 3e-3
	)
	var pts []Point
	for k := 0; k <= 4*perDecade; k++ {
		f := 10 * math.Pow(10, float64(k)/perDecade)
		pts = append(pts, NewPoint(f, rcLowPass(f)))
	}
	gd := GroupDelay(make([]float64, 0, len(pts)), pts)
	for i, p := range pts {
		want := rcGroupDelay(p.Freq)
		tol := interiorTol
		if i == 0 || i == len(pts)-1 {
			tol = endTol
		}
		if math.Abs(gd[i]-want) > tol*want {
			t.Errorf("%.2f Hz: group delay %.6g s, want %.6g s", p.Freq, gd[i], want)
		}
	}
	// At fc the delay is RC/2 = 75 µs.
	fc := 1 / (2 * math.Pi * rcRC)
	if got := GroupDelay(nil, []Point{
		NewPoint(fc*0.999, rcLowPass(fc*0.999)), NewPoint(fc, rcLowPass(fc)), NewPoint(fc*1.001, rcLowPass(fc*1.001)),
	})[1]; math.Abs(got-75e-6) > 1e-6*75e-6 {
		t.Errorf("group delay at fc %v s, want 75 µs", got)
	}
}

func TestGroupDelayDegenerate(t *testing.T) {
	cases := []struct {
		name  string
		pts   []Point
		isNaN []bool
	}{
		{"no points", nil, nil},
		{"one point", []Point{NewPoint(100, 1)}, []bool{true}},
		{"coincident pair", []Point{NewPoint(100, 1), NewPoint(100, 1i)}, []bool{true, true}},
		{"coincident in the middle", []Point{NewPoint(100, 1), NewPoint(200, 1), NewPoint(200, 1), NewPoint(300, 1)}, []bool{false, true, true, false}},
	}
	for _, tc := range cases {
		gd := GroupDelay(nil, tc.pts)
		if len(gd) != len(tc.pts) {
			t.Fatalf("%s: %d delays for %d points", tc.name, len(gd), len(tc.pts))
		}
		for i, g := range gd {
			if math.IsNaN(g) != tc.isNaN[i] {
				t.Errorf("%s: delay %d = %v, NaN expected %v", tc.name, i, g, tc.isNaN[i])
			}
		}
	}
}

// TestDestinationReuse checks that GroupDelay and UnwrappedPhaseDeg write
// into dst when it has the capacity (destination-first convention).
func TestDestinationReuse(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	pts := make([]Point, 50)
	for i := range pts {
		pts[i] = NewPoint(float64(100+i), cmplx.Rect(1, rng.Float64()*6))
	}
	dst := make([]float64, 3, 64)
	if got := UnwrappedPhaseDeg(dst, pts); &got[0] != &dst[:1][0] || len(got) != 50 {
		t.Error("UnwrappedPhaseDeg did not reuse dst")
	}
	if got := GroupDelay(dst, pts); &got[0] != &dst[:1][0] || len(got) != 50 {
		t.Error("GroupDelay did not reuse dst")
	}
	if allocs := testing.AllocsPerRun(10, func() { UnwrappedPhaseDeg(dst, pts) }); allocs != 0 {
		t.Errorf("UnwrappedPhaseDeg with capacity allocates %v times", allocs)
	}
}

func TestMeta(t *testing.T) {
	var tr Trace
	tr.SetMeta("tool", "tonetrace 0.1.0")
	tr.SetMeta("command", "analyze")
	tr.SetMeta("tool", "tonetrace 0.2.0")
	if len(tr.Meta) != 2 || tr.Meta[0] != (MetaItem{"tool", "tonetrace 0.2.0"}) {
		t.Errorf("meta %v, want tool replaced in place", tr.Meta)
	}
	if v, ok := tr.MetaValue("command"); !ok || v != "analyze" {
		t.Errorf("MetaValue(command) = %q, %v", v, ok)
	}
	if _, ok := tr.MetaValue("missing"); ok {
		t.Error("MetaValue of a missing key reports presence")
	}
}
