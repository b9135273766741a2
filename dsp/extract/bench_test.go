package extract

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"tonetrace/dsp/trace"
)

// benchTraces are 200-point traces (50 per decade, 10 Hz – 100 kHz) of
// several shapes, and a noisy one.
func benchTraces() map[string][]trace.Point {
	freqs := logGrid(10, 100e3, 50)[:200]
	rng := rand.New(rand.NewPCG(3, 4))
	return map[string][]trace.Point{
		"lowpass":  sample(rcLowpass, freqs),
		"bandpass": sample(rlcBandpass, freqs),
		"notch":    sample(twinT(0.01), freqs),
		"noisy":    noisy(sample(rlcBandpass, freqs), rng, 0.05, 0.3),
	}
}

func BenchmarkAnalyze(b *testing.B) {
	for _, name := range []string{"lowpass", "bandpass", "notch", "noisy"} {
		pts := benchTraces()[name]
		b.Run(fmt.Sprintf("%s/n=%d", name, len(pts)), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := Analyze(pts); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkAnalyzerInto(b *testing.B) {
	for _, name := range []string{"lowpass", "bandpass", "notch", "noisy"} {
		pts := benchTraces()[name]
		b.Run(fmt.Sprintf("%s/n=%d", name, len(pts)), func(b *testing.B) {
			var a Analyzer
			var p Params
			if err := a.AnalyzeInto(&p, pts); err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			for b.Loop() {
				_ = a.AnalyzeInto(&p, pts)
			}
		})
	}
}

// FuzzAnalyze feeds arbitrary traces — frequencies, gains and phases from
// the fuzzer — and checks that Analyze never panics, that errors carry the
// package prefix, and that every reading it returns lies inside the trace.
func FuzzAnalyze(f *testing.F) {
	add := func(pts []trace.Point) {
		buf := make([]byte, 0, 24*len(pts))
		for _, p := range pts {
			buf = appendF(buf, p.Freq)
			buf = appendF(buf, p.GainDB())
			buf = appendF(buf, p.PhaseDeg())
		}
		f.Add(buf)
	}
	add(sample(rcLowpass, logGrid(10, 100e3, 5)))
	add(sample(rlcBandpass, logGrid(10, 100e3, 5)))
	add(sample(twinT(0), logGrid(100, 10e3, 4)))
	add(sample(cookbookPeaking(1000, -6, 2), logGrid(100, 10e3, 3)))
	add(sample(rcHighpass, []float64{100, 1000, 10000}))
	f.Fuzz(func(t *testing.T, data []byte) {
		var pts []trace.Point
		for len(data) >= 24 && len(pts) < 64 {
			fr, g, ph := readF(data[0:8]), readF(data[8:16]), readF(data[16:24])
			data = data[24:]
			pts = append(pts, trace.FromPolar(fr, g, ph))
		}
		p, err := Analyze(pts)
		if err != nil {
			if len(err.Error()) < 10 || err.Error()[:9] != "extract: " {
				t.Fatalf("error without prefix: %v", err)
			}
			return
		}
		lo, hi := pts[0].Freq, pts[len(pts)-1].Freq
		in := func(f float64) bool { return math.IsNaN(f) || (f >= lo*(1-1e-12) && f <= hi*(1+1e-12)) }
		prev := 0.0
		for _, c := range p.Corners {
			if !in(c.Freq) || c.Freq < prev {
				t.Fatalf("corner at %g Hz outside [%g, %g] or out of order", c.Freq, lo, hi)
			}
			prev = c.Freq
		}
		if !in(p.Peak.Freq) || !in(p.Notch.Freq) || !in(p.ShelfMidFreq) {
			t.Fatalf("peak %g, notch %g or shelf %g Hz outside [%g, %g]", p.Peak.Freq, p.Notch.Freq, p.ShelfMidFreq, lo, hi)
		}
		if p.Shape < ShapeOther || p.Shape > ShapeShelf {
			t.Fatalf("shape %d", int(p.Shape))
		}
		_ = p.Lines()
	})
}

func appendF(b []byte, v float64) []byte {
	u := math.Float64bits(v)
	for i := range 8 {
		b = append(b, byte(u>>(8*i)))
	}
	return b
}

func readF(b []byte) float64 {
	var u uint64
	for i := range 8 {
		u |= uint64(b[i]) << (8 * i)
	}
	return math.Float64frombits(u)
}
