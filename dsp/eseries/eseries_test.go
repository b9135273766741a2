package eseries

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// sameTol is the relative tolerance for values that should be the same
// preferred value computed two ways.
const sameTol = 1e-12

// formula returns 10^(i/n) rounded to the series' significant digits, as
// an integer of those digits. IEC 60063 derives the series from this
// geometric progression (from memory: IEC 60063:2015, clause 3).
func formula(i, n, digits int) int {
	return int(math.Round(math.Pow(10, float64(i)/float64(n)) * math.Pow10(digits-1)))
}

// TestTablesAgainstFormula compares every table entry with the rounded
// formula and checks that the entries that differ are exactly the
// well-known exceptions of IEC 60063 (from memory): in E24 the old values
// 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2, in E192 the value 9.20.
func TestTablesAgainstFormula(t *testing.T) {
	want := map[Series]string{
		E6:   "33(32) 47(46)",
		E12:  "27(26) 33(32) 39(38) 47(46) 82(83)",
		E24:  "27(26) 30(29) 33(32) 36(35) 39(38) 43(42) 47(46) 82(83)",
		E48:  "",
		E96:  "",
		E192: "920(919)",
	}
	for _, s := range All() {
		t.Run(s.String(), func(t *testing.T) {
			tab, digits := s.table()
			if len(tab) != int(s) {
				t.Fatalf("%v has %d values, want %d", s, len(tab), int(s))
			}
			var diff []string
			for i, v := range tab {
				if f := formula(i, int(s), digits); f != v {
					diff = append(diff, fmt.Sprintf("%d(%d)", v, f))
				}
			}
			if got := strings.Join(diff, " "); got != want[s] {
				t.Errorf("entries differing from the formula: got %q, want %q", got, want[s])
			}
		})
	}
}

// TestTableStructure checks what IEC 60063 builds the series on (from
// memory): each series is strictly increasing within the decade, starts
// at 1.0, and each coarser series is every second value of the next one
// of the same digit count.
func TestTableStructure(t *testing.T) {
	for _, s := range All() {
		tab, digits := s.table()
		if tab[0] != int(math.Pow10(digits-1)) {
			t.Errorf("%v starts at %d", s, tab[0])
		}
		for i := 1; i < len(tab); i++ {
			if tab[i] <= tab[i-1] {
				t.Errorf("%v not increasing at %d: %d, %d", s, i, tab[i-1], tab[i])
			}
		}
	}
	pairs := [][2]Series{{E6, E12}, {E12, E24}, {E48, E96}, {E96, E192}}
	for _, p := range pairs {
		coarse, _ := p[0].table()
		fine, _ := p[1].table()
		for i, v := range coarse {
			if fine[2*i] != v {
				t.Errorf("%v[%d] = %d, but %v[%d] = %d", p[0], i, v, p[1], 2*i, fine[2*i])
			}
		}
	}
}

// TestWellKnownValues checks values every parts catalogue lists (common
// practice): 4.7k and 2.2n in E12, 5.1 and 9.1 in E24, 49.9 Ω and 4.99 kΩ
// in E96, 1.58 in E96.
func TestWellKnownValues(t *testing.T) {
	cases := []struct {
		name string
		s    Series
		v    float64
	}{
		{"4k7 E12", E12, 4700},
		{"2n2 E12", E12, 2.2e-9},
		{"5k1 E24", E24, 5100},
		{"9.1 E24", E24, 9.1},
		{"49R9 E96", E96, 49.9},
		{"4k99 E96", E96, 4990},
		{"1k58 E96", E96, 1580},
		{"10k E48", E48, 10e3},
		{"9.20 E192", E192, 9.20},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			lo, hi := Neighbours(c.v, c.s)
			if lo != c.v || hi != c.v {
				t.Errorf("Neighbours(%g, %v) = %g, %g; want the value itself", c.v, c.s, lo, hi)
			}
		})
	}
}

func TestNearest(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name string
		v    float64
		s    Series
		want float64
	}{
		{"exact 4k7", 4700, E12, 4700},
		{"exact 4n7", 4.7e-9, E12, 4.7e-9},
		{"4k6 to 4k7", 4600, E12, 4700},
		{"linear tie 1.1 goes to 1.2 by ratio", 1.1, E12, 1.2},
		{"9.5 stays 9.1 in E24", 9.5, E24, 9.1},
		{"9.6 to next decade 10", 9.6, E24, 10},
		{"9.1 boundary in E12 to 10", 9.1, E12, 10},
		{"88 in E12 to 82", 88, E12, 82},
		{"92 in E6 to 100", 92, E6, 100},
		{"1 pF floor of range", 1e-12, E24, 1e-12},
		{"1.04 pF", 1.04e-12, E24, 1e-12},
		{"1 GΩ top of range", 1e9, E96, 1e9},
		{"1.23 G in E12", 1.23e9, E12, 1.2e9},
		{"3.3 pF", 3.31e-12, E6, 3.3e-12},
		{"4k7 in E96 is 4k75", 4700, E96, 4750},
		{"9.2 in E192", 9.2, E192, 9.20},
		{"9.19 in E192 to 9.20", 9.19, E192, 9.20},
		{"E48 15k", 15.2e3, E48, 15.4e3},
		{"zero", 0, E12, nan},
		{"negative", -4700, E12, nan},
		{"infinite", math.Inf(1), E12, nan},
		{"NaN", nan, E12, nan},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := Nearest(c.v, c.s)
			if math.IsNaN(c.want) {
				if !math.IsNaN(got) {
					t.Errorf("Nearest(%g, %v) = %g, want NaN", c.v, c.s, got)
				}
				return
			}
			if math.Abs(got-c.want) > sameTol*c.want {
				t.Errorf("Nearest(%g, %v) = %.17g, want %.17g", c.v, c.s, got, c.want)
			}
		})
	}
}

func TestNeighbours(t *testing.T) {
	cases := []struct {
		name   string
		v      float64
		s      Series
		lo, hi float64
	}{
		{"between 4k7 and 5k6", 5000, E12, 4700, 5600},
		{"on a value", 4700, E12, 4700, 4700},
		{"past the last value", 9.5, E24, 9.1, 10},
		{"decade start", 100, E6, 100, 100},
		{"just below a decade", 99, E6, 68, 100},
		{"tiny", 1.7e-12, E12, 1.5e-12, 1.8e-12},
		{"huge", 1.7e9, E12, 1.5e9, 1.8e9},
		{"E192 around 9.2", 9.25, E192, 9.20, 9.31},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			lo, hi := Neighbours(c.v, c.s)
			if math.Abs(lo-c.lo) > sameTol*c.lo || math.Abs(hi-c.hi) > sameTol*c.hi {
				t.Errorf("Neighbours(%g, %v) = %g, %g; want %g, %g", c.v, c.s, lo, hi, c.lo, c.hi)
			}
		})
	}
	if lo, hi := Neighbours(-1, E12); !math.IsNaN(lo) || !math.IsNaN(hi) {
		t.Errorf("Neighbours(-1) = %g, %g; want NaN, NaN", lo, hi)
	}
}

// TestExactInEveryDecade checks that every preferred value written as a
// decimal literal from 1 pF-scale (1e-12) to 1e9 is returned bit for bit,
// and that a value a quarter step above goes back to it (common practice:
// decimal values must round-trip exactly so they print as written).
func TestExactInEveryDecade(t *testing.T) {
	for _, s := range All() {
		tab, digits := s.table()
		for e := -12; e <= 8; e++ {
			for i, m := range tab {
				lit := strconv.Itoa(m) + "e" + strconv.Itoa(e-(digits-1))
				v, err := strconv.ParseFloat(lit, 64)
				if err != nil {
					t.Fatal(err)
				}
				if got := Nearest(v, s); got != v {
					t.Fatalf("Nearest(%s, %v) = %.17g, want %.17g", lit, s, got, v)
				}
				next := int(math.Pow10(digits))
				if i+1 < len(tab) {
					next = tab[i+1]
				}
				up := v * math.Pow(float64(next)/float64(m), 0.25)
				if got := Nearest(up, s); got != v {
					t.Fatalf("Nearest(%g, %v) = %.17g, want %s", up, s, got, lit)
				}
			}
		}
	}
}

// TestNearestProperties checks on random values from 1e-12 to 1e9 that
// the neighbours bracket v, are adjacent members of the series, and that
// Nearest picks the one nearer in ratio (definition of nearest by ratio,
// common practice for geometric series).
func TestNearestProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(60063, 1))
	for _, s := range All() {
		vals := s.Values(nil)
		maxStep := 0.0
		for i := range vals {
			next := 10.0
			if i+1 < len(vals) {
				next = vals[i+1]
			}
			maxStep = math.Max(maxStep, next/vals[i])
		}
		for k := 0; k < 2000; k++ {
			v := math.Pow(10, -12+21*rng.Float64())
			lo, hi := Neighbours(v, s)
			if !(lo <= v*(1+exactTol) && v <= hi*(1+exactTol)) {
				t.Fatalf("%v: Neighbours(%g) = %g, %g do not bracket it", s, v, lo, hi)
			}
			if hi/lo > maxStep*(1+sameTol) {
				t.Fatalf("%v: Neighbours(%g) = %g, %g are not adjacent", s, v, lo, hi)
			}
			n := Nearest(v, s)
			if n != lo && n != hi {
				t.Fatalf("%v: Nearest(%g) = %g is neither neighbour %g, %g", s, v, n, lo, hi)
			}
			other := lo + hi - n
			if math.Abs(math.Log(n/v)) > math.Abs(math.Log(other/v))+sameTol {
				t.Fatalf("%v: Nearest(%g) = %g but %g is nearer in ratio", s, v, n, other)
			}
			if Nearest(n, s) != n {
				t.Fatalf("%v: Nearest(%g) = %g is not a fixed point", s, n, Nearest(n, s))
			}
		}
	}
}

func TestValues(t *testing.T) {
	// IEC 60063 E12 (from memory).
	want := []float64{1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2}
	dst := make([]float64, 0, 192)
	got := E12.Values(dst)
	if len(got) != len(want) {
		t.Fatalf("E12.Values has %d values, want %d", len(got), len(want))
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("E12.Values()[%d] = %v, want %v", i, got[i], want[i])
		}
	}
	if &got[0] != &dst[:1][0] {
		t.Error("Values did not reuse dst")
	}
}

func TestParse(t *testing.T) {
	cases := []struct {
		in   string
		want Series
		err  bool
	}{
		{"E6", E6, false},
		{"E12", E12, false},
		{"e24", E24, false},
		{" E48 ", E48, false},
		{"E96", E96, false},
		{"E192", E192, false},
		{"E13", 0, true},
		{"12", 0, true},
		{"E", 0, true},
		{"", 0, true},
		{"E+12", 0, true},
		{"E-12", 0, true},
		{"E012", E12, false},
		{"EE12", 0, true},
	}
	for _, c := range cases {
		t.Run(c.in, func(t *testing.T) {
			got, err := Parse(c.in)
			if c.err {
				if err == nil {
					t.Fatalf("Parse(%q) = %v, want an error", c.in, got)
				}
				if !strings.Contains(err.Error(), "use one of E6, E12, E24, E48, E96, E192") {
					t.Errorf("error %q does not list the series", err)
				}
				return
			}
			if err != nil || got != c.want {
				t.Errorf("Parse(%q) = %v, %v; want %v", c.in, got, err, c.want)
			}
		})
	}
}

func TestStringAndText(t *testing.T) {
	for _, s := range All() {
		b, err := s.MarshalText()
		if err != nil {
			t.Fatal(err)
		}
		var back Series
		if err := back.UnmarshalText(b); err != nil || back != s {
			t.Errorf("text round trip of %v gave %v, %v", s, back, err)
		}
	}
	if got := Series(7).String(); got != "Series(7)" {
		t.Errorf("Series(7).String() = %q", got)
	}
	if _, err := Series(7).MarshalText(); err == nil {
		t.Error("MarshalText of an invalid series did not fail")
	}
	var s Series
	if err := s.UnmarshalText([]byte("E7")); err == nil {
		t.Error("UnmarshalText(E7) did not fail")
	}
}

func TestInvalidSeriesPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Nearest with an invalid series did not panic")
		}
	}()
	Nearest(1, Series(0))
}

func FuzzParse(f *testing.F) {
	for _, s := range []string{"E6", "E12", "e24", " E48", "E96", "E192", "E13", "", "E", "E+6", "12"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, in string) {
		s, err := Parse(in)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "eseries: unknown series") {
				t.Fatalf("unclear error %q", err)
			}
			return
		}
		if !s.Valid() {
			t.Fatalf("Parse(%q) gave invalid %d", in, int(s))
		}
		back, err := Parse(s.String())
		if err != nil || back != s {
			t.Fatalf("round trip of %q: %v, %v", in, back, err)
		}
	})
}

func FuzzNearest(f *testing.F) {
	for _, v := range []float64{4700, 1e-12, 1e9, 9.6, 0, -1, 5e-324, 1.7e308} {
		f.Add(v)
	}
	f.Fuzz(func(t *testing.T, v float64) {
		for _, s := range All() {
			n := Nearest(v, s)
			if !(v > 0) || math.IsInf(v, 1) {
				if !math.IsNaN(n) {
					t.Fatalf("Nearest(%g, %v) = %g, want NaN", v, s, n)
				}
				continue
			}
			if v > 1e-300 && v < 1e300 && !(n > 0 && math.Abs(math.Log(n/v)) < math.Log(1.25)) {
				t.Fatalf("Nearest(%g, %v) = %g is too far", v, s, n)
			}
		}
	})
}

func BenchmarkNearest(b *testing.B) {
	for _, s := range []Series{E12, E192} {
		b.Run(s.String(), func(b *testing.B) {
			vals := make([]float64, 1024)
			rng := rand.New(rand.NewPCG(1, 2))
			for i := range vals {
				vals[i] = math.Pow(10, -12+21*rng.Float64())
			}
			b.ReportAllocs()
			sum, i := 0.0, 0
			for b.Loop() {
				sum += Nearest(vals[i&1023], s)
				i++
			}
			_ = sum
		})
	}
}
