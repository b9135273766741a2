package extract_test

import (
	"fmt"
	"math"

	"tonetrace/dsp/extract"
	"tonetrace/dsp/trace"
)

// An RC low-pass, R = 10 kΩ and C = 15 nF, sampled at 10 points per decade
// from 10 Hz to 100 kHz. Its corner is 1/(2πRC) = 1061.0330 Hz at −45°
// (REFERENCES.md §5, verified with ngspice), between the points at
// 1000 Hz and 1259 Hz; its delay RC/(1+(ωRC)²) is 149.9 µs averaged over
// the lowest half decade (10–32 Hz).
func Example() {
	var points []trace.Point
	for k := 0; k <= 40; k++ {
		f := 10 * math.Pow(10, float64(k)/10)
		h := 1 / complex(1, 2*math.Pi*f*10e3*15e-9)
		points = append(points, trace.NewPoint(f, h))
	}
	p, err := extract.Analyze(points)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, line := range p.Lines() {
		fmt.Println(line)
	}
	fmt.Printf("corner %.2f Hz\n", p.Corners[0].Freq)
	// Output:
	// low-pass, passband 0.00 dB
	// −3 dB at 1.061 kHz (−45.0°)
	// slope −20.0 dB/decade at the high end
	// group delay 149.9 µs in the passband
	// corner 1061.00 Hz
}

// A series RLC band-pass (L = 10 mH, C = 100 nF, R = 100 Ω) read at five
// points per decade: no point lies within 1 dB of the peak, yet the local
// second-order model recovers f0 = 5032.921 Hz and Q = 3.16228
// (REFERENCES.md §5).
func ExampleAnalyze_bandpass() {
	var points []trace.Point
	for k := 0; k <= 20; k++ {
		f := 10 * math.Pow(10, float64(k)/5)
		s := complex(0, 2*math.Pi*f)
		points = append(points, trace.NewPoint(f, 100/(100+s*10e-3+1/(s*100e-9))))
	}
	p, err := extract.Analyze(points)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(p.Shape)
	fmt.Printf("f0 %.1f Hz, Q %.4f, bandwidth %.1f Hz\n", p.Peak.Freq, p.Peak.Q, p.Peak.Bandwidth)
	// Output:
	// band-pass
	// f0 5032.9 Hz, Q 3.1623, bandwidth 1591.5 Hz
}

// Reading errors name the point and the fix.
func ExampleAnalyze_error() {
	points := []trace.Point{
		trace.FromPolar(100, 0, 0),
		trace.FromPolar(50, -1, -10),
		trace.FromPolar(400, -3, -45),
	}
	_, err := extract.Analyze(points)
	fmt.Println(err)
	// Output:
	// extract: point 1 at 50 Hz: frequencies must ascend strictly; sort the points and merge duplicates
}
