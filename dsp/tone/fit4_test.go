package tone

import (
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

const (
	// freqTrials is the Monte-Carlo size of the four-parameter fit
	// (relative spread of the variance ≈ sqrt(2/1499) ≈ 3.7%).
	freqTrials = 1500
	// freqExactTol is the relative frequency error allowed on noiseless
	// blocks.
	freqExactTol = 1e-10
)

// TestFitFreqCRLB checks the four-parameter fit against the Cramér–Rao
// bound for frequency, var f̂ ≥ 12/((2π)²·η·N(N²−1)) (cycles/sample)²
// (REFERENCES §1; Kay 1993 [M, from memory]; Händel 2000 [S]: the
// four-parameter fit reaches it), in the REFERENCES §1 Monte-Carlo
// setting [V]: N = 256, A = 1, σ = 0.1, f₀ = 0.1037, started 0.1% off.
// It also checks the phase at n = 0 against 2(2N−1)/(η·N(N+1)) and the
// reported FreqU and PhaseU against the observed spreads.
func TestFitFreqCRLB(t *testing.T) {
	c := mcCase{"REFERENCES §1", 256, 0.1037 * testRate, 1, 0.1, 21}
	e := &Estimator{Rate: testRate, MaxHarmonic: 1}
	rng := rand.New(rand.NewPCG(c.seed1, 99))
	cosB, sinB := basis(c.n, c.freq, testRate)
	x := make([]float64, c.n)
	df := make([]float64, freqTrials)
	dφ := make([]float64, freqTrials)
	var sumFU, sumPU float64
	for i := range freqTrials {
		φ := 2*math.Pi*rng.Float64() - math.Pi
		noisyTone(x, cosB, sinB, c.a, φ, c.σ, rng)
		start := c.freq * 1.001
		if i%2 == 1 {
			start = c.freq * 0.999
		}
		est, err := e.FitFreq(x, start)
		if err != nil {
			t.Fatal(err)
		}
		df[i] = (est.Freq - c.freq) / testRate // cycles/sample
		dφ[i] = wrap(est.Phase() - φ)
		sumFU += est.FreqU / testRate
		sumPU += est.PhaseU()
	}
	n := float64(c.n)
	boundF := 12 / (4 * math.Pi * math.Pi * c.eta() * n * (n*n - 1))
	boundφ := 2 * (2*n - 1) / (c.eta() * n * (n + 1))
	// REFERENCES §1 [V]: the frequency bound is 3.624e−10.
	if math.Abs(boundF/3.624e-10-1) > boundDigitsTol {
		t.Errorf("frequency bound %.4g, REFERENCES §1 gives 3.624e−10", boundF)
	}
	_, varF := moments(df)
	_, varφ := moments(dφ)
	t.Logf("var f̂ %.4g (bound %.4g, ratio %.3f); var φ̂(0) %.4g (bound %.4g, ratio %.3f)",
		varF, boundF, varF/boundF, varφ, boundφ, varφ/boundφ)
	if r := varF / boundF; r < crlbLow || r > crlbHigh {
		t.Errorf("var f̂ / CRLB = %.3f, want within [%v, %v]", r, crlbLow, crlbHigh)
	}
	// REFERENCES §1 [V]: 4-parameter Monte-Carlo var f̂ = 3.620e−10.
	if math.Abs(varF/3.620e-10-1) > refMCTol {
		t.Errorf("var f̂ = %.4g, REFERENCES §1 Monte-Carlo gives 3.620e−10", varF)
	}
	if r := varφ / boundφ; r < crlbLow || r > crlbHigh {
		t.Errorf("var φ̂(0) / CRLB = %.3f, want within [%v, %v]", r, crlbLow, crlbHigh)
	}
	if r := sumFU / freqTrials / math.Sqrt(varF); math.Abs(r-1) > reportedTol {
		t.Errorf("mean FreqU / observed std = %.3f, want 1 ± %v", r, reportedTol)
	}
	if r := sumPU / freqTrials / math.Sqrt(varφ); math.Abs(r-1) > reportedTol {
		t.Errorf("mean PhaseU / observed std = %.3f, want 1 ± %v", r, reportedTol)
	}
}

// TestFitFreqConverges starts the four-parameter fit off the true
// frequency of noiseless tones (with DC and harmonics) and checks that it
// lands on it: the least-squares minimum of a noiseless block is the
// generating frequency (IEEE Std 1057 four-parameter fit [S: Händel
// 2000]).
func TestFitFreqConverges(t *testing.T) {
	harm := []complex128{polar(0.5, 40), polar(0.005, -20), polar(0.002, 75)}
	cases := []struct {
		name        string
		n           int
		freq, start float64
		wantK       int // harmonics fitted, fundamental included
	}{
		{"REFERENCES §1 tone, start 0.1% high", 256, 0.1037 * testRate, 0.1037 * testRate * 1.001, 4},
		{"REFERENCES §1 tone, start 0.1% low", 256, 0.1037 * testRate, 0.1037 * testRate * 0.999, 4},
		{"1 s, 50 ppm clock mismatch", 48000, 1000.05, 1000, 5},
		{"1 s, start 0.1% high", 48000, 1000, 1001, 5},
		{"1 s, start 0.1% low", 48000, 1000.37, 999.37, 5},
		{"20 Hz over 0.5 s, start 0.1% off", 24000, 20.0, 20.02, 5},
		{"7 kHz over 0.1 s, start 0.1% off", 4800, 7003.3, 7010.3, 3},
		{"whole cycles, start on the tone", 4800, 1000, 1000, 5},
	}
	e := &Estimator{Rate: testRate}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			// Only harmonics below Nyquist reach the samples (as behind an
			// anti-alias filter).
			x := synth(c.n, testRate, c.freq, 0.02, harm[:min(c.wantK, len(harm))]...)
			est, err := e.FitFreq(x, c.start)
			if err != nil {
				t.Fatal(err)
			}
			if r := math.Abs(est.Freq/c.freq - 1); r > freqExactTol {
				t.Errorf("Freq = %.12g Hz, want %.12g (relative error %.3g)", est.Freq, c.freq, r)
			}
			if d := cmplx.Abs(est.Phasor - harm[0]); d > 1e-8 {
				t.Errorf("Phasor = %v, want %v", est.Phasor, harm[0])
			}
			if d := cmplx.Abs(est.Harmonics[0] - harm[1]); d > 1e-8 {
				t.Errorf("2nd harmonic = %v, want %v", est.Harmonics[0], harm[1])
			}
			if want := 2*c.wantK + 2; est.Params != want {
				t.Errorf("Params = %d, want %d (DC, %d harmonics, frequency)", est.Params, want, c.wantK)
			}
			if est.Iterations < 1 || est.Iterations > maxIter {
				t.Errorf("Iterations = %d", est.Iterations)
			}
		})
	}
}

// TestFitFreqErrors covers the errors of the four-parameter fit.
func TestFitFreqErrors(t *testing.T) {
	good := synth(480, testRate, 1000, 0, 0.5)
	withNaN := append([]float64(nil), good...)
	withNaN[3] = math.NaN()
	cases := []struct {
		name  string
		e     Estimator
		x     []float64
		start float64
		want  error
	}{
		{"empty block", Estimator{Rate: testRate}, nil, 1000, ErrShortBlock},
		{"fewer samples than parameters", Estimator{Rate: testRate, MaxHarmonic: 1}, good[:3], 0.1 * testRate, ErrShortBlock},
		{"start zero", Estimator{Rate: testRate}, good, 0, ErrFreq},
		{"start at Nyquist", Estimator{Rate: testRate}, good, testRate / 2, ErrFreq},
		{"start NaN", Estimator{Rate: testRate}, good, math.NaN(), ErrFreq},
		{"NaN sample", Estimator{Rate: testRate}, withNaN, 1000, ErrNonFinite},
		{"silence", Estimator{Rate: testRate}, make([]float64, 480), 1000, ErrIllConditioned},
		{"zero rate", Estimator{}, good, 1000, ErrRate},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := c.e.FitFreq(c.x, c.start)
			if !errors.Is(err, c.want) {
				t.Fatalf("error %v, want %v", err, c.want)
			}
		})
	}
}

// TestFitFreqClockMismatch measures a 50 ppm clock offset on a noisy
// second of 48 kHz audio (SNR 60 dB): the estimate must fall within four
// standard uncertainties of the true 1000.05 Hz, and that uncertainty must
// resolve the offset (Cramér–Rao form, REFERENCES §1 [M]).
func TestFitFreqClockMismatch(t *testing.T) {
	const truth = 1000 * (1 + 50e-6)
	rng := rand.New(rand.NewPCG(31, 41))
	x := synth(48000, testRate, truth, 0, 0.25)
	σ := sigmaFor(0.25, 60)
	for i := range x {
		x[i] += σ * rng.NormFloat64()
	}
	e := &Estimator{Rate: testRate}
	est, err := e.FitFreq(x, 1000)
	if err != nil {
		t.Fatal(err)
	}
	if d := math.Abs(est.Freq - truth); d > 4*est.FreqU {
		t.Errorf("Freq = %.7f Hz, want %.7f ± 4·%.3g", est.Freq, truth, est.FreqU)
	}
	if est.FreqU > 1000*5e-6 {
		t.Errorf("FreqU = %.3g Hz cannot resolve a 50 ppm offset", est.FreqU)
	}
}
