package tone

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"tonetrace/dsp/trace"
)

const (
	// rcTolDB and rcTolDeg are the rounding of the REFERENCES §5 table
	// (4 decimals).
	rcTolDB  = 5e-5
	rcTolDeg = 5e-5
	// ratioTrials is the Monte-Carlo size for propagated uncertainty
	// (relative spread of a standard deviation ≈ 1/sqrt(2·2000) ≈ 1.6%).
	ratioTrials = 2000
)

// TestRatioRC feeds a reference tone and the same tone through a
// first-order RC low-pass (H = 1/(1 + j·f/fc), R = 10 kΩ, C = 15 nF,
// fc = 1061.0330 Hz) and compares Ratio with the ngspice AC values of
// REFERENCES §5 [V].
func TestRatioRC(t *testing.T) {
	const fc = 1061.0330 // REFERENCES §5 [V]
	cases := []struct {
		name         string
		f            float64 // multiple of fc
		gainDB, phDg float64 // REFERENCES §5 low-pass column [V]
	}{
		{"0.1·fc", 0.1, -0.0432, -5.7106},
		{"0.5·fc", 0.5, -0.9691, -26.5651},
		{"fc", 1, -3.0103, -45},
		{"2·fc", 2, -6.9897, -63.4349},
		{"10·fc", 10, -20.0432, -84.2894},
	}
	e := &Estimator{Rate: testRate}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := c.f * fc
			h := 1 / complex(1, c.f)
			stim := polar(0.3, 40)
			n, err := CycleLength(f, testRate, 0.1)
			if err != nil {
				t.Fatal(err)
			}
			ref, err := e.Fit(synth(n, testRate, f, 0.001, stim, polar(0.001, 0)), f)
			if err != nil {
				t.Fatal(err)
			}
			resp, err := e.Fit(synth(n, testRate, f, -0.002, stim*h, polar(0.002, 90)), f)
			if err != nil {
				t.Fatal(err)
			}
			p := Ratio(resp, ref)
			if math.Abs(p.GainDB()-c.gainDB) > rcTolDB || math.Abs(p.PhaseDeg()-c.phDg) > rcTolDeg {
				t.Errorf("H = %.4f dB, %.4f°; REFERENCES §5 gives %.4f dB, %.4f°", p.GainDB(), p.PhaseDeg(), c.gainDB, c.phDg)
			}
			if p.Freq != f || p.THD != resp.THD || p.SNR != math.Min(resp.SNR, ref.SNR) || !math.IsNaN(p.Coherence) {
				t.Errorf("point %+v: want Freq %v, THD of the response %v, worse SNR, NaN coherence", p, f, resp.THD)
			}
		})
	}
}

// TestRatioUncertainty checks the propagated uncertainties against the
// Monte-Carlo spread of the ratio with independent noise on both inputs
// (first-order propagation of independent relative errors, common practice
// [CP]; per-channel bounds from REFERENCES §1). GainU and PhaseU must
// match the observed standard deviations of gain (dB) and phase (degrees)
// within 15%.
func TestRatioUncertainty(t *testing.T) {
	cases := []struct {
		name            string
		n               int
		freq            float64
		hRef, hResp     float64 // amplitudes
		snrRef, snrResp float64 // dB, η = A²/(2σ²)
	}{
		{"integer cycles, 40 dB and 20 dB", 960, 1000, 0.5, 0.05, 40, 20},
		{"non-integer, 30 dB both", 1000, 1234.5, 0.2, 0.4, 30, 30},
	}
	e := &Estimator{Rate: testRate}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(61, uint64(c.n)))
			cosB, sinB := basis(c.n, c.freq, testRate)
			xr, xs := make([]float64, c.n), make([]float64, c.n)
			σr, σs := sigmaFor(c.hRef, c.snrRef), sigmaFor(c.hResp, c.snrResp)
			const phaseShift = -1.1 // radians, response relative to reference
			gains := make([]float64, ratioTrials)
			phases := make([]float64, ratioTrials)
			var sumGU, sumPU float64
			var last trace.Point
			for i := range ratioTrials {
				φ := 2*math.Pi*rng.Float64() - math.Pi
				noisyTone(xr, cosB, sinB, c.hRef, φ, σr, rng)
				noisyTone(xs, cosB, sinB, c.hResp, φ+phaseShift, σs, rng)
				ref, err := e.Fit(xr, c.freq)
				if err != nil {
					t.Fatal(err)
				}
				resp, err := e.Fit(xs, c.freq)
				if err != nil {
					t.Fatal(err)
				}
				last = Ratio(resp, ref)
				gains[i] = last.GainDB()
				phases[i] = last.PhaseDeg()
				sumGU += last.GainU
				sumPU += last.PhaseU
			}
			mg, vg := moments(gains)
			mp, vp := moments(phases)
			wantG := 20 * math.Log10(c.hResp/c.hRef)
			wantP := phaseShift * 180 / math.Pi
			t.Logf("gain %.4f dB ± %.4f (reported %.4f); phase %.3f° ± %.4f (reported %.4f)",
				mg, math.Sqrt(vg), sumGU/ratioTrials, mp, math.Sqrt(vp), sumPU/ratioTrials)
			if math.Abs(mg-wantG) > 4*math.Sqrt(vg/ratioTrials)+1e-3*math.Sqrt(vg) {
				t.Errorf("mean gain %.5f dB, want %.5f dB", mg, wantG)
			}
			if math.Abs(mp-wantP) > 4*math.Sqrt(vp/ratioTrials) {
				t.Errorf("mean phase %.5f°, want %.5f°", mp, wantP)
			}
			if r := sumGU / ratioTrials / math.Sqrt(vg); math.Abs(r-1) > reportedTol {
				t.Errorf("mean GainU / observed std = %.3f, want 1 ± %v", r, reportedTol)
			}
			if r := sumPU / ratioTrials / math.Sqrt(vp); math.Abs(r-1) > reportedTol {
				t.Errorf("mean PhaseU / observed std = %.3f, want 1 ± %v", r, reportedTol)
			}
		})
	}
}

// TestRatioFormula checks the propagation formulas on fixed estimates:
// GainU = 20/ln10·sqrt(u_r,resp² + u_r,ref²) dB and PhaseU the
// root-sum-square of the phase uncertainties in degrees (first-order
// propagation, common practice [CP]).
func TestRatioFormula(t *testing.T) {
	ref := Estimate{Freq: 500, Phasor: polar(0.5, 0), ResidualRMS: 0.01, SNR: 30, THD: 0.1, N: 800}
	resp := Estimate{Freq: 500, Phasor: polar(0.1, -90), ResidualRMS: 0.004, SNR: 25, THD: 1.5, N: 800}
	p := Ratio(resp, ref)
	ur := 0.004 * math.Sqrt(2.0/800) / 0.1
	uf := 0.01 * math.Sqrt(2.0/800) / 0.5
	if want := 20 / math.Ln10 * math.Sqrt(ur*ur+uf*uf); math.Abs(p.GainU-want) > 1e-12 {
		t.Errorf("GainU = %.15g dB, want %.15g", p.GainU, want)
	}
	if want := math.Sqrt(ur*ur+uf*uf) * 180 / math.Pi; math.Abs(p.PhaseU-want) > 1e-12 {
		t.Errorf("PhaseU = %.15g°, want %.15g", p.PhaseU, want)
	}
	if cmplx.Abs(p.H-polar(0.2, -90)) > 1e-15 || p.SNR != 25 || p.THD != 1.5 || !math.IsNaN(p.Coherence) {
		t.Errorf("point %+v", p)
	}
	// A dead reference input gives a non-finite ratio, not a panic.
	dead := Ratio(resp, Estimate{Freq: 500, N: 800, ResidualRMS: 0.01})
	if !cmplx.IsInf(dead.H) && !cmplx.IsNaN(dead.H) {
		t.Errorf("zero reference: H = %v, want Inf or NaN", dead.H)
	}
}
