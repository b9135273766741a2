package tone

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

const (
	// crlbTrials is the Monte-Carlo size. The sample variance of 2000
	// Gaussian errors has a relative spread of sqrt(2/1999) ≈ 3.2%, so the
	// limits below sit more than six spreads away from 1.
	crlbTrials = 2000
	// crlbLow and crlbHigh bound observed variance / Cramér–Rao bound: an
	// efficient estimator sits at 1 and cannot materially beat it.
	crlbLow, crlbHigh = 0.8, 1.2
	// reportedTol bounds |reported uncertainty / observed spread − 1|.
	reportedTol = 0.15
	// refMCTol bounds our Monte-Carlo variance against the REFERENCES §1
	// Monte-Carlo figure [V] (both carry a few percent of spread).
	refMCTol = 0.15
	// boundDigitsTol is the rounding of the 4-digit bound values printed in
	// REFERENCES §1.
	boundDigitsTol = 5e-4
)

// mcCase describes a Monte-Carlo run: a tone of amplitude a at freq in
// white Gaussian noise σ, n samples per block.
type mcCase struct {
	name  string
	n     int
	freq  float64
	a, σ  float64
	seed1 uint64
}

// eta returns the SNR η = A²/(2σ²) of the Cramér–Rao bounds.
func (c mcCase) eta() float64 { return c.a * c.a / (2 * c.σ * c.σ) }

// sigmaFor returns the noise σ that gives amplitude a an SNR of db
// (η = A²/(2σ²) in dB).
func sigmaFor(a, db float64) float64 { return a / math.Sqrt(2*math.Pow(10, db/10)) }

// noisyTone fills x with a·cos(ω·i + φ) + σ·noise using the precomputed
// basis cos ω·i, sin ω·i.
func noisyTone(x, cosB, sinB []float64, a, φ, σ float64, rng *rand.Rand) {
	ca, sa := a*math.Cos(φ), a*math.Sin(φ)
	for i := range x {
		x[i] = ca*cosB[i] - sa*sinB[i] + σ*rng.NormFloat64()
	}
}

func basis(n int, freq, rate float64) (cosB, sinB []float64) {
	cosB, sinB = make([]float64, n), make([]float64, n)
	for i := range cosB {
		cyc := freq * float64(i) / rate
		cyc -= math.Floor(cyc)
		sinB[i], cosB[i] = math.Sincos(2 * math.Pi * cyc)
	}
	return cosB, sinB
}

// TestFitCRLB checks the fit's amplitude and phase variances against the
// Cramér–Rao lower bounds for a real tone in white Gaussian noise
// (REFERENCES §1; Kay 1993, Example 3.14 [M, from memory]; Rife &
// Boorstyn 1974 [M]): var Â ≥ 2σ²/N and var φ̂ ≥ 1/(N·η), η = A²/(2σ²),
// at known frequency. The least-squares fit is efficient, so the observed
// variances must sit within [0.8, 1.2] of the bounds, and the reported
// AmplitudeU and PhaseU must match the observed spreads within 15%.
func TestFitCRLB(t *testing.T) {
	cases := []mcCase{
		// REFERENCES §1 Monte-Carlo setting [V]: N = 256, A = 1, σ = 0.1,
		// f₀ = 0.1037 cycles/sample (26.5 cycles: general path).
		{"REFERENCES §1 N=256 f0=0.1037", 256, 0.1037 * testRate, 1, 0.1, 11},
		{"20 dB integer N=512", 512, 37 * testRate / 512.0, 0.5, sigmaFor(0.5, 20), 12},
		{"20 dB non-integer N=1024", 1024, 0.2113 * testRate, 0.5, sigmaFor(0.5, 20), 13},
		{"60 dB integer N=1024", 1024, 200 * testRate / 1024.0, 0.1, sigmaFor(0.1, 60), 14},
		{"60 dB non-integer N=256", 256, 0.0311 * testRate, 0.1, sigmaFor(0.1, 60), 15},
	}
	e := &Estimator{Rate: testRate}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(c.seed1, 2024))
			cosB, sinB := basis(c.n, c.freq, testRate)
			x := make([]float64, c.n)
			dA := make([]float64, crlbTrials)
			dφ := make([]float64, crlbTrials)
			var sumAU, sumPU float64
			for i := range crlbTrials {
				φ := 2*math.Pi*rng.Float64() - math.Pi
				noisyTone(x, cosB, sinB, c.a, φ, c.σ, rng)
				est, err := e.Fit(x, c.freq)
				if err != nil {
					t.Fatal(err)
				}
				dA[i] = est.Amplitude() - c.a
				dφ[i] = wrap(est.Phase() - φ)
				sumAU += est.AmplitudeU()
				sumPU += est.PhaseU()
			}
			n := float64(c.n)
			boundA := 2 * c.σ * c.σ / n // Kay 1993 [M]: var Â ≥ 2σ²/N
			boundφ := 1 / (n * c.eta()) // Kay 1993 [M]: var φ̂ ≥ 1/(Nη)
			_, varA := moments(dA)
			_, varφ := moments(dφ)
			t.Logf("var Â %.4g (bound %.4g, ratio %.3f); var φ̂ %.4g (bound %.4g, ratio %.3f)",
				varA, boundA, varA/boundA, varφ, boundφ, varφ/boundφ)
			if r := varA / boundA; r < crlbLow || r > crlbHigh {
				t.Errorf("var Â / CRLB = %.3f, want within [%v, %v]", r, crlbLow, crlbHigh)
			}
			if r := varφ / boundφ; r < crlbLow || r > crlbHigh {
				t.Errorf("var φ̂ / CRLB = %.3f, want within [%v, %v]", r, crlbLow, crlbHigh)
			}
			if r := sumAU / crlbTrials / math.Sqrt(varA); math.Abs(r-1) > reportedTol {
				t.Errorf("mean AmplitudeU / observed std = %.3f, want 1 ± %v", r, reportedTol)
			}
			if r := sumPU / crlbTrials / math.Sqrt(varφ); math.Abs(r-1) > reportedTol {
				t.Errorf("mean PhaseU / observed std = %.3f, want 1 ± %v", r, reportedTol)
			}
			if c.n == 256 && c.σ == 0.1 {
				// REFERENCES §1 [V]: bound var Â = var φ̂ = 7.813e−5; the
				// fit's Monte-Carlo values 7.784e−5 and 7.782e−5.
				if math.Abs(boundA/7.813e-5-1) > boundDigitsTol || math.Abs(boundφ/7.813e-5-1) > boundDigitsTol {
					t.Errorf("bounds %.4g, %.4g; REFERENCES §1 gives 7.813e−5", boundA, boundφ)
				}
				if math.Abs(varA/7.784e-5-1) > refMCTol || math.Abs(varφ/7.782e-5-1) > refMCTol {
					t.Errorf("var Â %.4g, var φ̂ %.4g; REFERENCES §1 Monte-Carlo gives 7.784e−5, 7.782e−5", varA, varφ)
				}
			}
		})
	}
}

// TestResidualVariance checks the noise estimate behind every uncertainty:
// the residual sum of squares divided by its N − Params degrees of freedom
// is an unbiased estimate of σ² (least squares, common practice [CP];
// IEEE Std 1241 takes SINAD from the fit residual [M]). Short blocks tell
// N − Params from N (13 against 24 here); long ones check the residual pass
// up to 140 dB SNR, where subtracting energies would lose the noise.
func TestResidualVariance(t *testing.T) {
	const (
		dofTrials = 4000
		// dofTol: the mean of 4000 χ²₁₃/13 values has a relative spread of
		// 0.6%; a wrong divisor (N) would be off by 46%.
		dofTol = 0.05
		// longTol: one block of 48000 samples estimates σ to about 0.3%.
		longTol = 0.03
	)
	e := &Estimator{Rate: testRate}
	for _, c := range []struct {
		name   string
		n      int
		cycles float64
	}{{"24 samples, 2 whole cycles", 24, 2}, {"24 samples, 2.3 cycles", 24, 2.3}} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(71, uint64(c.n)))
			freq := c.cycles * testRate / float64(c.n)
			cosB, sinB := basis(c.n, freq, testRate)
			x := make([]float64, c.n)
			const σ = 0.01
			var sum float64
			var params int
			for range dofTrials {
				noisyTone(x, cosB, sinB, 0.5, rng.Float64()*6, σ, rng)
				est, err := e.Fit(x, freq)
				if err != nil {
					t.Fatal(err)
				}
				sum += est.ResidualRMS * est.ResidualRMS
				params = est.Params
			}
			if r := sum / dofTrials / (σ * σ); math.Abs(r-1) > dofTol {
				t.Errorf("mean ResidualRMS²/σ² = %.4f with %d parameters, want 1 ± %v", r, params, dofTol)
			}
		})
	}
	for _, freq := range []float64{1000, 1000.37} {
		for _, snr := range []float64{20, 80, 140} {
			t.Run(fmt.Sprintf("48000 samples, %g Hz, %g dB", freq, snr), func(t *testing.T) {
				rng := rand.New(rand.NewPCG(72, uint64(snr)))
				σ := sigmaFor(0.5, snr)
				x := synth(48000, testRate, freq, 0.01, polar(0.5, 10), polar(0.001, 20))
				for i := range x {
					x[i] += σ * rng.NormFloat64()
				}
				est, err := e.Fit(x, freq)
				if err != nil {
					t.Fatal(err)
				}
				if r := est.ResidualRMS / σ; math.Abs(r-1) > longTol {
					t.Errorf("ResidualRMS/σ = %.4f, want 1 ± %v", r, longTol)
				}
				// SNR = 10·log10((A²/2)/σ²) by definition (REFERENCES §1 η).
				if d := est.SNR - snr; math.Abs(d) > 20*math.Log10(1+longTol) {
					t.Errorf("SNR = %.2f dB, want %.0f dB", est.SNR, snr)
				}
			})
		}
	}
}
