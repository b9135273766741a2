package fit

import (
	"math/rand/v2"
	"testing"
)

// BenchmarkFit fits two capacitors of the Sallen-Key low-pass to a noisy
// 100-point trace from a start a factor 2 off.
func BenchmarkFit(b *testing.B) {
	for _, n := range []int{100} {
		fr := logGrid(20, 20e3, n)
		rng := rand.New(rand.NewPCG(1, 2))
		meas := addNoise(synth(sallenKey(10e3, 10e3, 22e-9, 10e-9), fr), 0.05, 0.5, rng)
		m := sallenKey(10e3, 10e3, 47e-9, 4.7e-9)
		free := []string{"C1", "C2"}
		b.Run("points="+itoa(n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := Fit(m, meas, free, Options{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func itoa(n int) string {
	if n == 0 {
		return "0"
	}
	s := ""
	for ; n > 0; n /= 10 {
		s = string(rune('0'+n%10)) + s
	}
	return s
}
