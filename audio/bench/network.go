package bench

import (
	"fmt"
	"strings"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
	"tonetrace/dsp/trace"
)

// DefaultNetlistText is the network on the bench when Config.Netlist is
// nil: the presence-lift stage of the project's example networks
// (testdata/networks/presence.cir), a design of our own. Its response rises
// from 0 dB to +6 dB at 3.06 kHz and falls back: a peak to watch move while
// L1, C1 or R2 is tuned.
const DefaultNetlistText = `* presence lift: +6 dB peak near 3.06 kHz from a series RLC in an op-amp's feedback leg
* Non-inverting stage with gain 1 + Rf/Z, where Z = R2 + sL + 1/(sC) is
* smallest at f0 = 1/(2 pi sqrt(L C)) = 3063 Hz (100 mH, 27 nF): there the
* gain is 1 + 2k2/2k2 = 2 (+6 dB); far from f0 it falls back to 1.
Rin  in  0   100k        ; input bias resistor
U1   out in  fb
Rf   out fb  2k2
R2   fb  x   2k2
L1   x   y   100mH
C1   y   0   27nF
.io in out
.end
`

// DefaultNetlist returns a fresh parse of [DefaultNetlistText].
func DefaultNetlist() *netlist.Netlist {
	n, err := netlist.Parse(strings.NewReader(DefaultNetlistText), "")
	if err != nil {
		panic("bench: the built-in netlist does not parse: " + err.Error()) // a bug in this package
	}
	return n
}

// DefaultFixture returns the bench's default fixture: the simulated
// interface's line output of 100 Ω and its line input of 20 kΩ in parallel
// with 100 pF (input and cable), values of common practice
// (REFERENCES.md §10: line outputs 50–600 Ω, line inputs 10–50 kΩ).
func DefaultFixture() mna.Fixture {
	return mna.Fixture{SourceOhms: 100, LoadOhms: 20e3, LoadFarads: 100e-12}
}

// LeadOhms is the resistance of the reference loopback lead, in Ω: a few
// metres of ordinary cable.
const LeadOhms = 0.1

// leadNetlist returns the reference loopback: output 2, through its source
// resistance (the fixture's) and the lead, into input 2, loaded by the
// input impedance (the fixture's). With the defaults its response is
// 20 kΩ/(20 kΩ + 100.1 Ω) = −0.0434 dB, flat to well above 20 kHz.
func leadNetlist() *netlist.Netlist {
	return &netlist.Netlist{
		Title:    "reference loopback lead",
		Elements: []netlist.Element{{Name: "Rlead", Kind: netlist.Resistor, Nodes: []string{"in", "out"}, Value: LeadOhms}},
		In:       "in", Out: "out",
	}
}

// MetaReference is the metadata key [Bench.Expected] adds to its trace.
const MetaReference = "reference"

// Prediction returns the AC prediction of the network under test with the
// bench's fixture (source resistance and input load included) at freqs, in
// Hz, finite, ≥ 0 and strictly ascending, with its current component values:
// the model curve for the screen. See [mna.Predict].
func (b *Bench) Prediction(freqs []float64) (trace.Trace, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.net.Predict(freqs)
}

// Expected returns the ratio response/reference an ideal dual-channel
// measurement reads on this bench at freqs: [Bench.Prediction] divided by
// the response of the reference loopback, since the reference input loads
// output 2 just as the network's load does output 1 (with the default
// fixture the loopback reads −0.0434 dB, so the measured ratio lies
// 0.0434 dB above the prediction). The two inputs' own small mismatch is
// not included: it is what a loopback calibration removes. The trace's
// metadata are the prediction's plus MetaReference.
func (b *Bench) Expected(freqs []float64) (trace.Trace, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	t, err := b.net.Predict(freqs)
	if err != nil {
		return t, err
	}
	for i := range t.Points {
		h, err := b.lead.Response(t.Points[i].Freq)
		if err != nil {
			return trace.Trace{}, fmt.Errorf("bench: reference loopback at %g Hz: %w", t.Points[i].Freq, err)
		}
		t.Points[i].H /= h
	}
	t.SetMeta(MetaReference, fmt.Sprintf("loopback through %g ohm into the fixture's load", LeadOhms))
	return t, nil
}

// Value returns the present value of the network element named name
// (case-insensitive): Ω, F, H or a voltage gain; false when there is none.
func (b *Bench) Value(name string) (float64, bool) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.net.Value(name)
}

// Netlist returns a copy of the network under test with its present
// values.
func (b *Bench) Netlist() *netlist.Netlist {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.net.Netlist()
}

// Fixture returns the bench's fixture: the outputs' source resistance and
// the inputs' load.
func (b *Bench) Fixture() mna.Fixture { return b.fixture }

// SetValue changes the value of the network element named name
// (case-insensitive; Ω, F, H or a voltage gain) while the bench runs, like
// turning a trimmer or swapping a part: the captured response moves to the
// new [Bench.Prediction] without a click (the network's charges and fluxes
// are kept; see simulate.Simulator.Update).
//
// The change is made in three steps. SetValue restamps the network's
// equations (mna.Network.SetValue) on the caller's goroutine; it then hands
// the new equations to the bench's goroutine, which applies them to the
// running simulator between two periods — never inside the simulated
// device callback, and with no allocation in the per-period path: the
// update itself allocates, once per change; SetValue waits for it and
// returns its error. On any error (no such element, an amplifier, a value
// out of range, a network made singular or unstable) nothing changes.
//
// It returns audio.ErrClosed after Close. After an unplug the simulator is
// still updated.
func (b *Bench) SetValue(name string, v float64) error {
	b.mu.Lock()
	defer b.mu.Unlock()
	old, ok := b.net.Value(name)
	if !ok {
		return fmt.Errorf("bench: SetValue: the network has no element %q; it has %s", name, strings.Join(b.elements, ", "))
	}
	if err := b.net.SetValue(name, v); err != nil {
		return fmt.Errorf("bench: SetValue: %w", err)
	}
	err := b.update(b.net.Descriptor())
	if err != nil {
		// Put the old value back; it was accepted before.
		if rerr := b.net.SetValue(name, old); rerr != nil {
			return fmt.Errorf("bench: SetValue %s = %g: %w (and restoring %g failed: %v)", name, v, err, old, rerr)
		}
		return fmt.Errorf("bench: SetValue %s = %g: %w", name, v, err)
	}
	return nil
}
