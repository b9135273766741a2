package simulate

import (
	"math/rand/v2"
	"testing"

	"tonetrace/dsp/mna"
)

// BenchmarkProcess runs one second of noise at 48 kHz through each network
// and reports nanoseconds per sample and the speed as a multiple of real
// time.
func BenchmarkProcess(b *testing.B) {
	for _, c := range []struct {
		name string
		d    *mna.Descriptor
	}{
		{"rc", rcLowPass(10e3, 15e-9)},
		{"sallenkey", sallenKey()},
		{"net20", network20()},
		{"differentiator", differentiator()},
	} {
		b.Run(c.name, func(b *testing.B) {
			sim, err := New(c.d, testRate, Options{})
			if err != nil {
				b.Fatal(err)
			}
			r := rand.New(rand.NewPCG(7, 8))
			src := make([]float64, testRate)
			for i := range src {
				src[i] = r.NormFloat64() * 0.1
			}
			dst := make([]float64, len(src))
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				sim.Process(dst, src)
			}
			ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N) / float64(len(src))
			b.ReportMetric(ns, "ns/sample")
			b.ReportMetric(1e9/testRate/ns, "x-realtime")
		})
	}
}

// BenchmarkUpdate measures swapping in a changed descriptor (the cost of
// turning a trimmer), which redoes the reduction and discretisation.
func BenchmarkUpdate(b *testing.B) {
	for _, c := range []struct {
		name string
		d    *mna.Descriptor
	}{
		{"rc", rcLowPass(10e3, 15e-9)},
		{"net20", network20()},
	} {
		b.Run(c.name, func(b *testing.B) {
			sim, err := New(c.d, testRate, Options{})
			if err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			for b.Loop() {
				if err := sim.Update(c.d); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
