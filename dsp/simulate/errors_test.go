package simulate

import (
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"tonetrace/dsp/mna"
)

// TestNewErrors checks that New refuses what it cannot simulate, with an
// error that names the problem, and accepts the edge cases it can.
func TestNewErrors(t *testing.T) {
	bad := func(edit func(d *mna.Descriptor)) *mna.Descriptor {
		d := rcLowPass(10e3, 15e-9)
		edit(d)
		return d
	}
	// A Sallen-Key of equal parts with a gain-4 amplifier: Q = 1/(3 − K)
	// is negative, the poles lie in the right half-plane (from memory:
	// the equal-component Sallen-Key oscillates for K ≥ 3).
	unstableSK := new(circuit).
		R("R1", "in", "a", 10e3).R("R2", "a", "b", 10e3).
		C("C1", "a", "out", 10e-9).C("C2", "b", "0", 10e-9).
		E("E1", "out", "0", "b", "0", 4).
		build("in", "out")
	// Three differentiators in cascade: H = −(sRC)³.
	triple := new(circuit).
		C("C1", "in", "a", 1e-9).R("R1", "a", "m", 10e3).U("U1", "m", "0", "a").
		C("C2", "m", "b", 1e-9).R("R2", "b", "n", 10e3).U("U2", "n", "0", "b").
		C("C3", "n", "c", 1e-9).R("R3", "c", "out", 10e3).U("U3", "out", "0", "c").
		build("in", "out")
	// Two nodes joined only to each other: their level is undetermined.
	floating := new(circuit).R("R1", "in", "out", 10e3).C("C1", "out", "0", 15e-9).
		R("R9", "x", "y", 1e3).build("in", "out")
	// A lossless LC: poles on the imaginary axis are not unstable.
	lossless := new(circuit).L("L1", "in", "out", 10e-3).C("C1", "out", "0", 100e-9).build("in", "out")

	cases := []struct {
		name    string
		d       *mna.Descriptor
		rate    float64
		opts    Options
		want    error  // nil: must succeed
		mention string // a word the message must contain
	}{
		{"nil descriptor", nil, testRate, Options{}, ErrDescriptor, "nil"},
		{"nil G", bad(func(d *mna.Descriptor) { d.G = nil }), testRate, Options{}, ErrDescriptor, "nil"},
		{"empty", &mna.Descriptor{G: mat.NewDense(1, 1, nil), C: mat.NewDense(1, 1, nil)}, testRate, Options{}, ErrDescriptor, "no unknowns"},
		{"G wrong size", bad(func(d *mna.Descriptor) { d.G = mat.NewDense(2, 2, nil) }), testRate, Options{}, ErrDescriptor, "G is 2×2"},
		{"NaN in C", bad(func(d *mna.Descriptor) { d.C.Set(1, 1, math.NaN()) }), testRate, Options{}, ErrDescriptor, "not finite"},
		{"Inf in B", bad(func(d *mna.Descriptor) { d.B[2] = math.Inf(1) }), testRate, Options{}, ErrDescriptor, "not finite"},
		{"output out of range", bad(func(d *mna.Descriptor) { d.Out = 7 }), testRate, Options{}, ErrDescriptor, "output index 7"},
		{"floating node", floating, testRate, Options{}, ErrSingular, "singular"},
		{"unstable Sallen-Key", unstableSK, testRate, Options{}, ErrUnstable, "pole"},
		{"triple differentiator", triple, testRate, Options{}, ErrImproper, "derivative"},
		{"zero rate", rcLowPass(10e3, 15e-9), 0, Options{}, ErrOptions, "rate"},
		{"NaN rate", rcLowPass(10e3, 15e-9), math.NaN(), Options{}, ErrOptions, "rate"},
		{"infinite rate", rcLowPass(10e3, 15e-9), math.Inf(1), Options{}, ErrOptions, "rate"},
		{"half length too short", rcLowPass(10e3, 15e-9), testRate, Options{HalfLength: 3}, ErrOptions, "HalfLength"},
		{"half length too long", rcLowPass(10e3, 15e-9), testRate, Options{HalfLength: 65}, ErrOptions, "HalfLength"},
		{"passband too wide", rcLowPass(10e3, 15e-9), testRate, Options{Passband: 0.49}, ErrOptions, "Passband"},
		{"passband negative", rcLowPass(10e3, 15e-9), testRate, Options{Passband: -0.1}, ErrOptions, "Passband"},
		{"lossless LC", lossless, testRate, Options{}, nil, ""},
		{"resistive divider (no states)", new(circuit).R("R1", "in", "out", 1e3).R("R2", "out", "0", 1e3).build("in", "out"), testRate, Options{}, nil, ""},
		{"shortest kernel", rcLowPass(10e3, 15e-9), testRate, Options{HalfLength: MinHalfLength}, nil, ""},
		{"longest kernel", rcLowPass(10e3, 15e-9), testRate, Options{HalfLength: MaxHalfLength, Passband: MaxPassband}, nil, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sim, err := New(c.d, c.rate, c.opts)
			if c.want == nil {
				if err != nil {
					t.Fatalf("New: %v", err)
				}
				if sim.Latency() != sim.Options().HalfLength {
					t.Errorf("Latency %d ≠ HalfLength %d", sim.Latency(), sim.Options().HalfLength)
				}
				return
			}
			if !errors.Is(err, c.want) {
				t.Fatalf("New: %v; want %v", err, c.want)
			}
			if !strings.Contains(err.Error(), c.mention) {
				t.Errorf("message %q does not mention %q", err, c.mention)
			}
		})
	}
}

// TestResistiveDivider checks a network without states: the output is the
// input delayed by Latency() and scaled by the divider ratio R2/(R1+R2)
// (from memory), exactly.
func TestResistiveDivider(t *testing.T) {
	d := new(circuit).R("R1", "in", "out", 3e3).R("R2", "out", "0", 1e3).build("in", "out")
	sim, err := New(d, testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if sim.Order() != 0 {
		t.Errorf("Order %d, want 0", sim.Order())
	}
	x := []float64{1, -2, 3, 0.5, 0, 0, 7}
	x = append(x, make([]float64, 40)...)
	y := make([]float64, len(x))
	sim.Process(y, x)
	lat := sim.Latency()
	for n := range y {
		want := 0.0
		if n >= lat {
			want = 0.25 * x[n-lat]
		}
		if math.Abs(y[n]-want) > 1e-15 {
			t.Fatalf("y[%d] = %g, want %g", n, y[n], want)
		}
	}
}
