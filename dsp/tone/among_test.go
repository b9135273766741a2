package tone

import (
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// lsqReference solves the same least-squares problem as FitAmong with
// gonum's QR on the explicit design matrix (time from n = 0): columns 1,
// then cos and sin of each frequency. It returns the fundamental's phasor
// (freqs[0]) and the unscaled covariance of its cosine and sine
// coefficients, (DᵀD)⁻¹ for those two rows.
func lsqReference(t *testing.T, x []float64, rate float64, freqs []float64) (complex128, [2][2]float64) {
	t.Helper()
	n, p := len(x), 1+2*len(freqs)
	d := mat.NewDense(n, p, nil)
	for i := range n {
		d.Set(i, 0, 1)
		for j, f := range freqs {
			cyc := f * float64(i) / rate
			cyc -= math.Floor(cyc)
			s, c := math.Sincos(2 * math.Pi * cyc)
			d.Set(i, 1+2*j, c)
			d.Set(i, 2+2*j, s)
		}
	}
	var beta mat.Dense
	if err := beta.Solve(d, mat.NewVecDense(n, x)); err != nil {
		t.Fatalf("gonum QR: %v", err)
	}
	var dtd, inv mat.Dense
	dtd.Mul(d.T(), d)
	if err := inv.Inverse(&dtd); err != nil {
		t.Fatalf("gonum inverse: %v", err)
	}
	// a·cos + b·sin = A·cos(ωn + φ) with phasor a − jb.
	return complex(beta.At(1, 0), -beta.At(2, 0)),
		[2][2]float64{{inv.At(1, 1), inv.At(1, 2)}, {inv.At(2, 1), inv.At(2, 2)}}
}

// TestFitAmongWithoutOthersIsFit: with no usable interferer FitAmong is
// Fit, bit for bit. Unusable: not positive, beyond Nyquist, NaN, under one
// cycle per block (9 Hz in 0.1 s).
func TestFitAmongWithoutOthersIsFit(t *testing.T) {
	e := &Estimator{Rate: testRate}
	for _, c := range []struct {
		name   string
		n      int
		freq   float64
		others []float64
	}{
		{"none, whole cycles", 4800, 1000, nil},
		{"none, fractional cycles", 4801, 997.3, nil},
		{"only unusable ones", 4800, 1000, []float64{0, -50, 24000, math.NaN(), 9}},
	} {
		t.Run(c.name, func(t *testing.T) {
			x := synth(c.n, testRate, c.freq, 0.01, polar(0.3, 20), polar(0.003, -40))
			want, err := e.Fit(x, c.freq)
			if err != nil {
				t.Fatal(err)
			}
			got, err := e.FitAmong(x, c.freq, c.others)
			if err != nil {
				t.Fatal(err)
			}
			if got != want {
				t.Errorf("FitAmong = %+v\nFit      = %+v", got, want)
			}
		})
	}
}

// TestFitAmongRemovesInterferers: a 63.1 Hz tone with mains hum at 50 Hz
// and its harmonics, no noise. The plain fit is pulled off by the hum;
// FitAmong recovers the tone to rounding and agrees with gonum's QR
// least-squares solution of the explicit design matrix (an independent
// solver: Golub & Van Loan, Matrix Computations, §5.3, for the method).
func TestFitAmongRemovesInterferers(t *testing.T) {
	const n, f = 4800, 63.1 // 0.1 s: the hum lies 1.3 DFT bins from the tone
	tonePh, h2 := polar(0.1, 40), polar(0.002, 75)
	x := synth(n, testRate, f, 0.004, tonePh, h2)
	hum := []float64{50, 100, 150, 250}
	humPh := []complex128{polar(0.0316, 10), polar(0.008, 200), polar(0.0126, 300), polar(0.005, 77)}
	for j, hf := range hum {
		y := synth(n, testRate, hf, 0, humPh[j])
		for i := range x {
			x[i] += y[i]
		}
	}
	e := &Estimator{Rate: testRate, MaxHarmonic: 2}

	plain, err := e.Fit(x, f)
	if err != nil {
		t.Fatal(err)
	}
	if rel := cmplx.Abs(plain.Phasor/tonePh - 1); rel < 0.01 {
		t.Fatalf("the plain fit is off by only %.2g relative: the test does not exercise the interferers", rel)
	}

	got, err := e.FitAmong(x, f, hum)
	if err != nil {
		t.Fatal(err)
	}
	if rel := cmplx.Abs(got.Phasor/tonePh - 1); rel > 1e-9 {
		t.Errorf("tone phasor %v, want %v (relative error %.2g)", got.Phasor, tonePh, rel)
	}
	if rel := cmplx.Abs(got.Harmonics[0]/h2 - 1); rel > 1e-7 {
		t.Errorf("2nd harmonic %v, want %v (relative error %.2g)", got.Harmonics[0], h2, rel)
	}
	if math.Abs(got.DC-0.004) > 1e-11 {
		t.Errorf("DC %v, want 0.004", got.DC)
	}
	if got.ResidualRMS > 1e-10 {
		t.Errorf("residual %g on a noise-free block", got.ResidualRMS)
	}
	if got.Params != 1+2*2+2*len(hum) {
		t.Errorf("Params = %d, want %d", got.Params, 1+2*2+2*len(hum))
	}

	ref, _ := lsqReference(t, x, testRate, append([]float64{f, 2 * f}, hum...))
	if rel := cmplx.Abs(got.Phasor/ref - 1); rel > 1e-9 {
		t.Errorf("tone phasor %v, gonum QR %v (relative difference %.2g)", got.Phasor, ref, rel)
	}
}

// TestFitAmongUncertainty checks the reported uncertainties by Monte
// Carlo when an interferer lies half a DFT bin from the tone, where its
// columns share much of the tone's: the observed variances of amplitude and
// phase must match AmplitudeU² and PhaseU² (the linear model's covariance
// σ²(DᵀD)⁻¹ is its Cramér–Rao bound, which least squares attains in white
// Gaussian noise: Kay, Fundamentals of Statistical Signal Processing:
// Estimation Theory, 1993, Theorems 3.5 and 4.1, from memory), exceed the
// resolved-tone bounds at least 1.5-fold, and agree with the covariance
// gonum computes from the explicit design matrix.
func TestFitAmongUncertainty(t *testing.T) {
	const (
		n, f, hum = 4800, 55.0, 50.0
		a, σ      = 0.1, 0.01
		trials    = 2000
	)
	e := &Estimator{Rate: testRate, MaxHarmonic: 1}
	rng := rand.New(rand.NewPCG(7, 11))
	cosB, sinB := basis(n, f, testRate)
	humX := synth(n, testRate, hum, 0, polar(0.05, 30))
	x := make([]float64, n)
	amps, phases := make([]float64, trials), make([]float64, trials)
	var first Estimate
	for tr := range trials {
		noisyTone(x, cosB, sinB, a, 0.7, σ, rng)
		for i := range x {
			x[i] += humX[i]
		}
		est, err := e.FitAmong(x, f, []float64{hum})
		if err != nil {
			t.Fatal(err)
		}
		if tr == 0 {
			first = est
		}
		amps[tr], phases[tr] = est.Amplitude(), wrap(est.Phase()-0.7)
	}
	_, varA := moments(amps)
	_, varP := moments(phases)
	// The reported uncertainty with the true σ (each trial's ResidualRMS
	// estimates it with ~1% spread).
	unit := first
	unit.ResidualRMS, unit.Phasor = σ, complex(a, 0)*cmplx.Rect(1, 0.7)
	wantA, wantP := unit.AmplitudeU(), unit.PhaseU()
	t.Logf("variance inflation: amplitude %.3f, phase %.3f; observed/reported variance: amplitude %.3f, phase %.3f",
		first.AmpVarFactor, first.PhaseVarFactor, varA/(wantA*wantA), varP/(wantP*wantP))
	for _, c := range []struct {
		name           string
		observed, want float64
		factor         float64
	}{
		{"amplitude", varA, wantA * wantA, first.AmpVarFactor},
		{"phase", varP, wantP * wantP, first.PhaseVarFactor},
	} {
		if r := c.observed / c.want; math.Abs(r-1) > reportedTol {
			t.Errorf("%s: observed variance %.3g, reported %.3g (ratio %.3f, allowed 1 ± %g)", c.name, c.observed, c.want, r, reportedTol)
		}
		if c.factor < 1.5 {
			t.Errorf("%s: variance inflation %.3f; an interferer half a bin away must inflate it", c.name, c.factor)
		}
	}

	// The inflation against gonum's (DᵀD)⁻¹ on the explicit design
	// matrix, by the same delta method, on a noise-free block.
	noisyTone(x, cosB, sinB, a, 0.7, 0, rng)
	_, cov := lsqReference(t, x, testRate, []float64{f, hum})
	ca, cb := a*math.Cos(0.7), -a*math.Sin(0.7)
	varAref := (ca*ca*cov[0][0] + 2*ca*cb*cov[0][1] + cb*cb*cov[1][1]) / (a * a)
	if r := varAref / (2.0 / n); math.Abs(r/first.AmpVarFactor-1) > 0.02 {
		t.Errorf("amplitude inflation %.4f, gonum's covariance gives %.4f", first.AmpVarFactor, r)
	}
}

// TestFitAmongErrors: interferers the block cannot tell from the tone or
// a harmonic, and bad blocks.
func TestFitAmongErrors(t *testing.T) {
	e := &Estimator{Rate: testRate}
	x := synth(4800, testRate, 100, 0, polar(0.1, 0))
	for _, c := range []struct {
		name   string
		x      []float64
		freq   float64
		others []float64
		want   error
	}{
		{"interferer on the tone", x, 100, []float64{100}, ErrIllConditioned},
		{"interferer 0.001 bins from the tone", x, 100, []float64{100.01}, ErrIllConditioned},
		{"not finite", append([]float64{math.NaN()}, x[1:]...), 100, []float64{50}, ErrNonFinite},
		{"empty", nil, 100, []float64{50}, ErrShortBlock},
		{"fewer samples than columns", x[:4], 12000, []float64{15000, 18000}, ErrShortBlock},
		{"frequency beyond Nyquist", x, 30000, []float64{50}, ErrFreq},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := e.FitAmong(c.x, c.freq, c.others)
			if !errors.Is(err, c.want) {
				t.Fatalf("error %v, want %v", err, c.want)
			}
			t.Log(err)
		})
	}
}

// BenchmarkFitAmong: one 0.1 s block at 48 kHz, a 63.1 Hz tone with five
// harmonics and four hum lines (19 columns).
func BenchmarkFitAmong(b *testing.B) {
	e := &Estimator{Rate: testRate}
	x := synth(4800, testRate, 63.1, 0, polar(0.1, 0))
	hum := []float64{50, 100, 150, 250}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := e.FitAmong(x, 63.1, hum); err != nil {
			b.Fatal(err)
		}
	}
}

// TestFitAmongHarmonicOnInterferer: a 20 Hz tone whose 5th harmonic falls
// on the 100 Hz hum line. The line is fitted and the 5th harmonic left
// out (zero, not in THD); the fundamental and the other harmonics come out
// exact.
func TestFitAmongHarmonicOnInterferer(t *testing.T) {
	const n, f = 9600, 20.0
	fund, h2, h3 := polar(0.2, -30), polar(0.004, 10), polar(0.002, 100)
	x := synth(n, testRate, f, 0, fund, h2, h3, 0, polar(0.001, 0))
	y := synth(n, testRate, 50, 0, polar(0.03, 45), polar(0.01, 0))
	for i := range x {
		x[i] += y[i]
	}
	e := &Estimator{Rate: testRate}
	got, err := e.FitAmong(x, f, []float64{50, 100, 150})
	if err != nil {
		t.Fatal(err)
	}
	if rel := cmplx.Abs(got.Phasor/fund - 1); rel > 1e-9 {
		t.Errorf("fundamental %v, want %v (relative error %.2g)", got.Phasor, fund, rel)
	}
	if got.Harmonics[3] != 0 {
		t.Errorf("5th harmonic %v: it sits on the 100 Hz line and must be left out", got.Harmonics[3])
	}
	if rel := cmplx.Abs(got.Harmonics[0]/h2 - 1); rel > 1e-7 {
		t.Errorf("2nd harmonic %v, want %v", got.Harmonics[0], h2)
	}
	wantTHD := 100 * math.Hypot(0.004, 0.002) / 0.2 // 2nd and 3rd; 4th is zero
	if math.Abs(got.THD-wantTHD) > 1e-6 {
		t.Errorf("THD %.6f %%, want %.6f %% (2nd and 3rd only)", got.THD, wantTHD)
	}
	if got.Params != 1+2*4+2*3 {
		t.Errorf("Params = %d, want %d (DC, four harmonics, three lines)", got.Params, 1+2*4+2*3)
	}
}

// FuzzFitAmong feeds arbitrary blocks, tone and interferer frequencies to
// FitAmong: it must never panic, and must either fail with a sentinel
// error or return finite phasors and finite, positive variance factors.
func FuzzFitAmong(f *testing.F) {
	f.Add([]byte("a tone of sorts, more or less periodic, more or less, with hum"), 0.1, 0.11, 0.3)
	f.Add([]byte{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15}, 0.25, 0.25, 0.0)
	f.Add([]byte{255, 0, 255, 0, 255, 0, 255, 0, 255, 0, 255, 0}, 0.49, 0.01, -1.0)
	e := &Estimator{Rate: 1}
	f.Fuzz(func(t *testing.T, data []byte, freq, o1, o2 float64) {
		x := make([]float64, len(data))
		for i, b := range data {
			x[i] = float64(int(b)-128) / 128
		}
		est, err := e.FitAmong(x, freq, []float64{o1, o2})
		if err != nil {
			for _, s := range []error{ErrShortBlock, ErrFreq, ErrIllConditioned, ErrNonFinite} {
				if errors.Is(err, s) {
					return
				}
			}
			t.Fatalf("unexpected error %v", err)
		}
		if cmplx.IsNaN(est.Phasor) || cmplx.IsInf(est.Phasor) || math.IsNaN(est.DC) {
			t.Fatalf("non-finite estimate %+v", est)
		}
		if est.AmpVarFactor < 0 || est.PhaseVarFactor < 0 || math.IsNaN(est.AmpVarFactor) || math.IsNaN(est.PhaseVarFactor) {
			t.Fatalf("variance factors %v, %v", est.AmpVarFactor, est.PhaseVarFactor)
		}
	})
}
