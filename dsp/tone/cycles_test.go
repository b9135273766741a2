package tone

import (
	"errors"
	"math"
	"testing"
)

// TestCycleLength checks block lengths for coherent sampling: N·f/rate a
// whole number (IEEE Std 1241 [M]; common practice [CP]).
func TestCycleLength(t *testing.T) {
	cases := []struct {
		name                   string
		freq, rate, minSeconds float64
		want                   int // 0: only the properties are checked
	}{
		// 1 kHz at 48 kHz: 48 samples per cycle, 0.1 s = 100 cycles.
		{"1 kHz at 48 kHz", 1000, 48000, 0.1, 4800},
		// 44.1 samples per cycle: whole cycles every 441 samples.
		{"1 kHz at 44.1 kHz", 1000, 44100, 0.1, 4410},
		{"1 kHz at 44.1 kHz, 0.101 s", 1000, 44100, 0.101, 4851},
		// One period of 20 Hz is longer than the 10 ms asked for.
		{"20 Hz at least one period", 20, 48000, 0.01, 2400},
		{"zero duration", 1000, 48000, 0, 48},
		{"997 Hz at 48 kHz", 997, 48000, 0.1, 0},
		{"1001.3 Hz at 48 kHz", 1001.3, 48000, 0.2, 0},
		{"12345.6 Hz at 96 kHz", 12345.6, 96000, 0.05, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n, err := CycleLength(c.freq, c.rate, c.minSeconds)
			if err != nil {
				t.Fatal(err)
			}
			if c.want != 0 && n != c.want {
				t.Errorf("CycleLength = %d, want %d", n, c.want)
			}
			period := math.Ceil(c.rate / c.freq)
			lo := int(math.Max(math.Ceil(c.minSeconds*c.rate), period))
			hi := lo + int(math.Max(period, math.Ceil(float64(lo)/8)))
			if n < lo || n > hi {
				t.Fatalf("CycleLength = %d, outside the documented window [%d, %d]", n, lo, hi)
			}
			_, frac := WholeCycles(n, c.freq, c.rate)
			// A window of one period holds a length within f/(2·rate)
			// cycles of whole (pigeonhole, common practice [CP]).
			if math.Abs(frac) > c.freq/(2*c.rate)+1e-12 {
				t.Errorf("remainder %.3g cycles exceeds f/(2·rate) = %.3g", frac, c.freq/(2*c.rate))
			}
			// No length in the window does better; none shorter does as well.
			for m := lo; m <= hi; m++ {
				_, f := WholeCycles(m, c.freq, c.rate)
				if math.Abs(f) < math.Abs(frac)-1e-12 || (m < n && math.Abs(f) <= math.Abs(frac)) {
					t.Errorf("length %d has remainder %.3g, better than or as good as %d with %.3g", m, f, n, frac)
					break
				}
			}
		})
	}
}

func TestCycleLengthErrors(t *testing.T) {
	cases := []struct {
		name                   string
		freq, rate, minSeconds float64
		want                   error
	}{
		{"zero frequency", 0, 48000, 0.1, ErrFreq},
		{"at Nyquist", 24000, 48000, 0.1, ErrFreq},
		{"NaN frequency", math.NaN(), 48000, 0.1, ErrFreq},
		{"zero rate", 1000, 0, 0.1, ErrRate},
		{"infinite rate", 1000, math.Inf(1), 0.1, ErrRate},
		{"negative duration", 1000, 48000, -1, nil},
		{"NaN duration", 1000, 48000, math.NaN(), nil},
		{"too long", 1000, 48000, 1e6, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n, err := CycleLength(c.freq, c.rate, c.minSeconds)
			if err == nil {
				t.Fatalf("CycleLength = %d, want an error", n)
			}
			if c.want != nil && !errors.Is(err, c.want) {
				t.Errorf("error %v, want %v", err, c.want)
			}
		})
	}
}

// TestWholeCycles checks cycle counting: N·f/rate cycles (definition).
func TestWholeCycles(t *testing.T) {
	cases := []struct {
		name       string
		n          int
		freq, rate float64
		whole      int
		frac       float64
	}{
		{"exact", 4800, 1000, 48000, 100, 0},
		{"one sample over", 4801, 1000, 48000, 100, 1.0 / 48},
		{"one sample short", 4799, 1000, 48000, 100, -1.0 / 48},
		{"half a cycle over rounds away from zero", 4824, 1000, 48000, 101, -0.5},
		{"under one cycle", 10, 1000, 48000, 0, 10.0 / 48},
		{"empty block", 0, 1000, 48000, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			whole, frac := WholeCycles(c.n, c.freq, c.rate)
			if whole != c.whole || math.Abs(frac-c.frac) > 1e-12 {
				t.Errorf("WholeCycles = %d, %.15g; want %d, %.15g", whole, frac, c.whole, c.frac)
			}
			if got, want := Cycles(c.n, c.freq, c.rate), float64(c.whole)+c.frac; math.Abs(got-want) > 1e-12 {
				t.Errorf("Cycles = %.15g, want %.15g", got, want)
			}
		})
	}
}
