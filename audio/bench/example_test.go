package bench_test

import (
	"context"
	"fmt"
	"math"
	"math/cmplx"

	"tonetrace/audio/bench"
	"tonetrace/dsp/tone"
)

// Play a tone at the built-in network's peak, read both inputs and compare
// the measured ratio with the expected one.
func Example() {
	b, err := bench.Open(bench.Config{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer b.Close()
	const rate, f = 48000, 3000.0
	stim := make([]float64, rate/2)
	for i := range stim {
		stim[i] = math.Cos(2 * math.Pi * f * float64(i) / rate)
	}
	ctx := context.Background()
	at := b.PlayIndex() + rate/10
	go func() {
		b.WriteAt(ctx, at, stim)
		b.Finish()
	}()
	// Keep 0.1 s (300 whole cycles) from 0.3 s after the tone arrives.
	from := at + int64(b.Latency()) + 3*rate/10
	block := [2][]float64{make([]float64, rate/10), make([]float64, rate/10)}
	buf := [][]float64{make([]float64, 960), make([]float64, 960)}
	for done := 0; done < rate/10; {
		n, first, err := b.Read(ctx, buf)
		if err != nil {
			fmt.Println(err)
			return
		}
		for i := range n {
			if k := first + int64(i) - from; k >= 0 && k < rate/10 {
				block[0][k], block[1][k] = buf[0][i], buf[1][i]
				done++
			}
		}
	}
	est := tone.Estimator{Rate: rate}
	resp, _ := est.Fit(block[0], f)
	ref, _ := est.Fit(block[1], f)
	exp, _ := b.Expected([]float64{f})
	gain := func(h complex128) float64 { return 20 * math.Log10(cmplx.Abs(h)) }
	fmt.Printf("measured %.2f dB, expected %.2f dB\n", gain(resp.Phasor/ref.Phasor), gain(exp.Points[0].H))
	// Output: measured 6.07 dB, expected 6.05 dB
}

func ExampleParseFaults() {
	faults, err := bench.ParseFaults("swap, hum")
	fmt.Println(faults, err)
	_, err = bench.ParseFaults("swp")
	fmt.Println(err)
	// Output:
	// [swap hum] <nil>
	// bench: unknown fault "swp"; known faults: swap, dead-ref, dead-dut, clip, hum, invert, dropout, drift, unplug
}
