package fit

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"strings"
	"testing"

	"tonetrace/dsp/trace"
)

// Tolerances.
const (
	// spiceTol is half a unit in the last digit REFERENCES.md §5 prints
	// for dB and degrees (4 decimals; 3 for the Sallen-Key phase).
	spiceTol = 5e-5
	// recoverTol is the relative error allowed when a fit recovers the
	// values a noiseless trace was made from.
	recoverTol = 1e-8
	// qTol is the relative error allowed on a Q recovered from a
	// noiseless prototype trace.
	qTol = 1e-6
	// handbookQTol is the slack on Q against the two-decimal values of a
	// filter handbook's tables.
	handbookQTol = 0.005
)

// TestModelsAgainstSpice checks the test models against the ngspice AC
// analysis values of REFERENCES.md §5 [V], so that fits to their traces
// test the fit and not a wrong formula.
func TestModelsAgainstSpice(t *testing.T) {
	type check struct {
		name   string
		m      Model
		f      float64
		db     float64
		deg    float64
		degTol float64
	}
	fc := 1 / (2 * math.Pi * 10e3 * 15e-9) // 1061.0330 Hz [V]
	rc := rcLowPass(10e3, 15e-9)
	rlc := rlcBandPass(100, 10e-3, 100e-9)
	sk := sallenKey(10e3, 10e3, 22e-9, 10e-9)
	nan := math.NaN()
	cases := []check{
		// REFERENCES.md §5, first-order RC low-pass, R = 10 kΩ, C = 15 nF [V].
		{"RC 0.1fc", rc, 0.1 * fc, -0.0432, -5.7106, spiceTol},
		{"RC 0.5fc", rc, 0.5 * fc, -0.9691, -26.5651, spiceTol},
		{"RC fc", rc, fc, -3.0103, -45.0000, spiceTol},
		{"RC 2fc", rc, 2 * fc, -6.9897, -63.4349, spiceTol},
		{"RC 10fc", rc, 10 * fc, -20.0432, -84.2894, spiceTol},
		// REFERENCES.md §5, series RLC band-pass, L = 10 mH, C = 100 nF, R = 100 Ω [V].
		{"RLC f0", rlc, 5032.921, 0, 0, 1e-3},
		{"RLC f1", rlc, 4299.670, -3.0103, 45, 1e-3},
		{"RLC f2", rlc, 5891.219, -3.0103, -45, 1e-3},
		{"RLC 1 kHz", rlc, 1000, -23.7051, 86.2574, spiceTol},
		// REFERENCES.md §5, unity-gain Sallen-Key, R1 = R2 = 10 kΩ, C1 = 22 nF, C2 = 10 nF [V].
		{"SK f0", sk, 1073.022, -2.5964, -90, 1e-3},
		{"SK 2f0", sk, 2 * 1073.022, -12.1146, -138.047, 5e-4},
		{"SK 10f0", sk, 10 * 1073.022, -39.9925, nan, 0},
		{"SK -3 dB", sk, 1122.85, -3.0103, nan, 0},
	}
	h := make([]complex128, 1)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if err := c.m.Evaluate(h, []float64{c.f}, nil, nil); err != nil {
				t.Fatal(err)
			}
			db := 20 * math.Log10(cmplx.Abs(h[0]))
			deg := cmplx.Phase(h[0]) * 180 / math.Pi
			dbTol := spiceTol
			if c.name == "SK -3 dB" {
				dbTol = 2e-4 // the frequency is given to 6 digits
			}
			if math.Abs(db-c.db) > dbTol {
				t.Errorf("gain %.5f dB, want %.4f", db, c.db)
			}
			if !math.IsNaN(c.deg) && math.Abs(deg-c.deg) > c.degTol {
				t.Errorf("phase %.5f°, want %.4f", deg, c.deg)
			}
		})
	}
}

// TestRecoversNoiseless fits traces made by the models themselves from
// starting values a factor 2–5 away, and checks that the fit returns the
// values the trace was made from (the noiseless trace has an exact
// solution; common practice for testing a fitter).
func TestRecoversNoiseless(t *testing.T) {
	fr := logGrid(20, 20e3, 60)
	cases := []struct {
		name  string
		truth Model
		start Model
		free  []string
		want  []float64
		use   Quantity
	}{
		{"RC C1", rcLowPass(10e3, 15e-9), rcLowPass(10e3, 47e-9), []string{"C1"}, []float64{15e-9}, GainAndPhase},
		{"RC R1 gain only", rcLowPass(10e3, 15e-9), rcLowPass(2.2e3, 15e-9), []string{"r1"}, []float64{10e3}, GainOnly},
		{"RC R1 phase only", rcLowPass(10e3, 15e-9), rcLowPass(33e3, 15e-9), []string{"R1"}, []float64{10e3}, PhaseOnly},
		{"RLC R1 L1", rlcBandPass(100, 10e-3, 100e-9), rlcBandPass(220, 4.7e-3, 100e-9), []string{"R1", "L1"}, []float64{100, 10e-3}, GainAndPhase},
		{"RLC L1 C1", rlcBandPass(100, 10e-3, 100e-9), rlcBandPass(100, 22e-3, 47e-9), []string{"L1", "C1"}, []float64{10e-3, 100e-9}, GainAndPhase},
		{"SK C1 C2", sallenKey(10e3, 10e3, 22e-9, 10e-9), sallenKey(10e3, 10e3, 10e-9, 22e-9), []string{"C1", "C2"}, []float64{22e-9, 10e-9}, GainAndPhase},
		{"SK R1 C2", sallenKey(10e3, 10e3, 22e-9, 10e-9), sallenKey(4.7e3, 10e3, 22e-9, 4.7e-9), []string{"R1", "C2"}, []float64{10e3, 10e-9}, GainAndPhase},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res, err := Fit(c.start, synth(c.truth, fr), c.free, Options{Use: c.use})
			if err != nil {
				t.Fatal(err)
			}
			if !res.Converged {
				t.Error("not converged")
			}
			for j, comp := range res.Components {
				if e := relErr(comp.Value, c.want[j]); e > recoverTol {
					t.Errorf("%s = %g, want %g (relative error %.2g)", comp.Name, comp.Value, c.want[j], e)
				}
			}
			if res.RMSdB > 1e-9 || res.RMSdeg > 1e-8 {
				t.Errorf("RMS %g dB, %g° on a noiseless trace", res.RMSdB, res.RMSdeg)
			}
		})
	}
}

// TestCoverage adds seeded Gaussian noise of known σ to a Sallen-Key trace
// and checks that the reported standard uncertainties are right: the true
// value lies within ±1σ of the fit in about 68.3 % and within ±2σ in about
// 95.4 % of the fits (normal distribution; least squares with Gaussian
// errors, e.g. Press et al., Numerical Recipes, 3rd ed., §15.6, from
// memory). Both the absolute mode (σ from the trace) and the relative
// mode (σ estimated from the residuals) are checked.
func TestCoverage(t *testing.T) {
	const (
		seeds             = 200
		sdB, sdeg         = 0.05, 0.5
		lo1, hi1          = 0.60, 0.76 // slack around 0.683 for 400 draws
		lo2, hi2          = 0.90, 0.99 // around 0.954
		chi2Low, chi2High = 0.9, 1.1   // mean reduced χ² over the seeds
	)
	fr := logGrid(100, 20e3, 50)
	truth := sallenKey(10e3, 10e3, 22e-9, 10e-9)
	clean := synth(truth, fr)
	want := []float64{22e-9, 10e-9}
	for _, mode := range []struct {
		name     string
		relative bool
	}{{"absolute", false}, {"relative", true}} {
		t.Run(mode.name, func(t *testing.T) {
			in1, in2, n := 0, 0, 0
			chi2 := 0.0
			for seed := uint64(0); seed < seeds; seed++ {
				rng := rand.New(rand.NewPCG(seed, 1057))
				meas := addNoise(clean, sdB, sdeg, rng)
				if mode.relative {
					for i := range meas {
						meas[i].GainU, meas[i].PhaseU = math.NaN(), math.NaN()
					}
				}
				res, err := Fit(sallenKey(10e3, 10e3, 27e-9, 8.2e-9), meas, []string{"C1", "C2"}, Options{})
				if err != nil {
					t.Fatalf("seed %d: %v", seed, err)
				}
				if res.AbsoluteSigma == mode.relative {
					t.Fatalf("AbsoluteSigma = %v in %s mode", res.AbsoluteSigma, mode.name)
				}
				chi2 += res.ReducedChiSquare
				for j, c := range res.Components {
					d := math.Abs(c.Value - want[j])
					if d <= c.Uncertainty {
						in1++
					}
					if d <= 2*c.Uncertainty {
						in2++
					}
					n++
				}
			}
			f1, f2 := float64(in1)/float64(n), float64(in2)/float64(n)
			t.Logf("%s: within 1σ %.3f, within 2σ %.3f, mean reduced χ² %.3f", mode.name, f1, f2, chi2/seeds)
			if f1 < lo1 || f1 > hi1 {
				t.Errorf("fraction within 1σ = %.3f, want %.2f–%.2f", f1, lo1, hi1)
			}
			if f2 < lo2 || f2 > hi2 {
				t.Errorf("fraction within 2σ = %.3f, want %.2f–%.2f", f2, lo2, hi2)
			}
			// In absolute mode the σ are the true noise, so χ²/(m−p) ≈ 1;
			// in relative mode the default weights (0.1 dB, 1°) are twice
			// the noise, so it is ≈ 1/4.
			mean := chi2 / seeds
			if mode.relative {
				mean *= 4
			}
			if mean < chi2Low || mean > chi2High {
				t.Errorf("mean reduced χ² (scaled) = %.3f, want %.2f–%.2f", mean, chi2Low, chi2High)
			}
		})
	}
}

// TestPrototypes fits the two capacitors of an equal-resistor unity-gain
// Sallen-Key low-pass (R1 = R2 = 10 kΩ fixed) to the normalised
// second-order prototypes of Carter & Mancini, Op Amps for Everyone, 5th
// ed., §16.9, Tables 16.6–16.8 [S, via REFERENCES.md §5], scaled to
// fc = 1 kHz. For s² + a·s + b the prototype has ω0 = √b·ωc and
// Q = √b/a; the circuit has ω0 = 1/(R√(C1C2)) and Q = ½√(C1/C2)
// (REFERENCES.md §5 formula), so the capacitor ratio must come out as
// C1/C2 = 4Q². The handbook's tables print Q to two decimals: 0.71, 0.58,
// 0.86 (from memory); the ideal Butterworth ratio is exactly 2.
func TestPrototypes(t *testing.T) {
	const (
		r  = 10e3
		fc = 1000.0
	)
	cases := []struct {
		name      string
		a, b      float64 // s² + a·s + b [S]
		handbookQ float64 // [M]
		wantRatio float64 // 4Q², derived
	}{
		{"Butterworth", 1.4142, 1, 0.71, 4 * 1 / (1.4142 * 1.4142)}, // 2.00004: the 1.4142 is √2 rounded
		{"Bessel", 3, 3, 0.58, 4 * 3.0 / (3 * 3)},
		{"Chebyshev 0.5 dB", 1.4256, 1.5162, 0.86, 4 * 1.5162 / (1.4256 * 1.4256)},
	}
	fr := logGrid(50, 20e3, 80)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			wc := 2 * math.Pi * fc
			meas := make([]trace.Point, len(fr))
			for i, f := range fr {
				s := complex(0, 2*math.Pi*f/wc)
				meas[i] = trace.NewPoint(f, complex(c.b, 0)/(s*s+complex(c.a, 0)*s+complex(c.b, 0)))
			}
			res, err := Fit(sallenKey(r, r, 10e-9, 10e-9), meas, []string{"C1", "C2"}, Options{})
			if err != nil {
				t.Fatal(err)
			}
			c1, c2 := res.Components[0].Value, res.Components[1].Value
			q := 0.5 * math.Sqrt(c1/c2)
			wantQ := math.Sqrt(c.b) / c.a
			if relErr(q, wantQ) > qTol {
				t.Errorf("Q = %.6f, want %.6f from the prototype", q, wantQ)
			}
			if math.Abs(q-c.handbookQ) > handbookQTol {
				t.Errorf("Q = %.4f, handbook %.2f", q, c.handbookQ)
			}
			if relErr(c1/c2, c.wantRatio) > qTol {
				t.Errorf("C1/C2 = %.6f, want %.6f", c1/c2, c.wantRatio)
			}
			f0 := 1 / (2 * math.Pi * r * math.Sqrt(c1*c2))
			if relErr(f0, math.Sqrt(c.b)*fc) > qTol {
				t.Errorf("f0 = %.4f Hz, want %.4f Hz", f0, math.Sqrt(c.b)*fc)
			}
		})
	}
}

// TestWeightsFromTrace checks that the uncertainty columns weight the
// residuals: a point 6 dB and 30° off with a huge stated uncertainty must
// not move the fit, while the same point with the default weights must
// (definition of weighted least squares, common practice).
func TestWeightsFromTrace(t *testing.T) {
	fr := logGrid(20, 20e3, 40)
	meas := synth(rcLowPass(10e3, 15e-9), fr)
	bad := trace.FromPolar(meas[20].Freq, meas[20].GainDB()+6, meas[20].PhaseDeg()+30)
	meas[20] = bad
	res, err := Fit(rcLowPass(10e3, 10e-9), meas, []string{"C1"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if relErr(res.Components[0].Value, 15e-9) < 1e-3 {
		t.Fatalf("an outlier with default weight did not move the fit: %g", res.Components[0].Value)
	}
	meas[20].GainU, meas[20].PhaseU = 1e4, 1e5
	for i := range meas {
		if i != 20 {
			meas[i].GainU, meas[i].PhaseU = 0.01, 0.1
		}
	}
	res, err = Fit(rcLowPass(10e3, 10e-9), meas, []string{"C1"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if e := relErr(res.Components[0].Value, 15e-9); e > 1e-5 {
		t.Errorf("a down-weighted outlier moved the fit by %.2g", e)
	}
	if !res.AbsoluteSigma {
		t.Error("AbsoluteSigma false although every point has uncertainties")
	}
}

// TestSigmaOverride checks that Options.Sigma overrides the automatic
// choice and scales the uncertainty as documented: relative mode
// multiplies the variance by the reduced χ².
func TestSigmaOverride(t *testing.T) {
	fr := logGrid(100, 20e3, 50)
	rng := rand.New(rand.NewPCG(7, 7))
	meas := addNoise(synth(rcLowPass(10e3, 15e-9), fr), 0.05, 0.5, rng)
	abs, err := Fit(rcLowPass(10e3, 10e-9), meas, []string{"C1"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	rel, err := Fit(rcLowPass(10e3, 10e-9), meas, []string{"C1"}, Options{Sigma: SigmaRelative})
	if err != nil {
		t.Fatal(err)
	}
	if !abs.AbsoluteSigma || rel.AbsoluteSigma {
		t.Fatalf("AbsoluteSigma %v, %v; want true, false", abs.AbsoluteSigma, rel.AbsoluteSigma)
	}
	ratio := rel.Components[0].Uncertainty / abs.Components[0].Uncertainty
	if relErr(ratio, math.Sqrt(rel.ReducedChiSquare)) > 1e-9 {
		t.Errorf("relative/absolute uncertainty = %g, want √χ²ᵣ = %g", ratio, math.Sqrt(rel.ReducedChiSquare))
	}
}

// TestMultipleStarts checks that a high-Q resonance fitted from a start
// far off, where a single start ends in a local minimum, is found with
// the default extra starts (common practice for non-convex fits).
func TestMultipleStarts(t *testing.T) {
	fr := logGrid(100, 100e3, 100)
	meas := synth(rlcBandPass(1, 10e-3, 100e-9), fr) // Q = 316
	start := rlcBandPass(1, 5e-3, 100e-9)
	single, err := Fit(start, meas, []string{"R1", "L1"}, Options{Starts: 1})
	if err != nil {
		t.Fatal(err)
	}
	if relErr(single.Components[1].Value, 10e-3) < 1e-3 {
		t.Skip("a single start already finds the resonance; nothing to show")
	}
	multi, err := Fit(start, meas, []string{"R1", "L1"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if e := relErr(multi.Components[1].Value, 10e-3); e > recoverTol {
		t.Errorf("L1 = %g with extra starts, want 10 mH", multi.Components[1].Value)
	}
}

// TestPreferredValues checks the E-series fields of a result against IEC
// 60063 values (from memory): 22 nF is in E12, E24 and (as 22.1 nF) near
// E96's 2.21.
func TestPreferredValues(t *testing.T) {
	fr := logGrid(100, 20e3, 30)
	res, err := Fit(sallenKey(10e3, 10e3, 10e-9, 10e-9), synth(sallenKey(10e3, 10e3, 22e-9, 10e-9), fr), []string{"C1"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	c := res.Components[0]
	if relErr(c.E12, 22e-9) > 1e-12 || relErr(c.E24, 22e-9) > 1e-12 || relErr(c.E96, 22.1e-9) > 1e-12 {
		t.Errorf("E12 %g, E24 %g, E96 %g; want 22n, 22n, 22.1n", c.E12, c.E24, c.E96)
	}
}

// TestFunc checks the formula model's contract: values by name in any
// case, NaN for an unknown name, free values replacing nominal ones, an
// error for a non-finite response and a panic for mismatched lengths.
func TestFunc(t *testing.T) {
	m := rcLowPass(10e3, 15e-9)
	if m.Value("r1") != 10e3 || !math.IsNaN(m.Value("R7")) {
		t.Errorf("Value(r1) = %g, Value(R7) = %g", m.Value("r1"), m.Value("R7"))
	}
	h := make([]complex128, 1)
	fc := 1 / (2 * math.Pi * 10e3 * 15e-9)
	// Doubling C1 halves the corner: at the old fc the phase is
	// −atan(2) = −63.4349° (REFERENCES.md §5, 2·fc row [V]).
	if err := m.Evaluate(h, []float64{fc}, []int{1}, []float64{30e-9}); err != nil {
		t.Fatal(err)
	}
	if d := cmplx.Phase(h[0]) * 180 / math.Pi; math.Abs(d+63.4349) > spiceTol {
		t.Errorf("phase %.4f°, want −63.4349°", d)
	}
	bad := NewFunc([]string{"x"}, []float64{1}, func(f float64, p []float64) complex128 { return cmplx.NaN() })
	if err := bad.Evaluate(h, []float64{1}, nil, nil); err == nil || !strings.Contains(err.Error(), "not finite") {
		t.Errorf("non-finite response: error %v", err)
	}
	defer func() {
		if recover() == nil {
			t.Error("Evaluate with mismatched lengths did not panic")
		}
	}()
	_ = m.Evaluate(make([]complex128, 2), []float64{1}, nil, nil)
}
