package fit

import (
	"math"
	"math/rand/v2"

	"tonetrace/dsp/trace"
)

// Analytic models for the tests. Each formula is the textbook transfer
// function of the network, checked against the ngspice values of
// REFERENCES.md §5 in TestModelsAgainstSpice before any fit relies on it.

// rcLowPass is a first-order RC low-pass, H = 1/(1 + jωRC), with a third
// component C3 across the (ideal) source: it is in the circuit but cannot
// change the response.
func rcLowPass(r, c float64) *Func {
	return NewFunc([]string{"R1", "C1", "C3"}, []float64{r, c, 100e-9},
		func(f float64, p []float64) complex128 {
			w := 2 * math.Pi * f
			return 1 / complex(1, w*p[0]*p[1])
		})
}

// rlcBandPass is a series RLC with the output across R:
// H = jωRC / (1 − ω²LC + jωRC).
func rlcBandPass(r, l, c float64) *Func {
	return NewFunc([]string{"R1", "L1", "C1"}, []float64{r, l, c},
		func(f float64, p []float64) complex128 {
			w := 2 * math.Pi * f
			rr, ll, cc := p[0], p[1], p[2]
			return complex(0, w*rr*cc) / complex(1-w*w*ll*cc, w*rr*cc)
		})
}

// sallenKey is the unity-gain Sallen-Key low-pass of REFERENCES.md §5,
// H = 1/(1 + s·C2(R1+R2) + s²R1R2C1C2).
func sallenKey(r1, r2, c1, c2 float64) *Func {
	return NewFunc([]string{"R1", "R2", "C1", "C2"}, []float64{r1, r2, c1, c2},
		func(f float64, p []float64) complex128 {
			s := complex(0, 2*math.Pi*f)
			return 1 / (1 + s*complex(p[3]*(p[0]+p[1]), 0) + s*s*complex(p[0]*p[1]*p[2]*p[3], 0))
		})
}

// logGrid returns n frequencies spaced evenly in log from lo to hi (Hz).
func logGrid(lo, hi float64, n int) []float64 {
	f := make([]float64, n)
	for i := range f {
		f[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	return f
}

// synth returns the noiseless trace of m at freqs with its nominal values.
func synth(m Model, freqs []float64) []trace.Point {
	h := make([]complex128, len(freqs))
	if err := m.Evaluate(h, freqs, nil, nil); err != nil {
		panic(err)
	}
	return points(freqs, h)
}

// points returns the noiseless trace with responses h at freqs.
func points(freqs []float64, h []complex128) []trace.Point {
	pts := make([]trace.Point, len(freqs))
	for i, f := range freqs {
		pts[i] = trace.NewPoint(f, h[i])
	}
	return pts
}

// addNoise returns pts with Gaussian noise of σdB on the gain and σdeg on
// the phase, and those σ written into the uncertainty columns.
func addNoise(pts []trace.Point, sdB, sdeg float64, rng *rand.Rand) []trace.Point {
	out := make([]trace.Point, len(pts))
	for i, p := range pts {
		q := trace.FromPolar(p.Freq, p.GainDB()+sdB*rng.NormFloat64(), p.PhaseDeg()+sdeg*rng.NormFloat64())
		q.GainU, q.PhaseU = sdB, sdeg
		out[i] = q
	}
	return out
}

// relErr returns |got − want|/|want|.
func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }
