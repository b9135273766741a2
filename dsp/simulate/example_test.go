package simulate_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"strings"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
	"tonetrace/dsp/simulate"
	"tonetrace/dsp/tone"
)

// A 1 kHz tone through the RC low-pass of REFERENCES §5 (10 kΩ, 15 nF,
// fc = 1061 Hz): the output, taken Latency() samples later than the input,
// gives the gain and phase the AC analysis predicts.
func ExampleNew() {
	const rate, f = 48000, 1000.0
	nl, err := netlist.Parse(strings.NewReader("R1 in out 10k\nC1 out 0 15n\n"), "")
	if err != nil {
		fmt.Println(err)
		return
	}
	d, err := mna.Build(nl, mna.Fixture{})
	if err != nil {
		fmt.Println(err)
		return
	}
	sim, err := simulate.New(d, rate, simulate.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	x := make([]float64, 4800+sim.Latency()) // 100 ms
	for n := range x {
		x[n] = 0.5 * math.Cos(2*math.Pi*f*float64(n)/rate)
	}
	y := make([]float64, len(x))
	sim.Process(y, x)

	est, _ := tone.NewEstimator(rate)
	const start, block = 2400, 2400 // settled; 50 whole cycles
	in, _ := est.Fit(x[start:start+block], f)
	out, _ := est.Fit(y[start+sim.Latency():start+sim.Latency()+block], f)
	h := out.Phasor / in.Phasor
	want, _ := d.Response(f)
	fmt.Printf("order %d, latency %d samples\n", sim.Order(), sim.Latency())
	fmt.Printf("simulated %.2f dB %.2f°\n", 20*math.Log10(cmplx.Abs(h)), cmplx.Phase(h)*180/math.Pi)
	fmt.Printf("predicted %.2f dB %.2f°\n", 20*math.Log10(cmplx.Abs(want)), cmplx.Phase(want)*180/math.Pi)
	// Output:
	// order 1, latency 16 samples
	// simulated -2.76 dB -43.30°
	// predicted -2.76 dB -43.30°
}

// Turning a trimmer: restamp the network and hand the simulator the new
// descriptor between blocks; the state carries over, so the output does
// not click.
func ExampleSimulator_Update() {
	const rate = 48000
	nl, _ := netlist.Parse(strings.NewReader("R1 in out 10k\nC1 out 0 15n\n"), "")
	net, _ := mna.NewNetwork(nl, mna.Fixture{})
	sim, _ := simulate.New(net.Descriptor(), rate, simulate.Options{})

	block := make([]float64, 480)
	out := make([]float64, len(block))
	for i := range block {
		block[i] = 1 // a constant input: the capacitor charges to 1 V
	}
	sim.Process(out, block)
	before := out[len(out)-1]

	_ = net.SetValue("R1", 22e3)
	if err := sim.Update(net.Descriptor()); err != nil {
		fmt.Println(err)
		return
	}
	sim.Process(out, block)
	fmt.Printf("before %.6f, after %.6f\n", before, out[0])
	// Output:
	// before 1.000000, after 1.000000
}
