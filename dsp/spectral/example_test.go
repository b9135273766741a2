package spectral_test

import (
	"fmt"
	"math/rand/v2"

	"tonetrace/dsp/spectral"
)

// A two-tap average y[n] = (x[n] + x[n−1])/2 has the response
// H = cos(πf/fs)·e^{−jπf/fs}: at fs = 8 kHz and 1 kHz, −0.69 dB and −22.5°.
// Each band's value is the mean of H over the band's bins, so the phase
// of the wider high bands sits a little off the value at the centre, and
// the change of H across a band lowers its coherence slightly.
func ExampleWelch() {
	const fs = 8000.0
	w, err := spectral.NewWelch(256, fs) // 31.25 Hz bins
	if err != nil {
		panic(err)
	}
	r := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, 4000)
	y := make([]float64, len(x))
	prev := 0.0
	for block := 0; block < 10; block++ { // ten blocks of 0.05 s, as from a stream
		for i := range x {
			x[i] = r.NormFloat64()
			y[i] = (x[i] + prev) / 2
			prev = x[i]
		}
		w.Add(x, y)
	}
	tr, err := w.Trace(500, 2000, 10) // ten bands per decade
	if err != nil {
		panic(err)
	}
	fmt.Println("segments:", w.Segments())
	for _, p := range tr.Points {
		fmt.Printf("%6.0f Hz %6.2f dB %6.1f° γ²=%.3f ±%.3f dB\n", p.Freq, p.GainDB(), p.PhaseDeg(), p.Coherence, p.GainU)
	}
	// Output:
	// segments: 311
	//    501 Hz  -0.17 dB  -11.2° γ²=1.000 ±0.003 dB
	//    631 Hz  -0.27 dB  -14.1° γ²=1.000 ±0.004 dB
	//    794 Hz  -0.44 dB  -17.9° γ²=0.999 ±0.005 dB
	//   1000 Hz  -0.69 dB  -22.4° γ²=0.999 ±0.005 dB
	//   1259 Hz  -1.14 dB  -28.5° γ²=0.998 ±0.006 dB
	//   1585 Hz  -1.84 dB  -35.8° γ²=0.998 ±0.007 dB
	//   1995 Hz  -3.04 dB  -44.9° γ²=0.994 ±0.010 dB
}
