package multitone

import (
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// Tolerances of the analysis tests.
const (
	coefRelTol      = 1e-15 // cookbook coefficients vs the sox values
	noiselessGainDB = 0.001 // brief: H vs H(e^{jω}) without noise
	noiselessPhase  = 0.01  // degrees
	mcRatioTol      = 0.20  // reported uncertainty vs Monte-Carlo spread
	snrTolDB        = 1.0   // reported SNR vs the injected noise
	noisePowRelTol  = 0.05  // mean noise estimate vs 4σ²/Period
	thdRelTol       = 1e-9  // distortion indicator, noiseless single tone
)

func TestCookbookMatchesSox(t *testing.T) {
	// REFERENCES §7 [V]: sox `lowpass 1000` at 48 kHz is the cookbook LPF
	// with Q = 0.7071 (b0 = 3.9161266605473831e−3, …); the listed digits
	// match Q = 1/√2 exactly. This checks the test's own biquad before it
	// is used as the outside filter.
	q := rbj("lpf", 48000, 1000, 1/math.Sqrt2, 0).normalised()
	want := biquad{
		b: [3]float64{3.9161266605473831e-3, 7.8322533210947662e-3, 3.9161266605473831e-3},
		a: [3]float64{1, -1.8153410827045680, 0.83100558934675761},
	}
	for i := range 3 {
		if math.Abs(q.b[i]-want.b[i]) > coefRelTol*math.Abs(want.b[i])*4 || math.Abs(q.a[i]-want.a[i]) > coefRelTol*4 {
			t.Errorf("coefficient %d: b %.17g a %.17g, sox b %.17g a %.17g", i, q.b[i], q.a[i], want.b[i], want.a[i])
		}
	}
	// REFERENCES §7 [V]: |H(1 kHz)| = −3.0103 dB, −90°.
	g, ph := dbDiff(q.response(1000, 48000), 1)
	if math.Abs(g+3.0103) > 1e-4 || math.Abs(ph+90) > 1e-3 {
		t.Errorf("H(1 kHz) = %.5f dB, %.4f°; want −3.0103 dB, −90°", g, ph)
	}
}

// steadyState returns the reference and response of the last of k periods
// of m's stimulus, looped through a common path (a 10 Hz high-pass, as an
// interface's coupling capacitor, and a delay of d samples) and then, on
// the response side only, through dut.
func steadyState(m *Multitone, dut biquad, d, k int) (ref, resp []float64) {
	common := delay(rbj("hpf", m.Rate(), 10, 0.7071, 0).filter(loop(m.Period(), k)), d)
	out := dut.filter(common)
	n := m.Len()
	return common[(k-1)*n:], out[(k-1)*n:]
}

func TestAnalyzeBiquadNoiseless(t *testing.T) {
	m, err := Design(Options{Rate: 48000, Period: 8192, From: 20, To: 20000, PerDecade: 12, LevelDBFS: -10, CapDBFS: -6, Reduction: ReduceLp, Iterations: 5})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		dut  biquad
	}{
		// Filters from the W3C Audio EQ Cookbook (REFERENCES §7 [S]),
		// compared with their digital response H(e^{jω}).
		{"LPF 1 kHz Q 0.7071", rbj("lpf", 48000, 1000, 0.7071, 0)},
		{"HPF 200 Hz Q 2", rbj("hpf", 48000, 200, 2, 0)},
		{"BPF 1 kHz Q 5", rbj("bpf", 48000, 1000, 5, 0)},
		{"notch 3 kHz Q 4", rbj("notch", 48000, 3000, 4, 0)},
		{"APF 500 Hz Q 1", rbj("apf", 48000, 500, 1, 0)},
		{"peaking 2 kHz Q 1.4 +9 dB", rbj("peak", 48000, 2000, 1.4, 9)},
	}
	an := NewAnalyzer(m)
	var f Frame
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ref, resp := steadyState(m, c.dut, 37, 8)
			if err := an.AnalyzeInto(&f, ref, resp); err != nil {
				t.Fatal(err)
			}
			for _, r := range f.Tones {
				want := c.dut.response(r.Freq, 48000)
				g, ph := dbDiff(r.H, want)
				if math.Abs(g) > noiselessGainDB || math.Abs(ph) > noiselessPhase {
					t.Errorf("%.2f Hz: H off the cookbook response by %.2g dB, %.2g°", r.Freq, g, ph)
				}
			}
		})
	}
}

func TestAnalyzeShiftInvariance(t *testing.T) {
	// A period taken from any sample of the loop gives the same H: a shift
	// multiplies Ref and Resp by the same e^{jωd} (DFT shift theorem).
	m, err := Design(Options{Rate: 48000, Period: 4096, From: 30, To: 20000, LevelDBFS: -10, CapDBFS: -10})
	if err != nil {
		t.Fatal(err)
	}
	dut := rbj("peak", 48000, 1500, 2, -8)
	n := m.Len()
	full := loop(m.Period(), 10)
	common := rbj("hpf", 48000, 10, 0.7071, 0).filter(full)
	out := dut.filter(common)
	an := NewAnalyzer(m)
	avg := NewAverager(m)
	for _, off := range []int{0, 1, 1000, 3333, n - 1} {
		s := 8*n + off - n
		f, err := an.Analyze(common[s:s+n], out[s:s+n])
		if err != nil {
			t.Fatal(err)
		}
		avg.Add(&f)
		for _, r := range f.Tones {
			if g, ph := dbDiff(r.H, dut.response(r.Freq, 48000)); math.Abs(g) > noiselessGainDB || math.Abs(ph) > noiselessPhase {
				t.Errorf("offset %d, %.1f Hz: off by %.2g dB, %.2g°", off, r.Freq, g, ph)
			}
		}
	}
	for _, p := range avg.Trace().Points {
		if g, ph := dbDiff(p.H, dut.response(p.Freq, 48000)); math.Abs(g) > noiselessGainDB || math.Abs(ph) > noiselessPhase {
			t.Errorf("averaged over shifted periods, %.1f Hz: off by %.2g dB, %.2g°", p.Freq, g, ph)
		}
	}
}

// mcSetup is the noisy measurement of the Monte-Carlo tests: a peaking
// filter (gain between 0 and +6 dB, so every tone has a useful SNR) and
// white Gaussian noise on both inputs.
type mcSetup struct {
	m                  *Multitone
	dut                biquad
	ref0, resp0        []float64
	sigmaRef, sigmaOut float64
}

func newMC(t testing.TB) mcSetup {
	m, err := Design(Options{Rate: 48000, Period: 4096, From: 40, To: 20000, PerDecade: 10, LevelDBFS: -10, CapDBFS: -10})
	if err != nil {
		t.Fatal(err)
	}
	dut := rbj("peak", 48000, 1000, 1, 6)
	ref0, resp0 := steadyState(m, dut, 5, 6)
	return mcSetup{m: m, dut: dut, ref0: ref0, resp0: resp0, sigmaRef: 0.004, sigmaOut: 0.01}
}

func TestAnalyzeUncertaintyMonteCarlo(t *testing.T) {
	s := newMC(t)
	trials := 300
	if testing.Short() {
		trials = 150
	}
	k := s.m.NumTones()
	rng := rand.New(rand.NewPCG(1, 2))
	an := NewAnalyzer(s.m)
	var f Frame
	var ref, resp []float64
	sumG, sumG2, sumP, sumP2 := make([]float64, k), make([]float64, k), make([]float64, k), make([]float64, k)
	msGU, msPU, sumSNR := make([]float64, k), make([]float64, k), make([]float64, k)
	noiseRef, noiseOut := 0.0, 0.0
	for range trials {
		ref = addNoise(ref, s.ref0, s.sigmaRef, rng)
		resp = addNoise(resp, s.resp0, s.sigmaOut, rng)
		if err := an.AnalyzeInto(&f, ref, resp); err != nil {
			t.Fatal(err)
		}
		for i, r := range f.Tones {
			g, ph := dbDiff(r.H, s.dut.response(r.Freq, 48000))
			sumG[i] += g
			sumG2[i] += g * g
			sumP[i] += ph
			sumP2[i] += ph * ph
			msGU[i] += r.GainU * r.GainU
			msPU[i] += r.PhaseU * r.PhaseU
			sumSNR[i] += r.SNR
			noiseRef += r.RefNoise
			noiseOut += r.RespNoise
		}
	}
	nt := float64(trials)
	std := func(s, s2 float64) float64 { return math.Sqrt((s2 - s*s/nt) / (nt - 1)) }
	n := float64(s.m.Len())
	// White noise of variance σ² puts 4σ²/n into each bin of the
	// amplitude spectrum 2X/n (Parseval; common practice [CP]).
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"reference", noiseRef / nt / float64(k), 4 * s.sigmaRef * s.sigmaRef / n},
		{"response", noiseOut / nt / float64(k), 4 * s.sigmaOut * s.sigmaOut / n},
	} {
		if math.Abs(c.got/c.want-1) > noisePowRelTol {
			t.Errorf("%s noise estimate %.4g, want 4σ²/N = %.4g", c.name, c.got, c.want)
		}
	}
	tones := s.m.Tones()
	for i := range k {
		// The brief's criterion: the reported uncertainty matches the
		// Monte-Carlo spread within ±20%.
		gs, ps := std(sumG[i], sumG2[i]), std(sumP[i], sumP2[i])
		gu, pu := math.Sqrt(msGU[i]/nt), math.Sqrt(msPU[i]/nt)
		if math.Abs(gu/gs-1) > mcRatioTol || math.Abs(pu/ps-1) > mcRatioTol {
			t.Errorf("%.1f Hz: reported %.4f dB / %.4f°, Monte-Carlo %.4f dB / %.4f°", tones[i].Freq, gu, pu, gs, ps)
		}
		// SNR against the injected noise: tone power over 4σ²/n.
		a := tones[i].Amplitude
		hx := s.dut.response(tones[i].Freq, 48000)
		wantSNR := 10 * math.Log10(min(
			a*a/(4*s.sigmaRef*s.sigmaRef/n),
			a*a*cmplx.Abs(hx)*cmplx.Abs(hx)/(4*s.sigmaOut*s.sigmaOut/n)))
		if got := sumSNR[i] / nt; math.Abs(got-wantSNR) > snrTolDB {
			t.Errorf("%.1f Hz: mean SNR %.2f dB, injected noise gives %.2f dB", tones[i].Freq, got, wantSNR)
		}
	}
}

func TestDistortionIndicator(t *testing.T) {
	// One tone through y = x + a2·x² + a3·x³. From cos²θ = (1+cos2θ)/2 and
	// cos³θ = (3cosθ + cos3θ)/4 (trigonometric power reduction, [CP]):
	// fundamental A + 3a3A³/4, 2nd harmonic a2A²/2, 3rd a3A³/4.
	m, err := Design(Options{Rate: 48000, Period: 4800, From: 985, To: 995, LevelDBFS: -6, CapDBFS: -6})
	if err != nil {
		t.Fatal(err)
	}
	if m.NumTones() != 1 {
		t.Fatalf("%d tones, want 1", m.NumTones())
	}
	const a2, a3 = 0.02, 0.05
	x := m.Period()
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = v + a2*v*v + a3*v*v*v
	}
	f, err := NewAnalyzer(m).Analyze(x, y)
	if err != nil {
		t.Fatal(err)
	}
	A := m.Tones()[0].Amplitude
	h2, h3, h1 := a2*A*A/2, a3*A*A*A/4, A+3*a3*A*A*A/4
	want := 100 * math.Hypot(h2, h3) / h1
	if got := f.Tones[0].Distortion; math.Abs(got/want-1) > thdRelTol {
		t.Errorf("distortion indicator %.12f %%, want %.12f %%", got, want)
	}
	if g := cmplx.Abs(f.Tones[0].H); math.Abs(g-h1/A) > 1e-12 {
		t.Errorf("|H| = %.15f, want %.15f", g, h1/A)
	}
}

func TestAnalyzeErrors(t *testing.T) {
	m, err := Design(Options{Rate: 48000, Period: 1024, From: 100, To: 10000, LevelDBFS: -10, CapDBFS: -10})
	if err != nil {
		t.Fatal(err)
	}
	an := NewAnalyzer(m)
	p := m.Period()
	nan := append([]float64(nil), p...)
	nan[7] = math.NaN()
	inf := append([]float64(nil), p...)
	inf[0] = math.Inf(1)
	zero := make([]float64, len(p))
	cases := []struct {
		name      string
		ref, resp []float64
		want      error
	}{
		{"clean", p, p, nil},
		{"NaN response", p, nan, ErrNotFinite},
		{"Inf reference", inf, p, ErrNotFinite},
		{"dead reference", zero, p, ErrNoReference},
		{"dead response", p, zero, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f, err := an.Analyze(c.ref, c.resp)
			if !errors.Is(err, c.want) {
				t.Fatalf("error %v, want %v", err, c.want)
			}
			if c.want == ErrNoReference {
				if !cmplx.IsNaN(f.Tones[0].H) {
					t.Errorf("H = %v with no reference, want NaN", f.Tones[0].H)
				}
				avg := NewAverager(m)
				avg.Add(&f)
				if n := len(avg.Trace().Points); n != 0 {
					t.Errorf("averager kept %d points from a frame without reference", n)
				}
			}
		})
	}
	for _, c := range []struct {
		name      string
		ref, resp []float64
	}{
		{"short reference", p[:10], p},
		{"long response", p, append(p, 0)},
	} {
		t.Run(c.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Error("no panic on a wrong length")
				}
			}()
			an.Analyze(c.ref, c.resp)
		})
	}
}

func TestAnalyzeIntoAllocs(t *testing.T) {
	s := newMC(t)
	an := NewAnalyzer(s.m)
	avg := NewAverager(s.m)
	var f Frame
	if err := an.AnalyzeInto(&f, s.ref0, s.resp0); err != nil {
		t.Fatal(err)
	}
	// Common practice [CP] for real-time paths: nothing allocated per
	// period once dst has its capacity.
	if n := testing.AllocsPerRun(20, func() {
		if err := an.AnalyzeInto(&f, s.ref0, s.resp0); err != nil {
			t.Fatal(err)
		}
		avg.Add(&f)
	}); n != 0 {
		t.Errorf("AnalyzeInto + Add allocate %v times per period, want 0", n)
	}
}

// TestSetReference: replacing a dead reference by the known stimulus
// gives H = Resp/ref and uncertainties from the response's noise alone,
// by the same first-order formula AnalyzeInto uses (see ToneResult).
func TestSetReference(t *testing.T) {
	r := ToneResult{Resp: complex(0.03, -0.04), RespNoise: 1e-8}
	r.SetReference(0, 0)
	if !cmplx.IsNaN(r.H) || !math.IsNaN(r.GainU) {
		t.Errorf("zero reference: H %v, GainU %v; want NaN", r.H, r.GainU)
	}
	r.SetReference(complex(0.1, 0), 0)
	if cmplx.Abs(r.H-complex(0.3, -0.4)) > 1e-15 {
		t.Errorf("H = %v, want (0.3-0.4i)", r.H)
	}
	sigma := math.Sqrt(1e-8 / abs2(r.Resp) / 2) // |Resp|² = 0.0025
	if math.Abs(r.GainU-20/math.Ln10*sigma) > 1e-15 || math.Abs(r.PhaseU-180/math.Pi*sigma) > 1e-12 {
		t.Errorf("GainU %g, PhaseU %g; want %g, %g", r.GainU, r.PhaseU, 20/math.Ln10*sigma, 180/math.Pi*sigma)
	}
	if want := 10 * math.Log10(0.0025/1e-8); math.Abs(r.SNR-want) > 1e-9 {
		t.Errorf("SNR %g dB, want the response's %g dB", r.SNR, want)
	}
}
