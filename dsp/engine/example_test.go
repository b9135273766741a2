package engine

import (
	"context"
	"fmt"
	"math"
)

// Example measures three frequencies through a cookbook low-pass at
// 1 kHz (Q 0.7071) on the test device, whose inputs hear the outputs 1234
// frames later: the cookbook's response at 1 kHz is −3.01 dB, −90°
// (REFERENCES.md §7).
func Example() {
	dev, err := startFake(newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), faults{})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer dev.close()

	e := New(dev, Config{Plan: []float64{100, 1000, 10000}})
	done := make(chan struct{})
	go func() {
		defer close(done)
		for ev := range e.Events() {
			switch v := ev.(type) {
			case PointEvent:
				fmt.Printf("%5.0f Hz: %6.2f dB %7.1f° valid %v\n", v.Point.Freq, v.Point.GainDB(), v.Point.PhaseDeg(), v.Valid)
			case TraceEvent:
				fmt.Printf("trace: %d points, complete %v\n", len(v.Trace.Points), v.Complete)
			}
		}
	}()
	err = e.Run(context.Background())
	<-done
	res := e.Result()
	fmt.Println("error:", err)
	fmt.Println("latency:", res.Latency, "frames; problems:", len(res.Problems))
	// Output:
	//   100 Hz:  -0.00 dB    -8.1° valid true
	//  1000 Hz:  -3.01 dB   -90.0° valid true
	// 10000 Hz: -42.74 dB  -173.1° valid true
	// trace: 3 points, complete true
	// error: <nil>
	// latency: 1234 frames; problems: 0
}
