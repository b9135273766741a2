package stimulus

import (
	"math"
	"math/cmplx"
	"slices"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Spectrum-shape tolerances.
const (
	// bandTolDB is the largest deviation of a 1/10-decade band of the
	// averaged spectrum from the ideal shape (the brief's ±1 dB).
	bandTolDB = 1.0
	// slopeTolDB is the tolerance on the fitted slope, dB/decade.
	slopeTolDB = 0.3
	noiseRate  = 48000.0
	noiseLen   = 1 << 20 // 21.8 s at 48 kHz
	welchN     = 8192
)

// welchPSD returns Welch's averaged periodogram of x (Welch 1967,
// REFERENCES §2): Hann-windowed segments of n samples, 50 % overlap,
// one-sided, in units of x² per Hz (scale 2/(fs·Σw²)), computed with the
// gonum FFT.
func welchPSD(x []float64, n int, fs float64) []float64 {
	fft := fourier.NewFFT(n)
	w := make([]float64, n)
	u := 0.0
	for i := range w {
		w[i] = 0.5 * (1 - math.Cos(2*math.Pi*float64(i)/float64(n))) // periodic Hann
		u += w[i] * w[i]
	}
	psd := make([]float64, n/2+1)
	seg := make([]float64, n)
	var coef []complex128
	k := 0
	for start := 0; start+n <= len(x); start += n / 2 {
		for i := range seg {
			seg[i] = x[start+i] * w[i]
		}
		coef = fft.Coefficients(coef, seg)
		for i, c := range coef {
			a := cmplx.Abs(c)
			psd[i] += a * a
		}
		k++
	}
	for i := range psd {
		psd[i] *= 2 / (fs * u * float64(k))
	}
	return psd
}

// bandLevels averages the PSD over 1/10-decade bands between lo and hi
// (the last band ends at or below hi) and returns each band's geometric
// centre and level in dB.
func bandLevels(psd []float64, n int, fs, lo, hi float64) (centres, levels []float64) {
	df := fs / float64(n)
	for d := math.Log10(lo); d+0.1 <= math.Log10(hi)+1e-9; d += 0.1 {
		f1, f2 := math.Pow(10, d), math.Pow(10, d+0.1)
		sum, cnt := 0.0, 0
		for i := int(math.Ceil(f1 / df)); float64(i)*df < f2 && i < len(psd); i++ {
			sum += psd[i]
			cnt++
		}
		if cnt == 0 {
			continue
		}
		centres = append(centres, math.Sqrt(f1*f2))
		levels = append(levels, 10*math.Log10(sum/float64(cnt)))
	}
	return centres, levels
}

// fitLine returns the least-squares slope (per decade) and intercept of
// levels over log10 f.
func fitLine(f, y []float64) (slope, icept float64) {
	var su, sy, suu, suy float64
	for i := range f {
		u := math.Log10(f[i])
		su += u
		sy += y[i]
		suu += u * u
		suy += u * y[i]
	}
	n := float64(len(f))
	slope = (n*suy - su*sy) / (n*suu - su*su)
	return slope, (sy - slope*su) / n
}

// checkShape asserts the band levels follow a line of the given slope
// (dB/decade) within bandTolDB, and that the fitted slope is within
// slopeTolDB of it.
func checkShape(t *testing.T, name string, f, y []float64, slope float64) {
	t.Helper()
	got, _ := fitLine(f, y)
	t.Logf("%s slope %.3f", name, got)
	if math.Abs(got-slope) > slopeTolDB {
		t.Errorf("%s: fitted slope %.3f dB/decade, want %.1f ± %.1f", name, got, slope, slopeTolDB)
	}
	// Best intercept for the ideal slope, then each band's deviation.
	mean := 0.0
	for i := range f {
		mean += y[i] - slope*math.Log10(f[i])
	}
	mean /= float64(len(f))
	for i := range f {
		d := y[i] - slope*math.Log10(f[i]) - mean
		if math.Abs(d) > bandTolDB {
			t.Errorf("%s: band at %.0f Hz is %.2f dB off a %.0f dB/decade line", name, f[i], d, slope)
		}
	}
}

// TestWhiteNoiseFlat checks white noise has a flat spectrum (slope 0
// dB/decade; common practice, the definition of white noise) within ±1 dB
// per 1/10-decade band over 50 Hz–20 kHz, and a lag-1 autocorrelation
// within 4 standard errors (1/√N) of zero.
func TestWhiteNoiseFlat(t *testing.T) {
	x, err := Render(KindNoise, Options{Rate: noiseRate, Seconds: noiseLen / noiseRate, LevelDBFS: -10, CapDBFS: -6, Seed: 42})
	if err != nil {
		t.Fatal(err)
	}
	f, y := bandLevels(welchPSD(x, welchN, noiseRate), welchN, noiseRate, 50, 20000)
	checkShape(t, "white", f, y, 0)
	var r0, r1 float64
	for i := 1; i < len(x); i++ {
		r0 += x[i] * x[i]
		r1 += x[i] * x[i-1]
	}
	if r := r1 / r0; math.Abs(r) > 4/math.Sqrt(float64(len(x))) {
		t.Errorf("lag-1 autocorrelation %.5f", r)
	}
}

// TestPinkNoiseSlope checks the pink spectrum falls 10 dB/decade
// (−3 dB/octave, the definition of pink noise, common practice; Kellet's
// filter claims ±0.05 dB above 9.2 Hz at 44.1 kHz [M]) within ±1 dB per
// 1/10-decade band over 50 Hz–10 kHz, for the whole-file render and the
// stream, at 48 kHz and at 44.1 kHz.
func TestPinkNoiseSlope(t *testing.T) {
	for _, c := range []struct{ rate, n float64 }{{48000, noiseLen}, {44100, noiseLen / 2}} {
		rate := c.rate
		x, err := Render(KindPink, Options{Rate: rate, Seconds: c.n / rate, LevelDBFS: -10, CapDBFS: -6, Seed: 43})
		if err != nil {
			t.Fatal(err)
		}
		f, y := bandLevels(welchPSD(x, welchN, rate), welchN, rate, 50, 10000)
		checkShape(t, "pink render", f, y, -10)
	}
	p, err := NewPinkNoise(44, -10, -6)
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, noiseLen/2)
	p.Read(x)
	f, y := bandLevels(welchPSD(x, welchN, noiseRate), welchN, noiseRate, 50, 10000)
	checkShape(t, "pink stream", f, y, -10)
}

// TestNoiseStreamLevels checks the streamed noises against their stated
// scaling: white is truncated at ±4σ with 4σ at the level, so its peak
// never exceeds the level and its RMS is level − 12.04 dB (less 0.005 dB
// for the truncation, Gaussian tail [M]); pink has σ = level/5, so RMS is
// level − 13.98 dB, and almost never reaches the limiter.
func TestNoiseStreamLevels(t *testing.T) {
	const (
		rmsTolDB     = 0.1
		maxLimitRate = 2e-5 // limited samples per sample (Gaussian beyond 5σ: 5.7e−7)
	)
	amp := Amplitude(-10)
	buf := make([]float64, noiseLen/4)
	w, _ := NewWhiteNoise(5, -10, -10)
	w.Read(buf)
	rms := 20 * math.Log10(math.Sqrt(meanSquare(buf))/amp)
	if want := -20 * math.Log10(WhitePeakSigmas); math.Abs(rms-want) > rmsTolDB {
		t.Errorf("white RMS %.3f dB re level, want %.3f", rms, want)
	}
	if pk := peak(buf); pk > amp {
		t.Errorf("white peak %g above level %g", pk, amp)
	}
	p, _ := NewPinkNoise(5, -10, -10)
	p.Read(buf)
	rms = 20 * math.Log10(math.Sqrt(meanSquare(buf))/amp)
	if want := -20 * math.Log10(PinkPeakSigmas); math.Abs(rms-want) > rmsTolDB {
		t.Errorf("pink RMS %.3f dB re level, want %.3f", rms, want)
	}
	if r := float64(p.Limited()) / float64(len(buf)); r > maxLimitRate {
		t.Errorf("pink limited %d of %d samples", p.Limited(), len(buf))
	}
}

// TestNoiseDeterminism checks the same seed gives the same samples and a
// different seed different ones.
func TestNoiseDeterminism(t *testing.T) {
	for _, kind := range []string{KindNoise, KindPink} {
		o := Options{Rate: 48000, Seconds: 0.5, LevelDBFS: -20, CapDBFS: -10, Seed: 9, FadeSeconds: 0.01}
		a, _ := Render(kind, o)
		b, _ := Render(kind, o)
		o.Seed = 10
		c, _ := Render(kind, o)
		if !slices.Equal(a, b) || slices.Equal(a, c) {
			t.Errorf("%s: same seed equal %v, different seed equal %v", kind, slices.Equal(a, b), slices.Equal(a, c))
		}
		// Whole-file noise is scaled so its largest sample is the level.
		if pk := peak(a); math.Abs(pk-Amplitude(-20)) > exactTol {
			t.Errorf("%s: peak %.15g, want %.15g", kind, pk, Amplitude(-20))
		}
	}
	w1, _ := NewWhiteNoise(3, -20, -10)
	w2, _ := NewWhiteNoise(3, -20, -10)
	a, b := make([]float64, 1000), make([]float64, 1000)
	w1.Read(a[:300])
	w1.Read(a[300:])
	w2.Read(b)
	if !slices.Equal(a, b) {
		t.Errorf("white stream depends on read sizes")
	}
}

func TestNoiseReadAllocs(t *testing.T) {
	w, _ := NewWhiteNoise(1, -20, -10)
	p, _ := NewPinkNoise(1, -20, -10)
	buf := make([]float64, 512)
	if a := testing.AllocsPerRun(100, func() { w.Read(buf); p.Read(buf) }); a != 0 {
		t.Errorf("noise Read allocates %.1f times per call", a)
	}
}

// TestKelletPowerGain compares the closed-form output variance of the
// pink filter with the sum of its impulse response squared, computed by
// running the filter on a unit impulse.
func TestKelletPowerGain(t *testing.T) {
	var k kellet
	sum := 0.0
	for n := 0; n < 200000; n++ {
		in := 0.0
		if n == 0 {
			in = 1
		}
		h := k.next(in)
		sum += h * h
	}
	if g := kelletPowerGain(); math.Abs(g-sum) > 1e-9*sum {
		t.Errorf("closed form %.12g, impulse response %.12g", g, sum)
	}
}

func meanSquare(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v * v
	}
	return s / float64(len(x))
}

func peak(x []float64) float64 {
	p := 0.0
	for _, v := range x {
		p = math.Max(p, math.Abs(v))
	}
	return p
}
