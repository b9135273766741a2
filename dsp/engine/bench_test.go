package engine

import (
	"context"
	"math"
	"testing"
)

// BenchmarkSweep runs whole measurements on the unpaced test device and
// reports the audio time they take against the wall time: sweep-s is the
// stepped sweep 20 Hz–20 kHz at 10 points per decade (first step to last
// block), min-s the sum of its per-point minimum times, audio-s the whole
// run including the start-up (quiet window, latency burst, latency
// window), x-realtime audio-s over the wall time.
func BenchmarkSweep(b *testing.B) {
	cases := []struct {
		name string
		cfg  Config
	}{
		{"steps-10-per-decade", Config{From: 20, To: 20000, PerDecade: 10}},
		{"multitone-16384x4", Config{Method: Multitone, From: 20, To: 20000, PerDecade: 10, Period: 16384, Periods: 4}},
	}
	for _, bc := range cases {
		b.Run(bc.name, func(b *testing.B) {
			b.ReportAllocs()
			var sweep, least, audio, wall float64
			for b.Loop() {
				b.StopTimer()
				d, err := startFake(newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), faults{})
				if err != nil {
					b.Fatal(err)
				}
				e := New(d, bc.cfg)
				go func() {
					for range e.Events() {
					}
				}()
				b.StartTimer()
				if err := e.Run(context.Background()); err != nil {
					b.Fatal(err)
				}
				b.StopTimer()
				d.close()
				tm := e.Result().Timing
				sweep += tm.Seconds(tm.SweepFrames)
				least += tm.Seconds(tm.MinFrames)
				audio += tm.Seconds(tm.AudioFrames)
				wall += tm.Wall.Seconds()
				b.StartTimer()
			}
			n := float64(b.N)
			if bc.cfg.Method == Steps {
				b.ReportMetric(sweep/n, "sweep-s")
				b.ReportMetric(least/n, "min-s")
			}
			b.ReportMetric(audio/n, "audio-s")
			b.ReportMetric(audio/wall, "x-realtime")
		})
	}
}
