package simulate

import (
	"math"
	"strings"
	"testing"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
)

// parse reads a netlist from text.
func parse(t *testing.T, text string) *netlist.Netlist {
	t.Helper()
	n, err := netlist.Parse(strings.NewReader(text), "")
	if err != nil {
		t.Fatal(err)
	}
	return n
}

const (
	rcNetlist = "* RC low-pass\nR1 in out 10k\nC1 out 0 15n\n"
	skNetlist = "* unity-gain Sallen-Key\nR1 in a 10k\nR2 a b 10k\nC1 a out 22n\nC2 b 0 10n\nU1 out b out\n"
)

// TestThroughMNA runs networks built by package mna from netlists and
// fixtures, and compares the stepped-sine measurement with mna's own
// frequency-domain solve (Descriptor.Response) within the issue's
// tolerances, and with the fixture check values of REFERENCES.md §6.
func TestThroughMNA(t *testing.T) {
	cases := []struct {
		name string
		text string
		fx   mna.Fixture
	}{
		{"rc, ideal fixture", rcNetlist, mna.Fixture{}},
		{"rc, 100 Ω into 10 kΩ", rcNetlist, mna.Fixture{SourceOhms: 100, LoadOhms: 10e3}},
		{"sallen-key, 100 Ω into 47 kΩ ∥ 100 pF", skNetlist, mna.Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d, err := mna.Build(parse(t, c.text), c.fx)
			if err != nil {
				t.Fatal(err)
			}
			sim, err := New(d, testRate, Options{})
			if err != nil {
				t.Fatal(err)
			}
			freqs := logFreqs(10, 0.4*testRate, 13)
			got := steppedSine(t, sim, freqs, 0.05, 0.01)
			want := make([]complex128, len(freqs))
			for i, f := range freqs {
				if want[i], err = d.Response(f); err != nil {
					t.Fatal(err)
				}
			}
			checkResponse(t, c.name+" vs mna.Response", freqs, got, want)
		})
	}

	// REFERENCES.md §6 [V]: R = 10 kΩ, C = 15 nF from a 100 Ω source into
	// a 10 kΩ line input: DC gain −6.0639 dB and fc′ = 2111.56 Hz (there
	// 3.0103 dB lower, −45°); at 1 kHz −4.18 dB, +17.96° from the unloaded
	// response.
	d, err := mna.Build(parse(t, rcNetlist), mna.Fixture{SourceOhms: 100, LoadOhms: 10e3})
	if err != nil {
		t.Fatal(err)
	}
	sim, err := New(d, testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	h := steppedSine(t, sim, []float64{2111.56, 1000}, 0.02, 0.02)
	if g, p := dB(h[0]), deg(h[0]); math.Abs(g-(-6.0639-3.0103)) > 2e-3 || math.Abs(p+45) > 0.01 {
		t.Errorf("at fc′ = 2111.56 Hz: %s; REFERENCES.md §6 gives −9.0742 dB, −45°", fmtC(h[0]))
	}
	unloaded := 1 / complex(1, 2*math.Pi*1000*10e3*15e-9)
	if e := h[1] / unloaded; math.Abs(dB(e)+4.18) > 0.006 || math.Abs(deg(e)-17.96) > 0.006 {
		t.Errorf("loading error at 1 kHz %s; REFERENCES.md §6 gives −4.18 dB, +17.96°", fmtC(e))
	}
}

// TestTrimmerThroughMNA is how the bench turns a trimmer: mna.Network's
// SetValue restamps the descriptor in place and the simulator picks it up
// with Update, with no step at the change and the new response after it
// (by mna's frequency-domain solve).
func TestTrimmerThroughMNA(t *testing.T) {
	net, err := mna.NewNetwork(parse(t, skNetlist), mna.Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12})
	if err != nil {
		t.Fatal(err)
	}
	sim, err := New(net.Descriptor(), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	const f = 800
	const pre, post = 24000, 9600
	x := make([]float64, pre+post)
	for n := range x {
		x[n] = 0.5 * math.Sin(2*math.Pi*f*float64(n)/testRate)
	}
	y := make([]float64, len(x))
	sim.Process(y[:pre], x[:pre])
	if err := net.SetValue("R2", 4.7e3); err != nil {
		t.Fatal(err)
	}
	if err := sim.Update(net.Descriptor()); err != nil {
		t.Fatal(err)
	}
	sim.Process(y[pre:], x[pre:])
	ownStep := 0.0
	for n := pre - 2400; n < pre; n++ {
		ownStep = math.Max(ownStep, math.Abs(y[n]-y[n-1]))
	}
	if jump := math.Abs(y[pre] - y[pre-1]); jump > ownStep {
		t.Errorf("step of %.3g at the change, the signal's own steps reach %.3g", jump, ownStep)
	}
	want, err := net.Response(f)
	if err != nil {
		t.Fatal(err)
	}
	sim2, err := New(net.Descriptor(), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// The updated simulator settles on what a fresh one gives, and on
	// mna's prediction.
	got := steppedSine(t, sim2, []float64{f}, 0.02, 0.02)[0]
	if eg, ep := dB(got/want), deg(got/want); math.Abs(eg) > gainTolDB || math.Abs(ep) > phaseTolDeg {
		t.Errorf("after the change %s, mna.Response %s", fmtC(got), fmtC(want))
	}
	tail := 4800
	fresh := make([]float64, len(x))
	sim2.Reset()
	sim2.Process(fresh, x)
	for n := len(x) - tail; n < len(x); n++ {
		if math.Abs(y[n]-fresh[n]) > 1e-9 {
			t.Fatalf("sample %d after the change: %.9f, a simulator started with the new values gives %.9f", n, y[n], fresh[n])
		}
	}
}
