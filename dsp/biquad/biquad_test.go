package biquad

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

const (
	// coefTol is the absolute tolerance on coefficients against sox's
	// (REFERENCES.md §7 [V]: sox equals the Cookbook to 4e−16).
	coefTol = 1e-15
	// gainTol (dB) and phaseTol (degrees) are for the §7 check values,
	// which are given to 4 decimals in dB.
	gainTol  = 1e-4
	phaseTol = 1e-9
	// exactDBTol is for gains the Cookbook's formulas give exactly.
	exactDBTol = 1e-10
	// dftTol is for the impulse response's DFT against Response.
	dftTol = 1e-9
)

func dB(h complex128) float64  { return 20 * math.Log10(cmplx.Abs(h)) }
func deg(h complex128) float64 { return cmplx.Phase(h) * 180 / math.Pi }

// TestDesignMatchesSox checks the low-pass against sox `lowpass 1000` at
// 48 kHz (REFERENCES.md §7 [V]; the listed digits match Q = 1/√2).
func TestDesignMatchesSox(t *testing.T) {
	c := Design(LowPass, 1000, 1/math.Sqrt2, 0, 48000)
	got := []float64{c.B0, c.B1, c.B2, c.A1, c.A2}
	want := []float64{3.9161266605473831e-3, 7.8322533210947662e-3, 3.9161266605473831e-3, -1.8153410827045680, 0.83100558934675761}
	for i := range want {
		if math.Abs(got[i]-want[i]) > coefTol {
			t.Errorf("coefficient %d = %.17g, sox %.17g (REFERENCES.md §7)", i, got[i], want[i])
		}
	}
	// REFERENCES.md §7 [V]: |H(1 kHz)| = −3.0103 dB, −90°.
	h := c.Response(1000, 48000)
	if math.Abs(dB(h)+3.0103) > gainTol || math.Abs(deg(h)+90) > phaseTol {
		t.Errorf("H(1 kHz) = %.5f dB, %.9f°; want −3.0103 dB, −90° (REFERENCES.md §7)", dB(h), deg(h))
	}
}

// TestCookbookLevels checks levels the Cookbook states for its filters
// (W3C Audio EQ Cookbook [S]): the peaking filter reaches gainDB at f0,
// the band-pass peaks at 0 dB, the notch has its zero at f0, the all-pass
// has unit gain and −180° at f0, the shelves reach half their gain at f0
// and their gain at DC (low) or Nyquist (high).
func TestCookbookLevels(t *testing.T) {
	const fs = 48000
	cases := []struct {
		name    string
		c       Coeffs
		f, want float64 // frequency in Hz, gain in dB (math.Inf(-1): a zero)
	}{
		{"peaking +6 dB Q 1 at f0", Design(Peaking, 2800, 1, 6, fs), 2800, 6},
		{"peaking −8 dB Q 1.5 at f0", Design(Peaking, 3000, 1.5, -8, fs), 3000, -8},
		{"peaking +12 dB Q 4 at f0", Design(Peaking, 100, 4, 12, fs), 100, 12},
		{"band-pass Q 5 at f0", Design(BandPass, 1000, 5, 0, fs), 1000, 0},
		{"all-pass at f0", Design(AllPass, 1000, 0.7, 0, fs), 1000, 0},
		{"all-pass at 5 kHz", Design(AllPass, 1000, 0.7, 0, fs), 5000, 0},
		{"low shelf +6 dB at f0", Design(LowShelf, 200, 1/math.Sqrt2, 6, fs), 200, 3},
		{"low shelf +6 dB at DC", Design(LowShelf, 200, 1/math.Sqrt2, 6, fs), 0, 6},
		{"low shelf +6 dB at fs/2", Design(LowShelf, 200, 1/math.Sqrt2, 6, fs), fs / 2, 0},
		{"high shelf −6 dB at f0", Design(HighShelf, 4000, 1/math.Sqrt2, -6, fs), 4000, -3},
		{"high shelf −6 dB at DC", Design(HighShelf, 4000, 1/math.Sqrt2, -6, fs), 0, 0},
		{"high shelf −6 dB at fs/2", Design(HighShelf, 4000, 1/math.Sqrt2, -6, fs), fs / 2, -6},
		{"high-pass at fs/2", Design(HighPass, 500, 1/math.Sqrt2, 0, fs), fs / 2, 0},
		{"low-pass at DC", Design(LowPass, 500, 1/math.Sqrt2, 0, fs), 0, 0},
	}
	for _, tc := range cases {
		if g := dB(tc.c.Response(tc.f, fs)); math.Abs(g-tc.want) > exactDBTol {
			t.Errorf("%s: %.12f dB, want %g dB (Audio EQ Cookbook)", tc.name, g, tc.want)
		}
	}
	if z := cmplx.Abs(Design(Notch, 1200, 3, 0, fs).Response(1200, fs)); z > 1e-12 {
		t.Errorf("notch at f0: |H| = %g, want 0 (Audio EQ Cookbook)", z)
	}
	if p := deg(Design(AllPass, 1000, 0.7, 0, fs).Response(1000, fs)); math.Abs(math.Abs(p)-180) > phaseTol {
		t.Errorf("all-pass at f0: %.9f°, want ±180° (Audio EQ Cookbook)", p)
	}
}

// TestImpulseResponseMatchesResponse runs an impulse through Process and
// compares its DFT (the definition of H(e^{jω}) as the transform of the
// impulse response) with Response, for every kind.
func TestImpulseResponseMatchesResponse(t *testing.T) {
	const fs, n = 48000, 1 << 15
	for k := LowPass; k <= HighShelf; k++ {
		t.Run(k.String(), func(t *testing.T) {
			c := Design(k, 1000, 0.9, -5, fs)
			x := make([]float64, n)
			x[0] = 1
			f := Filter{Coeffs: c}
			f.Process(x, x) // in place
			for _, fr := range []float64{0, 50, 999, 1000, 3700, 15000, fs / 2} {
				var h complex128
				for i, v := range x {
					h += complex(v, 0) * cmplx.Rect(1, -2*math.Pi*fr*float64(i)/fs)
				}
				if d := cmplx.Abs(h - c.Response(fr, fs)); d > dftTol {
					t.Errorf("%g Hz: DFT of impulse response %v, Response %v (|Δ| %g)", fr, h, c.Response(fr, fs), d)
				}
			}
		})
	}
}

// TestProcessStreams checks that filtering in blocks of random lengths,
// and sample by sample with Step, equals one pass, and that Reset
// restarts the filter.
func TestProcessStreams(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, 5000)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	c := Design(Peaking, 700, 2, 9, 44100)
	whole := make([]float64, len(x))
	f := Filter{Coeffs: c}
	f.Process(whole, x)

	f.Reset()
	blocks := make([]float64, len(x))
	for i := 0; i < len(x); {
		n := min(len(x)-i, rng.IntN(300))
		f.Process(blocks[i:i+n], x[i:i+n])
		i += n
	}
	var g Filter
	g.Coeffs = c
	for i := range x {
		if y := g.Step(x[i]); y != whole[i] || blocks[i] != whole[i] {
			t.Fatalf("sample %d: one pass %g, blocks %g, Step %g", i, whole[i], blocks[i], y)
		}
	}
}

func TestProcessLengthMismatchPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Process with unequal lengths did not panic")
		}
	}()
	var f Filter
	f.Process(make([]float64, 3), make([]float64, 4))
}

func TestDesignUnknownKindPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Design(Kind(99)) did not panic")
		}
	}()
	Design(Kind(99), 1000, 1, 0, 48000)
}

func TestKindString(t *testing.T) {
	cases := map[Kind]string{LowPass: "LowPass", BandPass: "BandPass", HighShelf: "HighShelf", Kind(-1): "Kind(-1)", Kind(8): "Kind(8)"}
	for k, want := range cases {
		if got := k.String(); got != want {
			t.Errorf("String(%d) = %q, want %q", int(k), got, want)
		}
	}
}

// Example designs sox's `lowpass 1000` at 48 kHz (REFERENCES.md §7) and
// prints its response at the corner.
func Example() {
	c := Design(LowPass, 1000, 1/math.Sqrt2, 0, 48000)
	h := c.Response(1000, 48000)
	fmt.Printf("b0 %.6e a1 %.6f\n", c.B0, c.A1)
	fmt.Printf("%.4f dB %.1f°\n", 20*math.Log10(cmplx.Abs(h)), cmplx.Phase(h)*180/math.Pi)
	// Output:
	// b0 3.916127e-03 a1 -1.815341
	// -3.0103 dB -90.0°
}

func BenchmarkProcess(b *testing.B) {
	for _, n := range []int{256, 4096, 65536} {
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			x := make([]float64, n)
			for i := range x {
				x[i] = math.Sin(float64(i))
			}
			y := make([]float64, n)
			f := Filter{Coeffs: Design(LowPass, 1000, 1/math.Sqrt2, 0, 48000)}
			b.ReportAllocs()
			for b.Loop() {
				f.Process(y, x)
			}
			b.ReportMetric(float64(n)/48000/(float64(b.Elapsed().Seconds())/float64(b.N)), "x-real-time")
		})
	}
}
