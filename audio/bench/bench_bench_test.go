package bench

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkPeriod measures one simulated device period (capture, core
// callback, network and lead simulation) with the default network, per
// period length, without and with the faults that add work. x-real-time is
// the period's duration over the time it takes.
func BenchmarkPeriod(b *testing.B) {
	for _, ms := range []int{5, 20, 100} {
		for _, fc := range []struct {
			name   string
			faults []Fault
		}{
			{"clean", nil},
			{"drift+hum+dropout", []Fault{FaultDrift, FaultHum, FaultDropout}},
		} {
			b.Run(fmt.Sprintf("%dms/%s", ms, fc.name), func(b *testing.B) {
				bn, err := Open(Config{PeriodMS: ms, Faults: fc.faults})
				if err != nil {
					b.Fatal(err)
				}
				bn.Close() // stop the goroutine; drive the device here
				r := bn.rig
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					r.runPeriod()
				}
				ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
				b.ReportMetric(float64(ms)*1e6/ns, "x-real-time")
			})
		}
	}
}

// BenchmarkStream measures the unpaced bench end to end as the engine sees
// it: a writer keeps the playout queue full of noise while the benchmark
// reads one second of both inputs per operation.
func BenchmarkStream(b *testing.B) {
	bn, err := Open(Config{Seed: 1})
	if err != nil {
		b.Fatal(err)
	}
	defer bn.Close()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go func() {
		r := rand.New(rand.NewPCG(1, 2))
		chunk := make([]float64, 4800)
		for ctx.Err() == nil {
			for i := range chunk {
				chunk[i] = max(-1, min(1, 0.3*r.NormFloat64()))
			}
			if _, err := bn.Write(ctx, chunk); err != nil {
				return
			}
		}
	}()
	buf := [][]float64{make([]float64, 4096), make([]float64, 4096)}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		for got := 0; got < testRate; {
			n, _, err := bn.Read(ctx, buf)
			if err != nil {
				b.Fatal(err)
			}
			got += n
		}
	}
	ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
	b.ReportMetric(1e9/ns, "x-real-time")
}
