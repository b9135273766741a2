package plan

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"testing"
)

// relTol is the relative tolerance for frequencies computed by formula.
const relTol = 1e-12

func TestPerDecade(t *testing.T) {
	cases := []struct {
		name     string
		from, to float64
		n        int
		want     []float64
	}{
		// Exact decades are on every grid (10^(k/n) with k a multiple of n).
		{"decades", 10, 1000, 1, []float64{10, 100, 1000}},
		{"ends off grid", 20, 20000, 1, []float64{20, 100, 1000, 10000, 20000}},
		{"three per decade", 20, 20000, 3, []float64{20,
			math.Pow(10, 4.0/3), math.Pow(10, 5.0/3), 100,
			math.Pow(10, 7.0/3), math.Pow(10, 8.0/3), 1000,
			math.Pow(10, 10.0/3), math.Pow(10, 11.0/3), 10000, 20000}},
		{"inside one step", 110, 120, 10, []float64{110, 120}},
		{"sub-hertz", 0.1, 1, 2, []float64{0.1, math.Sqrt(0.1), 1}},
		// A grid point within 1e-9 of an end merges into the end.
		{"end within 1e-9 of grid", 100 * (1 + 1e-12), 1000 * (1 - 1e-12), 1, []float64{100 * (1 + 1e-12), 1000 * (1 - 1e-12)}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := PerDecade(c.from, c.to, c.n)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(c.want) {
				t.Fatalf("got %v, want %v", got, c.want)
			}
			for i := range got {
				if math.Abs(got[i]-c.want[i]) > relTol*c.want[i] {
					t.Errorf("point %d: got %.15g, want %.15g", i, got[i], c.want[i])
				}
			}
		})
	}
}

func TestPerDecadeExactDecadesAndSpacing(t *testing.T) {
	for _, n := range []int{1, 2, 3, 5, 7, 10, 12, 24, 48, 96} {
		got, err := PerDecade(1, 1e6, n)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) != 6*n+1 {
			t.Fatalf("n=%d: %d points, want %d", n, len(got), 6*n+1)
		}
		for i := 0; i < len(got); i += n {
			// Common practice: a log grid anchored at decades hits
			// 1, 10, 100 … exactly (bitwise), so plots line up with
			// decade gridlines.
			if want := math.Pow10(i / n); got[i] != want {
				t.Errorf("n=%d: point %d = %.17g, want exactly %g", n, i, got[i], want)
			}
		}
		step := math.Pow(10, 1/float64(n))
		for i := 1; i < len(got); i++ {
			if r := got[i] / got[i-1]; math.Abs(r-step) > 1e-12*step {
				t.Errorf("n=%d: ratio %d = %.15g, want 10^(1/n) = %.15g", n, i, r, step)
			}
		}
	}
}

func TestPerDecadeErrors(t *testing.T) {
	cases := []struct {
		name     string
		from, to float64
		n        int
	}{
		{"zero start", 0, 100, 3},
		{"negative start", -10, 100, 3},
		{"stop equals start", 100, 100, 3},
		{"stop below start", 1000, 100, 3},
		{"zero density", 10, 100, 0},
		{"negative density", 10, 100, -2},
		{"NaN start", math.NaN(), 100, 3},
		{"infinite stop", 10, math.Inf(1), 3},
		{"too many points", 1e-3, 1e9, 1 << 20},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := PerDecade(c.from, c.to, c.n)
			if err == nil {
				t.Fatalf("no error, got %d points", len(got))
			}
			if !errors.Is(err, ErrRange) {
				t.Errorf("error %q does not wrap ErrRange", err)
			}
			if got != nil {
				t.Errorf("points returned with an error")
			}
		})
	}
}

// isoThirdOctaveNominals is the nominal list of REFERENCES §9 (ISO
// 266:1997, R10 series [S]).
var isoThirdOctaveNominals = []float64{20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800,
	1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000, 20000}

func TestThirdOctave(t *testing.T) {
	got, err := ThirdOctave(20, 20000)
	if err != nil {
		t.Fatal(err)
	}
	var nom []float64
	for _, b := range got {
		nom = append(nom, b.Nominal)
	}
	// ISO 266:1997 nominal third-octave list, REFERENCES §9 [S].
	if !slices.Equal(nom, isoThirdOctaveNominals) {
		t.Fatalf("nominals %v\nwant %v", nom, isoThirdOctaveNominals)
	}
	for i, b := range got {
		// IEC 61260-1 base-10 exact midbands 1000·10^(x/10), REFERENCES §9
		// [M]; x = −17 is the 20 Hz band.
		x := i - 17
		want := 1000 * math.Pow(10, float64(x)/10)
		if b.Index != x || math.Abs(b.Center-want) > relTol*want {
			t.Errorf("band %d: index %d centre %.10g, want %d %.10g", i, b.Index, b.Center, x, want)
		}
		// Nominal and exact midbands agree within the rounding of the R10
		// series (ISO 3 preferred numbers, largest deviation about 1.3 %
		// [M]).
		if r := math.Abs(b.Nominal/b.Center - 1); r > 0.013 {
			t.Errorf("band %s: nominal %g is %.2f %% from exact %g", b.Label(), b.Nominal, 100*r, b.Center)
		}
		// Third-octave edges are 10^(±1/20) around the midband and
		// neighbouring bands share an edge [M: IEC 61260-1].
		if r := b.Upper / b.Lower; math.Abs(r-math.Pow(10, 0.1)) > 1e-12 {
			t.Errorf("band %s: edge ratio %.15g, want 10^0.1", b.Label(), r)
		}
		if i > 0 && math.Abs(got[i-1].Upper-b.Lower) > relTol*b.Lower {
			t.Errorf("band %s: lower edge %.12g differs from previous upper edge %.12g", b.Label(), b.Lower, got[i-1].Upper)
		}
	}
	// Spot checks of exact midbands, computed by hand from 1000·10^(x/10).
	spot := map[float64]float64{20: 19.952623149688797, 31.5: 31.622776601683793, 1000: 1000, 16000: 15848.931924611135}
	for _, b := range got {
		if w, ok := spot[b.Nominal]; ok && math.Abs(b.Center-w) > relTol*w {
			t.Errorf("band %s centre %.15g, want %.15g", b.Label(), b.Center, w)
		}
	}
}

func TestBandsBeyondAudio(t *testing.T) {
	cases := []struct {
		name     string
		octave   bool
		from, to float64
		want     []float64
		labels   []string
	}{
		// Decade scaling of the R10 series (ISO 266 [S]).
		{"below 20 Hz", false, 10, 16, []float64{10, 12.5, 16}, []string{"10", "12.5", "16"}},
		{"above 20 kHz", false, 20000, 40000, []float64{20000, 25000, 31500, 40000}, []string{"20k", "25k", "31.5k", "40k"}},
		{"sub-hertz", false, 0.3, 0.5, []float64{0.315, 0.4, 0.5}, []string{"0.315", "0.4", "0.5"}},
		// ISO 266 octave nominals 31.5 … 16k, REFERENCES §9 [S].
		{"octaves", true, 20, 20000, []float64{31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000},
			[]string{"31.5", "63", "125", "250", "500", "1k", "2k", "4k", "8k", "16k"}},
		{"single band", false, 1000, 1000, []float64{1000}, []string{"1k"}},
		{"no band", false, 1010, 1200, nil, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := ThirdOctave
			if c.octave {
				f = Octave
			}
			got, err := f(c.from, c.to)
			if err != nil {
				t.Fatal(err)
			}
			var nom []float64
			var lab []string
			for _, b := range got {
				nom = append(nom, b.Nominal)
				lab = append(lab, b.Label())
			}
			if !slices.Equal(nom, c.want) || !slices.Equal(lab, c.labels) {
				t.Errorf("got %v %q, want %v %q", nom, lab, c.want, c.labels)
			}
		})
	}
}

func TestOctaveEdges(t *testing.T) {
	got, err := Octave(31.5, 16000)
	if err != nil {
		t.Fatal(err)
	}
	for i, b := range got {
		// Octave midbands 1000·10^(3y/10) with edges 10^(±3/20) (IEC
		// 61260-1 base-10 [M]); neighbouring octaves share an edge.
		if b.Index%3 != 0 {
			t.Errorf("octave %s has index %d, not a multiple of 3", b.Label(), b.Index)
		}
		if r := b.Upper / b.Lower; math.Abs(r-math.Pow(10, 0.3)) > 1e-12 {
			t.Errorf("octave %s: edge ratio %.15g, want 10^0.3", b.Label(), r)
		}
		if i > 0 && math.Abs(got[i-1].Upper-b.Lower) > relTol*b.Lower {
			t.Errorf("octave %s: lower edge differs from previous upper edge", b.Label())
		}
	}
	c := Centers(nil, got)
	if len(c) != len(got) || c[5] != 1000 {
		t.Errorf("Centers gave %v", c)
	}
	buf := make([]float64, 0, 32)
	if c2 := Centers(buf, got); &c2[0] != &buf[:1][0] {
		t.Errorf("Centers did not reuse dst")
	}
}

func TestBandErrors(t *testing.T) {
	cases := []struct {
		name     string
		from, to float64
	}{
		{"zero", 0, 100},
		{"negative", -1, 100},
		{"reversed", 1000, 100},
		{"NaN", math.NaN(), 100},
		{"infinite", 10, math.Inf(1)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for _, f := range []func(float64, float64) ([]Band, error){ThirdOctave, Octave} {
				if _, err := f(c.from, c.to); !errors.Is(err, ErrRange) {
					t.Errorf("got error %v, want one wrapping ErrRange", err)
				}
			}
		})
	}
}

func ExamplePerDecade() {
	f, err := PerDecade(20, 20000, 2)
	if err != nil {
		panic(err)
	}
	for _, v := range f {
		fmt.Printf("%.4g ", v)
	}
	fmt.Println()
	// Output: 20 31.62 100 316.2 1000 3162 1e+04 2e+04
}

func ExampleThirdOctave() {
	bands, err := ThirdOctave(800, 1600)
	if err != nil {
		panic(err)
	}
	for _, b := range bands {
		fmt.Printf("%s: measure at %.2f Hz (%.1f–%.1f Hz)\n", b.Label(), b.Center, b.Lower, b.Upper)
	}
	// Output:
	// 800: measure at 794.33 Hz (707.9–891.3 Hz)
	// 1k: measure at 1000.00 Hz (891.3–1122.0 Hz)
	// 1.25k: measure at 1258.93 Hz (1122.0–1412.5 Hz)
	// 1.6k: measure at 1584.89 Hz (1412.5–1778.3 Hz)
}
