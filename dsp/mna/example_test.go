package mna_test

import (
	"fmt"
	"math"
	"math/cmplx"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
)

// An RC low-pass of 10 kΩ and 15 nF is 3.0103 dB down and 45° behind at
// fc = 1/(2πRC) (REFERENCES §5).
func ExampleBuild() {
	n := &netlist.Netlist{In: "in", Out: "out", Elements: []netlist.Element{
		{Name: "R1", Kind: netlist.Resistor, Nodes: []string{"in", "out"}, Value: 10e3},
		{Name: "C1", Kind: netlist.Capacitor, Nodes: []string{"out", "0"}, Value: 15e-9},
	}}
	d, err := mna.Build(n, mna.Fixture{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fc := 1 / (2 * math.Pi * 10e3 * 15e-9)
	h, err := d.Response(fc)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("fc = %.4f Hz: %.4f dB, %.4f°\n", fc, 20*math.Log10(cmplx.Abs(h)), cmplx.Phase(h)*180/math.Pi)
	// Output:
	// fc = 1061.0330 Hz: -3.0103 dB, -45.0000°
}

// The same low-pass driven from a 100 Ω line output into a 10 kΩ line
// input: REFERENCES §6 gives a DC gain of −6.0639 dB and fc′ = 2111.56 Hz,
// where the gain is 3.0103 dB lower and the phase −45°. The prediction
// states its fixture.
func ExamplePredict() {
	n := &netlist.Netlist{Name: "rc.cir", In: "in", Out: "out", Elements: []netlist.Element{
		{Name: "R1", Kind: netlist.Resistor, Nodes: []string{"in", "out"}, Value: 10e3},
		{Name: "C1", Kind: netlist.Capacitor, Nodes: []string{"out", "0"}, Value: 15e-9},
	}}
	d, err := mna.Build(n, mna.Fixture{SourceOhms: 100, LoadOhms: 10e3})
	if err != nil {
		fmt.Println(err)
		return
	}
	tr, err := mna.Predict(d, []float64{10, 1000, 2111.56})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, m := range tr.Meta {
		fmt.Printf("%s: %s\n", m.Key, m.Value)
	}
	for _, p := range tr.Points {
		fmt.Printf("%g Hz: %.4f dB, %.2f°\n", p.Freq, p.GainDB(), p.PhaseDeg())
	}
	// Output:
	// method: modified nodal analysis
	// network: rc.cir
	// source_ohms: 100
	// load_ohms: 10000
	// load_farads: 0
	// 10 Hz: -6.0640 dB, -0.27°
	// 1000 Hz: -6.9427 dB, -25.34°
	// 2111.56 Hz: -9.0742 dB, -45.00°
}

// A Network restamps in place when a value changes, for fitting and live
// tuning. The gains are 10·log10(1 + (f/fc)²) below 0 dB with
// fc = 1/(2πRC) (common practice).
func ExampleNetwork_SetValue() {
	n := &netlist.Netlist{In: "in", Out: "out", Elements: []netlist.Element{
		{Name: "R1", Kind: netlist.Resistor, Nodes: []string{"in", "out"}, Value: 10e3},
		{Name: "C1", Kind: netlist.Capacitor, Nodes: []string{"out", "0"}, Value: 15e-9},
	}}
	w, err := mna.NewNetwork(n, mna.Fixture{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range []float64{10e3, 4.7e3} {
		if err := w.SetValue("R1", r); err != nil {
			fmt.Println(err)
			return
		}
		h, _ := w.Response(1000)
		fmt.Printf("R1 = %g Ω: %.4f dB at 1 kHz\n", r, 20*math.Log10(cmplx.Abs(h)))
	}
	fmt.Println(w.SetValue("R1", 0))
	// Output:
	// R1 = 10000 Ω: -2.7606 dB at 1 kHz
	// R1 = 4700 Ω: -0.7781 dB at 1 kHz
	// mna: SetValue: R1: resistance is 0 Ω; it must be finite and above 0 (join the nodes for a short, remove the resistor for an open)
}
