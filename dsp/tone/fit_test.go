package tone

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

const (
	// fitFFTTol bounds the difference between fitted phasors and gonum FFT
	// projections (absolute, full-scale units, unit-variance input).
	fitFFTTol = 1e-12
	// exactTol bounds the error of phasors and DC recovered from noiseless
	// synthetic blocks (absolute, full-scale units).
	exactTol = 1e-10
	// thdTol is the relative tolerance on THD from noiseless blocks.
	thdTol = 1e-7
	// pathTol bounds the difference between the fast and general paths on
	// the same integer-cycle block.
	pathTol = 1e-12
	// residualTol is the relative tolerance on residual energies.
	residualTol = 1e-9
	// noiselessRMS bounds ResidualRMS on noiseless blocks.
	noiselessRMS = 1e-10
)

// TestFitFFT fits bin-exact tones and compares with gonum's FFT
// (gonum.org/v1/gonum/dsp/fourier): with a whole number of cycles the
// least-squares columns are orthogonal, so the fit must equal the DFT
// projections: Phasor = 2·F[m]/N, DC = F[0]/N, harmonic h = 2·F[h·m]/N
// (IEEE Std 1057 model; the orthogonality is common practice [CP]).
func TestFitFFT(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	e, err := NewEstimator(testRate)
	if err != nil {
		t.Fatal(err)
	}
	for _, n := range []int{64, 480, 1000, 4096} {
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64() + 0.25
		}
		coef := fourier.NewFFT(n).Coefficients(nil, x)
		var energy float64
		for _, v := range x {
			energy += v * v
		}
		for _, m := range []int{1, 3, 17, n / 7} {
			for _, path := range []fitPath{pathAuto, pathGeneral} {
				name := fmt.Sprintf("N=%d/bin=%d/%s", n, m, map[fitPath]string{pathAuto: "fast", pathGeneral: "general"}[path])
				t.Run(name, func(t *testing.T) {
					est, err := e.fit(x, float64(m)*testRate/float64(n), 0, path)
					if err != nil {
						t.Fatal(err)
					}
					nf := float64(n)
					want := 2 * coef[m] / complex(nf, 0)
					if d := cmplx.Abs(est.Phasor - want); d > fitFFTTol {
						t.Errorf("Phasor = %v, gonum FFT 2F[%d]/N = %v (|Δ| %.3g)", est.Phasor, m, want, d)
					}
					if d := math.Abs(est.DC - real(coef[0])/nf); d > fitFFTTol {
						t.Errorf("DC = %v, gonum FFT F[0]/N = %v", est.DC, real(coef[0])/nf)
					}
					// Parseval over the fitted bins gives the explained
					// energy; the rest is the residual.
					explained := real(coef[0]) * real(coef[0]) / nf
					explained += nf / 2 * cmplx.Abs(want) * cmplx.Abs(want)
					for h := 2; h <= 5; h++ {
						got := est.Harmonics[h-2]
						if h*m > (n-1)/2 {
							if got != 0 {
								t.Errorf("harmonic %d at bin %d ≥ N/2: got %v, want 0", h, h*m, got)
							}
							continue
						}
						wantH := 2 * coef[h*m] / complex(nf, 0)
						explained += nf / 2 * cmplx.Abs(wantH) * cmplx.Abs(wantH)
						if d := cmplx.Abs(got - wantH); d > fitFFTTol {
							t.Errorf("harmonic %d = %v, gonum FFT = %v (|Δ| %.3g)", h, got, wantH, d)
						}
					}
					gotRes := est.ResidualRMS * est.ResidualRMS * float64(n-est.Params)
					if wantRes := energy - explained; math.Abs(gotRes-wantRes) > residualTol*energy {
						t.Errorf("residual energy %.12g, Parseval with gonum FFT %.12g", gotRes, wantRes)
					}
				})
			}
		}
	}
}

// TestFitExact recovers the generating parameters of noiseless synthetic
// blocks: a least-squares fit of the true model reproduces them exactly
// (IEEE Std 1057 three-parameter fit, Kollár & Blair 2005 [S]; here with
// harmonics), whether the block holds whole cycles or not, and the general
// path agrees with the fast path.
func TestFitExact(t *testing.T) {
	full := []complex128{polar(0.5, 30), polar(0.01, -60), polar(0.003, 100), polar(0.001, 0), polar(0.0005, 45)}
	cases := []struct {
		name     string
		n        int
		freq     float64
		maxH     int
		dc       float64
		p        []complex128 // fundamental first; what the signal holds
		wantK    int          // harmonics expected to be fitted
		wantNaNσ bool         // N = Params: no degrees of freedom left
	}{
		{"integer 1 kHz 0.1 s", 4800, 1000, 0, 0.1, full, 5, false},
		{"non-integer 1001.7 Hz", 4800, 1001.7, 0, 0.1, full, 5, false},
		{"37 samples, 3.4 cycles", 37, 0.0913 * testRate, 0, -0.2, full, 5, false},
		{"N equals Params, one cycle", 11, testRate / 11.0, 0, 0.05, full, 5, true},
		{"N equals Params, 0.9 cycles", 3, 0.3 * testRate, 0, 0.05, full[:1], 1, true},
		{"0.6 cycles: fundamental only", 1000, 0.6 * testRate / 1000, 0, 0.05, full[:1], 1, false},
		{"1.3 cycles", 1000, 1.3 * testRate / 1000, 0, 0.3, full, 5, false},
		{"20 Hz over 1 s", 48000, 20, 0, 0.01, full, 5, false},
		{"20 Hz over 1 s off-bin", 48000, 20.013, 0, 0.01, full, 5, false},
		{"4th and 5th above Nyquist", 401, 0.15 * testRate, 0, 0.1, full[:3], 3, false},
		{"fundamental near Nyquist", 100, 0.45 * testRate, 0, 0.1, full[:1], 1, false},
		{"plain three-parameter fit", 999, 3217.3, 1, 0.2, full[:1], 1, false},
		{"MaxHarmonic 3", 2000, 997, 3, 0, full[:3], 3, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e := &Estimator{Rate: testRate, MaxHarmonic: c.maxH}
			x := synth(c.n, testRate, c.freq, c.dc, c.p...)
			est, err := e.Fit(x, c.freq)
			if err != nil {
				t.Fatal(err)
			}
			gen, err := e.fit(x, c.freq, 0, pathGeneral)
			if err != nil {
				t.Fatal(err)
			}
			want := make([]complex128, 5)
			copy(want, c.p)
			got := append([]complex128{est.Phasor}, est.Harmonics[:]...)
			for k := range 5 {
				if k >= c.wantK {
					if got[k] != 0 {
						t.Errorf("harmonic %d not fitted: got %v, want exactly 0", k+1, got[k])
					}
					continue
				}
				if d := cmplx.Abs(got[k] - want[k]); d > exactTol {
					t.Errorf("harmonic %d = %v, want %v (|Δ| %.3g)", k+1, got[k], want[k], d)
				}
			}
			if d := math.Abs(est.DC - c.dc); d > exactTol {
				t.Errorf("DC = %.15g, want %v", est.DC, c.dc)
			}
			if wantP := 2*c.wantK + 1; est.Params != wantP || est.N != c.n || est.Freq != c.freq {
				t.Errorf("Params, N, Freq = %d, %d, %v; want %d, %d, %v", est.Params, est.N, est.Freq, wantP, c.n, c.freq)
			}
			if c.wantNaNσ {
				if !math.IsNaN(est.ResidualRMS) || !math.IsNaN(est.AmplitudeU()) {
					t.Errorf("N = Params: ResidualRMS = %v, AmplitudeU = %v, want NaN", est.ResidualRMS, est.AmplitudeU())
				}
			} else if !(est.ResidualRMS < noiselessRMS) {
				t.Errorf("noiseless ResidualRMS = %.3g, want < %.3g", est.ResidualRMS, noiselessRMS)
			}
			// THD = 100·sqrt(Σ|H_k|²)/A over the fitted harmonics
			// (definition, IEEE Std 1241 [M]).
			if c.wantK == 1 {
				if !math.IsNaN(est.THD) {
					t.Errorf("no harmonic fitted: THD = %v, want NaN", est.THD)
				}
			} else {
				var h float64
				for _, p := range want[1:c.wantK] {
					h += cmplx.Abs(p) * cmplx.Abs(p)
				}
				wantTHD := 100 * math.Sqrt(h) / cmplx.Abs(want[0])
				if math.Abs(est.THD-wantTHD) > thdTol*wantTHD {
					t.Errorf("THD = %.9g%%, want %.9g%%", est.THD, wantTHD)
				}
			}
			// Both paths solve the same least-squares problem.
			if d := cmplx.Abs(gen.Phasor - est.Phasor); d > exactTol {
				t.Errorf("general path Phasor %v differs from %v", gen.Phasor, est.Phasor)
			}
			for k := range 4 {
				if d := cmplx.Abs(gen.Harmonics[k] - est.Harmonics[k]); d > exactTol {
					t.Errorf("general path harmonic %d %v differs from %v", k+2, gen.Harmonics[k], est.Harmonics[k])
				}
			}
		})
	}
}

// TestFitPathsAgree fits noisy integer-cycle blocks by both paths: with
// orthogonal columns the normal equations reduce to the projections, so
// the results must agree to rounding (least squares, common practice
// [CP]).
func TestFitPathsAgree(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	e := &Estimator{Rate: testRate}
	for _, c := range []struct {
		n    int
		freq float64
	}{{4800, 1000}, {4800, 50}, {1024, 37 * testRate / 1024.0}, {48000, 20}, {441, 441 * 4000 / testRate}} {
		t.Run(fmt.Sprintf("N=%d/f=%g", c.n, c.freq), func(t *testing.T) {
			x := synth(c.n, testRate, c.freq, 0.05, polar(0.4, 10), polar(0.004, 70))
			for i := range x {
				x[i] += 0.01 * rng.NormFloat64()
			}
			fast, err := e.fit(x, c.freq, 0, pathAuto)
			if err != nil {
				t.Fatal(err)
			}
			gen, err := e.fit(x, c.freq, 0, pathGeneral)
			if err != nil {
				t.Fatal(err)
			}
			if d := cmplx.Abs(fast.Phasor - gen.Phasor); d > pathTol {
				t.Errorf("Phasor: fast %v, general %v", fast.Phasor, gen.Phasor)
			}
			if d := math.Abs(fast.DC - gen.DC); d > pathTol {
				t.Errorf("DC: fast %v, general %v", fast.DC, gen.DC)
			}
			for k := range 4 {
				if d := cmplx.Abs(fast.Harmonics[k] - gen.Harmonics[k]); d > pathTol {
					t.Errorf("harmonic %d: fast %v, general %v", k+2, fast.Harmonics[k], gen.Harmonics[k])
				}
			}
			if r := math.Abs(fast.ResidualRMS/gen.ResidualRMS - 1); r > residualTol {
				t.Errorf("ResidualRMS: fast %v, general %v", fast.ResidualRMS, gen.ResidualRMS)
			}
		})
	}
}

// TestTHD fits signals with known harmonic amplitudes. THD is
// 100·sqrt(Σ|H_k|²)/A (IEEE Std 1241 [M]; common practice [CP]); harmonics
// at or above Nyquist are not fitted, so their (aliased) samples neither
// count nor disturb the result when the block is coherent.
func TestTHD(t *testing.T) {
	e := &Estimator{Rate: testRate}
	cases := []struct {
		name    string
		n       int
		freq    float64
		p       []complex128
		wantTHD float64 // percent, from the amplitudes
		zero    []int   // harmonics that must come out exactly zero
	}{
		{
			name: "2nd, 3rd and 5th", n: 4800, freq: 1000,
			p:       []complex128{1, polar(0.01, 20), polar(0.005, -90), 0, polar(0.002, 180)},
			wantTHD: 100 * math.Sqrt(0.01*0.01+0.005*0.005+0.002*0.002), // 1.1357816…%
		},
		{
			name: "off-bin 2nd only", n: 4800, freq: 1234.567,
			p:       []complex128{0.5, polar(0.05, 45)},
			wantTHD: 10,
		},
		{
			// 0.15·rate over 400 samples: 60 cycles; the 4th (0.6·rate) and
			// 5th (0.75·rate) harmonics alias to bins 160 and 100, clear of
			// the fitted bins 60, 120 and 180.
			name: "4th and 5th above Nyquist", n: 400, freq: 0.15 * testRate,
			p:       []complex128{1, polar(0.01, 0), polar(0.005, 0), polar(0.2, 0), polar(0.1, 0)},
			wantTHD: 100 * math.Sqrt(0.01*0.01+0.005*0.005),
			zero:    []int{4, 5},
		},
		{
			name: "no harmonic below Nyquist", n: 480, freq: 0.3 * testRate,
			p:       []complex128{1, polar(0.2, 0)},
			wantTHD: math.NaN(),
			zero:    []int{2, 3, 4, 5},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x := synth(c.n, testRate, c.freq, 0, c.p...)
			est, err := e.Fit(x, c.freq)
			if err != nil {
				t.Fatal(err)
			}
			if math.IsNaN(c.wantTHD) {
				if !math.IsNaN(est.THD) {
					t.Errorf("THD = %v, want NaN", est.THD)
				}
			} else if math.Abs(est.THD-c.wantTHD) > thdTol*c.wantTHD {
				t.Errorf("THD = %.9g%%, want %.9g%%", est.THD, c.wantTHD)
			}
			for _, h := range c.zero {
				if est.Harmonics[h-2] != 0 {
					t.Errorf("harmonic %d above Nyquist: got %v, want 0", h, est.Harmonics[h-2])
				}
			}
		})
	}
}

// TestFitErrors covers every error a fit reports, with NaN or ±Inf in the
// block rejected outright rather than propagated.
func TestFitErrors(t *testing.T) {
	good := synth(480, testRate, 1000, 0, 0.5)
	withNaN := append([]float64(nil), good...)
	withNaN[17] = math.NaN()
	withInf := append([]float64(nil), good...)
	withInf[400] = math.Inf(-1)
	cases := []struct {
		name string
		e    Estimator
		x    []float64
		freq float64
		want error
	}{
		{"empty block", Estimator{Rate: testRate}, nil, 1000, ErrShortBlock},
		{"one sample", Estimator{Rate: testRate}, good[:1], 0.1 * testRate, ErrShortBlock},
		{"two samples, fundamental only", Estimator{Rate: testRate, MaxHarmonic: 1}, good[:2], 0.2 * testRate, ErrShortBlock},
		{"frequency zero", Estimator{Rate: testRate}, good, 0, ErrFreq},
		{"negative frequency", Estimator{Rate: testRate}, good, -1000, ErrFreq},
		{"frequency at Nyquist", Estimator{Rate: testRate}, good, testRate / 2, ErrFreq},
		{"frequency above Nyquist", Estimator{Rate: testRate}, good, 30000, ErrFreq},
		{"frequency NaN", Estimator{Rate: testRate}, good, math.NaN(), ErrFreq},
		{"frequency +Inf", Estimator{Rate: testRate}, good, math.Inf(1), ErrFreq},
		{"NaN sample", Estimator{Rate: testRate}, withNaN, 1000, ErrNonFinite},
		{"NaN sample, general path", Estimator{Rate: testRate}, withNaN, 1001.5, ErrNonFinite},
		{"-Inf sample", Estimator{Rate: testRate}, withInf, 1000, ErrNonFinite},
		{"zero rate", Estimator{}, good, 1000, ErrRate},
		{"NaN rate", Estimator{Rate: math.NaN()}, good, 1000, ErrRate},
		{"MaxHarmonic 6", Estimator{Rate: testRate, MaxHarmonic: 6}, good, 1000, ErrHarmonics},
		{"MaxHarmonic -1", Estimator{Rate: testRate, MaxHarmonic: -1}, good, 1000, ErrHarmonics},
		{"a thousandth of a cycle", Estimator{Rate: testRate}, good, 0.1, ErrIllConditioned},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := c.e.Fit(c.x, c.freq)
			if !errors.Is(err, c.want) {
				t.Fatalf("error %v, want %v", err, c.want)
			}
			if len(err.Error()) <= len(c.want.Error())+10 {
				t.Errorf("error %q gives no detail or fix", err)
			}
		})
	}
	if _, err := NewEstimator(-48000); !errors.Is(err, ErrRate) {
		t.Errorf("NewEstimator(-48000): error %v, want ErrRate", err)
	}
}

// TestFitAllocs proves that fits allocate nothing (testing.AllocsPerRun),
// on the integer-cycle fast path, the general path and the
// four-parameter fit.
func TestFitAllocs(t *testing.T) {
	e, err := NewEstimator(testRate)
	if err != nil {
		t.Fatal(err)
	}
	xInt := synth(4800, testRate, 1000, 0.01, 0.5, 0.01)
	xGen := synth(4800, testRate, 1000.37, 0.01, 0.5, 0.01)
	cases := []struct {
		name string
		run  func()
	}{
		{"integer-cycle Fit", func() { _, _ = e.Fit(xInt, 1000) }},
		{"general Fit", func() { _, _ = e.Fit(xGen, 1000.37) }},
		{"FitFreq", func() { _, _ = e.FitFreq(xGen, 1000) }},
		{"Goertzel", func() { _ = Goertzel(xGen, 1000, testRate) }},
	}
	for _, c := range cases {
		if a := testing.AllocsPerRun(20, c.run); a != 0 {
			t.Errorf("%s: %v allocations per run, want 0", c.name, a)
		}
	}
}

// FuzzFit feeds arbitrary blocks and frequencies to Fit: it must never
// panic, and must either fail with a sentinel error or return finite
// phasors.
func FuzzFit(f *testing.F) {
	f.Add([]byte{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12}, 0.1)
	f.Add([]byte("a tone of sorts, more or less periodic, more or less"), 0.02)
	f.Add([]byte{255, 0, 255, 0, 255, 0, 255, 0, 255, 0, 255, 0}, 0.49)
	f.Add([]byte{}, 0.25)
	e := &Estimator{Rate: 1}
	f.Fuzz(func(t *testing.T, data []byte, freq float64) {
		x := make([]float64, len(data))
		for i, b := range data {
			x[i] = float64(int(b)-128) / 128
		}
		est, err := e.Fit(x, freq)
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
	})
}
