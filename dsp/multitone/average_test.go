package multitone

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// Tolerances of the averaging tests.
const (
	pooledRatioTol = 0.20 // brief: reported vs Monte-Carlo spread, pooled over tones
	perToneMCTol   = 0.40 // same per tone (full run only: 100 trials behind each)
	sameTol        = 1e-12
)

func TestAveragerMonteCarlo(t *testing.T) {
	s := newMC(t)
	trials, frames := 100, 8
	if testing.Short() {
		trials = 50
	}
	k := s.m.NumTones()
	rng := rand.New(rand.NewPCG(3, 4))
	an := NewAnalyzer(s.m)
	avg := NewAverager(s.m)
	var f Frame
	var ref, resp []float64
	sumG, sumG2, sumP, sumP2 := make([]float64, k), make([]float64, k), make([]float64, k), make([]float64, k)
	msGU, msPU, sumSNR, sumFrameSNR := make([]float64, k), make([]float64, k), make([]float64, k), make([]float64, k)
	for range trials {
		avg.Reset()
		for range frames {
			ref = addNoise(ref, s.ref0, s.sigmaRef, rng)
			resp = addNoise(resp, s.resp0, s.sigmaOut, rng)
			if err := an.AnalyzeInto(&f, ref, resp); err != nil {
				t.Fatal(err)
			}
			avg.Add(&f)
			for i, r := range f.Tones {
				sumFrameSNR[i] += r.SNR / float64(frames)
			}
		}
		tr := avg.Trace()
		if len(tr.Points) != k || avg.Count() != frames {
			t.Fatalf("%d points from %d frames, want %d from %d", len(tr.Points), avg.Count(), k, frames)
		}
		for i, p := range tr.Points {
			g, ph := dbDiff(p.H, s.dut.response(p.Freq, 48000))
			sumG[i] += g
			sumG2[i] += g * g
			sumP[i] += ph
			sumP2[i] += ph * ph
			msGU[i] += p.GainU * p.GainU
			msPU[i] += p.PhaseU * p.PhaseU
			sumSNR[i] += p.SNR
			if !math.IsNaN(p.Coherence) {
				t.Fatalf("coherence %v, want NaN", p.Coherence)
			}
		}
	}
	nt := float64(trials)
	std := func(s, s2 float64) float64 { return math.Sqrt((s2 - s*s/nt) / (nt - 1)) }
	poolG, poolP := 0.0, 0.0
	for i := range k {
		rg := math.Sqrt(msGU[i]/nt) / std(sumG[i], sumG2[i])
		rp := math.Sqrt(msPU[i]/nt) / std(sumP[i], sumP2[i])
		poolG += rg / float64(k)
		poolP += rp / float64(k)
		if !testing.Short() && (math.Abs(rg-1) > perToneMCTol || math.Abs(rp-1) > perToneMCTol) {
			t.Errorf("tone %d: reported/Monte-Carlo spread %.3f (gain), %.3f (phase)", i, rg, rp)
		}
		// Averaging n periods of independent noise raises the SNR of the
		// averaged amplitudes by 10·log10(n) (common practice [CP]).
		if d := (sumSNR[i] - sumFrameSNR[i]) / nt; math.Abs(d-10*math.Log10(float64(frames))) > snrTolDB {
			t.Errorf("tone %d: averaging %d frames raised the SNR by %.2f dB", i, frames, d)
		}
	}
	// Standard error of the mean from the scatter of n = 8 periods
	// (common practice [CP]); the brief's ±20% against Monte-Carlo.
	if math.Abs(poolG-1) > pooledRatioTol || math.Abs(poolP-1) > pooledRatioTol {
		t.Errorf("reported/Monte-Carlo spread pooled over tones: gain %.3f, phase %.3f", poolG, poolP)
	}
	t.Logf("pooled reported/Monte-Carlo: gain %.3f, phase %.3f", poolG, poolP)
}

func TestAveragerSingleFrame(t *testing.T) {
	s := newMC(t)
	rng := rand.New(rand.NewPCG(5, 6))
	f, err := NewAnalyzer(s.m).Analyze(addNoise(nil, s.ref0, s.sigmaRef, rng), addNoise(nil, s.resp0, s.sigmaOut, rng))
	if err != nil {
		t.Fatal(err)
	}
	avg := NewAverager(s.m)
	avg.Add(&f)
	tr := avg.Trace()
	for i, p := range tr.Points {
		r := f.Tones[i]
		// One frame: the trace is that frame, with its noise-based
		// uncertainty (the per-frame estimate, as documented).
		if cmplx.Abs(p.H-r.H) > sameTol*cmplx.Abs(r.H) || math.Abs(p.GainU-r.GainU) > sameTol || math.Abs(p.PhaseU-r.PhaseU) > sameTol ||
			math.Abs(p.SNR-r.SNR) > 1e-9 || p.Freq != r.Freq {
			t.Errorf("point %d = %+v, frame tone %+v", i, p, r)
		}
	}
	for _, key := range []string{"method", "periods", "tones", "period_samples", "rate_hz"} {
		if _, ok := tr.MetaValue(key); !ok {
			t.Errorf("trace lacks metadata %q", key)
		}
	}
	if v, _ := tr.MetaValue("periods"); v != "1" {
		t.Errorf("periods = %q, want 1", v)
	}
	avg.Reset()
	if n := len(avg.Trace().Points); n != 0 || avg.Count() != 0 {
		t.Errorf("after Reset: %d points, count %d", n, avg.Count())
	}
}

func TestAveragerGainDriftShowsInGainOnly(t *testing.T) {
	// Frames whose response differs only by a real gain g_i: every H_i has
	// the same phase, so PhaseU must be 0, and GainU the standard error of
	// the mean of 20·log10 g_i to first order, s_g/(ḡ·√n)·20/ln10 with s_g
	// the sample standard deviation (common practice [CP]).
	m, err := Design(Options{Rate: 48000, Period: 2048, From: 100, To: 10000, LevelDBFS: -10, CapDBFS: -10})
	if err != nil {
		t.Fatal(err)
	}
	x := m.Period()
	gains := []float64{0.5, 0.5005, 0.4995, 0.5002, 0.4999, 0.5003}
	an := NewAnalyzer(m)
	avg := NewAverager(m)
	y := make([]float64, len(x))
	mean := 0.0
	for _, g := range gains {
		for i, v := range x {
			y[i] = g * v
		}
		f, err := an.Analyze(x, y)
		if err != nil {
			t.Fatal(err)
		}
		avg.Add(&f)
		mean += g / float64(len(gains))
	}
	ss := 0.0
	for _, g := range gains {
		ss += (g - mean) * (g - mean)
	}
	n := float64(len(gains))
	want := 20 / math.Ln10 * math.Sqrt(ss/(n-1)) / mean / math.Sqrt(n)
	for _, p := range avg.Trace().Points {
		if p.PhaseU > 1e-9 {
			t.Errorf("%.1f Hz: PhaseU %.3g° from a gain-only drift", p.Freq, p.PhaseU)
		}
		if math.Abs(p.GainU/want-1) > 1e-3 {
			t.Errorf("%.1f Hz: GainU %.6g dB, want %.6g", p.Freq, p.GainU, want)
		}
		if g := cmplx.Abs(p.H); math.Abs(g-mean) > 1e-12 {
			t.Errorf("%.1f Hz: |H| %.15f, want mean gain %.15f", p.Freq, g, mean)
		}
	}
}

func TestAveragerPanicsOnForeignFrame(t *testing.T) {
	a, _ := Design(Options{Rate: 48000, Period: 2048, From: 100, To: 10000, LevelDBFS: -10, CapDBFS: -10})
	b, _ := Design(Options{Rate: 48000, Period: 2048, From: 100, To: 1000, LevelDBFS: -10, CapDBFS: -10})
	f, _ := NewAnalyzer(b).Analyze(b.Period(), b.Period())
	defer func() {
		if recover() == nil {
			t.Error("Add accepted a frame of another multitone")
		}
	}()
	NewAverager(a).Add(&f)
}
