package stimulus

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// TestSweepConstants checks L and the harmonic advances L·ln N against
// REFERENCES §4 [V] (Farina 2000, computed with numpy): f1 = 20 Hz,
// f2 = 20 kHz, T = 10 s.
func TestSweepConstants(t *testing.T) {
	const (
		lTol  = 5e-8 // s, the table's last digit
		dtTol = 5e-6 // s
	)
	s := LogSweep{Rate: 48000, F1: 20, F2: 20000, Seconds: 10}
	if l := s.L(); math.Abs(l-1.4476483) > lTol {
		t.Errorf("L = %.8f s, want 1.4476483 s", l)
	}
	want := map[int]float64{1: 0, 2: 1.00343, 3: 1.59040, 4: 2.00687, 5: 2.32990}
	for n, w := range want {
		if got := s.HarmonicAdvance(n); math.Abs(got-w) > dtTol {
			t.Errorf("Δt%d = %.6f s, want %.5f s", n, got, w)
		}
	}
	if !math.IsNaN(s.HarmonicAdvance(0)) {
		t.Errorf("HarmonicAdvance(0) should be NaN")
	}
	if f := s.InstantFreq(10); math.Abs(f-20000) > 1e-9*20000 {
		t.Errorf("frequency at T = %g Hz, want f2 = 20000 Hz", f)
	}
}

// TestSweepFrequencyLaw measures the mean frequency of the rendered sweep
// between interpolated upward zero crossings (at least ten periods and
// 10 ms at a time, so the crossing-time error of linear interpolation
// stays small) and compares it with Farina's law f(t) = f1·e^{t/L}
// (REFERENCES §4) integrated over the same interval.
func TestSweepFrequencyLaw(t *testing.T) {
	const relTol = 1e-3 // relative frequency error
	s := LogSweep{Rate: 48000, F1: 20, F2: 20000, Seconds: 2}
	x, err := s.Render(nil, -6, 0)
	if err != nil {
		t.Fatal(err)
	}
	var ups []float64 // times of upward zero crossings, s
	for i := 1; i < len(x); i++ {
		if x[i-1] < 0 && x[i] >= 0 {
			frac := -x[i-1] / (x[i] - x[i-1])
			ups = append(ups, (float64(i-1)+frac)/s.Rate)
		}
	}
	l := s.L()
	checked, lastEnd := 0, 0.0
	for i := 0; i+1 < len(ups); i += 97 {
		m := max(10, int(math.Ceil(0.01/(ups[i+1]-ups[i]))))
		if i+m >= len(ups) {
			break
		}
		t0, t1 := ups[i], ups[i+m]
		got := float64(m) / (t1 - t0)
		// The law integrated over [t0, t1] gives the mean frequency.
		want := s.F1 * l * (math.Exp(t1/l) - math.Exp(t0/l)) / (t1 - t0)
		if math.Abs(got/want-1) > relTol {
			t.Errorf("%.4f–%.4f s: measured %.2f Hz, law %.2f Hz", t0, t1, got, want)
		}
		checked++
		lastEnd = t1
	}
	// The checks cover the sweep from its first cycles to its last 2 %.
	if checked < 50 || lastEnd < 0.98*s.Seconds {
		t.Errorf("only %d frequency checks, up to %.3f s", checked, lastEnd)
	}
}

// convolve returns the linear convolution of x and h via the gonum FFT.
func convolve(x, h []float64) []float64 {
	n := 1
	for n < len(x)+len(h) {
		n *= 2
	}
	fft := fourier.NewFFT(n)
	xp := make([]float64, n)
	hp := make([]float64, n)
	copy(xp, x)
	copy(hp, h)
	X := fft.Coefficients(nil, xp)
	H := fft.Coefficients(nil, hp)
	for i := range X {
		X[i] *= H[i]
	}
	y := fft.Sequence(nil, X)
	for i := range y {
		y[i] /= float64(n) // gonum's inverse is unnormalised
	}
	return y[:len(x)+len(h)-1]
}

// TestSweepInverse checks Farina's inverse filter (REFERENCES §4 [S]):
// the sweep convolved with it has a flat magnitude response, 0 dB by our
// normalisation, inside the swept band, and is a pulse at lag N−1.
func TestSweepInverse(t *testing.T) {
	const flatTolDB = 0.1
	s := LogSweep{Rate: 48000, F1: 20, F2: 20000, Seconds: 1, FadeSeconds: 0.005}
	x, err := s.Render(nil, -12, -6)
	if err != nil {
		t.Fatal(err)
	}
	inv, err := s.Inverse(nil, -12)
	if err != nil {
		t.Fatal(err)
	}
	y := convolve(x, inv)
	best := 0
	for i := range y {
		if math.Abs(y[i]) > math.Abs(y[best]) {
			best = i
		}
	}
	if best != len(x)-1 {
		t.Errorf("deconvolved pulse at lag %d, want %d", best, len(x)-1)
	}
	// Spectrum of the result, by the DTFT at frequencies well inside the
	// band (away from the fades and the band-edge ripple).
	for _, f := range []float64{100, 200, 500, 1000, 2000, 5000, 10000, 15000} {
		g := 20 * math.Log10(cmplx.Abs(dtft(y, 2*math.Pi*f/s.Rate)))
		if math.Abs(g) > flatTolDB {
			t.Errorf("sweep ⊛ inverse at %g Hz: %.3f dB, want 0 ± %g", f, g, flatTolDB)
		}
	}
	// Outside the band there is almost nothing.
	if g := 20 * math.Log10(cmplx.Abs(dtft(y, 2*math.Pi*23000/s.Rate))); g > -20 {
		t.Errorf("at 23 kHz, above the sweep: %.1f dB", g)
	}
}

// TestSweepHarmonicSeparation passes a sweep through a memoryless
// nonlinearity and checks that after deconvolution the 2nd and 3rd
// harmonic responses appear Δt2 = 1.00343 s and Δt3 = 1.59040 s before the
// linear one (REFERENCES §4 [V]). Those values belong to L = 1.4476483 s
// (20 Hz–20 kHz in 10 s); the advance depends on L alone, so to keep the
// test short the sweep covers 200 Hz–2 kHz in T = L·ln 10 = 3.333 s,
// which has the same L.
func TestSweepHarmonicSeparation(t *testing.T) {
	const posTol = 0.5e-3 // s; the harmonic pulses are band-limited and phase-rotated
	s := LogSweep{Rate: 48000, F1: 200, F2: 2000, Seconds: 1.4476483 * math.Ln10, FadeSeconds: 0.01}
	x, _ := s.Render(nil, -6, 0)
	inv, _ := s.Inverse(nil, -6)
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = v + 0.5*v*v + 0.5*v*v*v
	}
	h := convolve(y, inv)
	lin := len(x) - 1
	for n, dt := range map[int]float64{2: 1.00343, 3: 1.59040} {
		want := float64(lin) - dt*s.Rate
		lo, hi := int(want-0.1*s.Rate), int(want+0.1*s.Rate)
		best := lo
		for i := lo; i < hi; i++ {
			if math.Abs(h[i]) > math.Abs(h[best]) {
				best = i
			}
		}
		if d := (float64(best) - want) / s.Rate; math.Abs(d) > posTol {
			t.Errorf("harmonic %d pulse %.2f ms from where Δt%d puts it", n, 1000*d, n)
		}
	}
}

func TestSweepErrors(t *testing.T) {
	ok := LogSweep{Rate: 48000, F1: 20, F2: 20000, Seconds: 1, FadeSeconds: 0.01}
	cases := []struct {
		name string
		edit func(*LogSweep)
	}{
		{"zero rate", func(s *LogSweep) { s.Rate = 0 }},
		{"zero start", func(s *LogSweep) { s.F1 = 0 }},
		{"reversed", func(s *LogSweep) { s.F1, s.F2 = 2000, 200 }},
		{"above Nyquist", func(s *LogSweep) { s.F2 = 30000 }},
		{"zero duration", func(s *LogSweep) { s.Seconds = 0 }},
		{"NaN duration", func(s *LogSweep) { s.Seconds = math.NaN() }},
		{"one sample", func(s *LogSweep) { s.Seconds = 1 / 48000.0; s.FadeSeconds = 0 }},
		{"negative fade", func(s *LogSweep) { s.FadeSeconds = -1 }},
		{"fade too long", func(s *LogSweep) { s.FadeSeconds = 0.6 }},
		{"too long", func(s *LogSweep) { s.Seconds = 1e6 }},
	}
	if err := ok.Validate(); err != nil {
		t.Fatal(err)
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := ok
			c.edit(&s)
			if _, err := s.Render(nil, -20, -10); err == nil {
				t.Errorf("Render: no error")
			}
			if _, err := s.Inverse(nil, -20); err == nil {
				t.Errorf("Inverse: no error")
			}
		})
	}
}

func ExampleLogSweep() {
	s := LogSweep{Rate: 48000, F1: 20, F2: 20000, Seconds: 10, FadeSeconds: 0.05}
	fmt.Printf("L = %.7f s\n", s.L())
	for n := 2; n <= 5; n++ {
		fmt.Printf("harmonic %d arrives %.5f s early\n", n, s.HarmonicAdvance(n))
	}
	// Output:
	// L = 1.4476483 s
	// harmonic 2 arrives 1.00343 s early
	// harmonic 3 arrives 1.59040 s early
	// harmonic 4 arrives 2.00687 s early
	// harmonic 5 arrives 2.32990 s early
}
