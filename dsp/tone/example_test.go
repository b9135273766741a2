package tone_test

import (
	"fmt"
	"math"

	"tonetrace/dsp/tone"
)

// A 1 kHz tone at 48 kHz with a DC offset and 1% second harmonic, fitted
// over 0.1 s (a whole number of cycles, so the fast path is taken).
func ExampleEstimator_Fit() {
	const rate, freq = 48000.0, 1000.0
	e, err := tone.NewEstimator(rate)
	if err != nil {
		panic(err)
	}
	x := make([]float64, 4800)
	for i := range x {
		ph := 2 * math.Pi * freq * float64(i) / rate
		x[i] = 0.05 + 0.5*math.Cos(ph+30*math.Pi/180) + 0.005*math.Cos(2*ph)
	}
	est, err := e.Fit(x, freq)
	if err != nil {
		panic(err)
	}
	fmt.Printf("amplitude %.4f FS, phase %.2f°, DC %.4f FS\n",
		est.Amplitude(), est.Phase()*180/math.Pi, est.DC)
	fmt.Printf("2nd harmonic %.4f FS, THD %.3f%%\n", math.Hypot(real(est.Harmonics[0]), imag(est.Harmonics[0])), est.THD)
	// Output:
	// amplitude 0.5000 FS, phase 30.00°, DC 0.0500 FS
	// 2nd harmonic 0.0050 FS, THD 1.000%
}

// The check value of REFERENCES §1: 0.5·cos(ωn + 30°) at 1 kHz over 4800
// samples at 48 kHz.
func ExampleGoertzel() {
	const rate, freq, n = 48000.0, 1000.0, 4800
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.5 * math.Cos(2*math.Pi*freq*float64(i)/rate+30*math.Pi/180)
	}
	X := tone.Goertzel(x, freq, rate)
	fmt.Printf("Â = %.7f, φ̂ = %.4f°\n", 2*math.Hypot(real(X), imag(X))/n, math.Atan2(imag(X), real(X))*180/math.Pi)
	// Output:
	// Â = 0.5000000, φ̂ = 30.0000°
}

// Choosing a block for 997 Hz at 48 kHz: at least 0.1 s, as near a whole
// number of cycles as the search window allows.
func ExampleCycleLength() {
	n, err := tone.CycleLength(997, 48000, 0.1)
	if err != nil {
		panic(err)
	}
	whole, frac := tone.WholeCycles(n, 997, 48000)
	fmt.Printf("%d samples: %d cycles %+.5f\n", n, whole, frac)
	// Output:
	// 5007 samples: 104 cycles -0.00044
}

// Detecting a clock mismatch: the stimulus was generated for 1000 Hz by one
// device and recorded by another whose clock runs 50 ppm slow, so the
// recording holds 1000.05 Hz.
func ExampleEstimator_FitFreq() {
	const rate = 48000.0
	x := make([]float64, 48000)
	for i := range x {
		x[i] = 0.25 * math.Cos(2*math.Pi*1000.05*float64(i)/rate)
	}
	e := &tone.Estimator{Rate: rate}
	est, err := e.FitFreq(x, 1000)
	if err != nil {
		panic(err)
	}
	fmt.Printf("%.4f Hz: %+.1f ppm\n", est.Freq, (est.Freq/1000-1)*1e6)
	// Output:
	// 1000.0500 Hz: +50.0 ppm
}

// The transfer ratio of two channels fitted over the same block.
func ExampleRatio() {
	const rate, freq = 48000.0, 1000.0
	ref := make([]float64, 4800)
	resp := make([]float64, 4800)
	for i := range ref {
		ph := 2 * math.Pi * freq * float64(i) / rate
		ref[i] = 0.5 * math.Cos(ph)
		resp[i] = 0.25 * math.Cos(ph-math.Pi/4)
	}
	e := &tone.Estimator{Rate: rate}
	r, _ := e.Fit(ref, freq)
	s, _ := e.Fit(resp, freq)
	p := tone.Ratio(s, r)
	fmt.Printf("%.0f Hz: %.2f dB, %.1f°\n", p.Freq, p.GainDB(), p.PhaseDeg())
	// Output:
	// 1000 Hz: -6.02 dB, -45.0°
}
