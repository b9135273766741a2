package simulate

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestKernelDesign checks the interpolation kernel against Kaiser's window
// design formulas (J. F. Kaiser 1974; from memory): for a transition band
// from Passband to 1 − Passband and a span of 2·HalfLength samples, the
// ripple in the pass band and the leak in the stop band are both about
// δ = 10^(−A/20) with A = 8 + 2.285·Δω·span dB. The check allows 2δ.
// It also checks the property that makes the interpolated signal pass
// through its samples: sinc(t) vanishes at the non-zero integers
// (from memory), so κ(k) = δ_k.
func TestKernelDesign(t *testing.T) {
	cases := []struct {
		name     string
		half     int
		passband float64
	}{
		{"default", DefaultHalfLength, DefaultPassband},
		{"short", 8, 0.4},
		{"long narrow", 32, 0.45},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			k := newKernel(c.half, c.passband)
			a := 8 + 2.285*2*math.Pi*(1-2*c.passband)*float64(2*c.half) // Kaiser's formula (from memory)
			delta := math.Pow(10, -a/20)
			pass, stop := 0.0, 0.0
			for f := 0.0; f <= c.passband; f += 0.002 {
				pass = math.Max(pass, math.Abs(k.response(f)-1))
			}
			for f := 1 - c.passband; f <= 3; f += 0.002 {
				stop = math.Max(stop, math.Abs(k.response(f)))
			}
			if pass > 2*delta || stop > 2*delta {
				t.Errorf("pass-band ripple %.2e, stop-band leak %.2e; Kaiser's formula gives δ = %.2e (A = %.1f dB)", pass, stop, delta, a)
			}
			t.Logf("A = %.1f dB: ripple %.2e, leak %.2e, K(rate) = %.2e", a, pass, stop, k.response(1))
			if e := math.Abs(k.response(0) - 1); e > 1e-13 {
				t.Errorf("K(0) = 1 %+.2e; the kernel is scaled to unit area", e)
			}
			for i := -c.half; i < c.half; i++ {
				want := 0.0
				if i == 0 {
					want = 1
				}
				if v := k.eval(float64(i)); math.Abs(v-want) > 1e-15 {
					t.Errorf("κ(%d) = %g, want %g", i, v, want)
				}
			}
		})
	}
}

// TestKernelSegments checks that the polynomial segments reproduce the
// kernel (the scaled one) at random points to 1e−13.
func TestKernelSegments(t *testing.T) {
	const tol = 1e-13
	r := rand.New(rand.NewPCG(5, 6))
	for _, half := range []int{MinHalfLength, DefaultHalfLength, MaxHalfLength} {
		k := newKernel(half, DefaultPassband)
		for range 5000 {
			seg := r.IntN(2*half) - half
			th := r.Float64()
			got := k.segment(seg, th)
			want := k.eval(float64(seg)+th) / k.area
			if math.Abs(got-want) > tol {
				t.Fatalf("half %d: segment %d at θ = %g: %.17g, κ gives %.17g", half, seg, th, got, want)
			}
		}
	}
}

// TestBesselI0 checks I₀ against tabulated values (Abramowitz & Stegun
// Table 9.8, from memory): I₀(1) = 1.266065878, I₀(5) = 27.23987182,
// I₀(10) = 2815.716628.
func TestBesselI0(t *testing.T) {
	for _, c := range []struct{ x, want float64 }{
		{0, 1}, {1, 1.266065878}, {5, 27.23987182}, {10, 2815.716628},
	} {
		if got := besselI0(c.x); math.Abs(got/c.want-1) > 1e-9 {
			t.Errorf("I₀(%g) = %.10g, want %.10g", c.x, got, c.want)
		}
	}
}

// TestDerivativeFilters checks the fitted derivative filters against the
// ideal responses (jΩ)ʲ·e^{−jΩ·half} of the first and second derivative
// (from memory) over the pass band, relative to the ideal, within 2e−5
// (2e−4 dB).
func TestDerivativeFilters(t *testing.T) {
	const tol = 2e-5
	for _, j := range []int{1, 2} {
		taps := derivFIR(DefaultHalfLength, j, DefaultPassband)
		worst := 0.0
		for f := 0.001; f <= DefaultPassband; f += 0.001 {
			w := 2 * math.Pi * f
			var re, im float64
			for m, v := range taps {
				re += v * math.Cos(w*float64(m-DefaultHalfLength))
				im -= v * math.Sin(w*float64(m-DefaultHalfLength))
			}
			var wr, wi float64 // (jΩ)ʲ
			if j == 1 {
				wi = w
			} else {
				wr = -w * w
			}
			e := math.Hypot(re-wr, im-wi) / math.Pow(w, float64(j))
			worst = math.Max(worst, e)
		}
		if worst > tol {
			t.Errorf("derivative %d: worst relative error %.2e over the pass band", j, worst)
		}
		t.Logf("derivative %d: worst relative error %.2e", j, worst)
	}
}

// response returns the continuous Fourier transform of the scaled kernel,
// K(f) = ∫ κ(t)·e^{−j2πft} dt/area, at f in units of the rate (κ is even, so K is
// real), by Gauss–Legendre quadrature on each segment of the stored
// polynomials.
func (k *kernel) response(f float64) float64 {
	s := 0.0
	for seg := -k.half; seg < k.half; seg++ {
		for q, x := range glNodes {
			th := (x + 1) / 2
			t := float64(seg) + th
			s += glWeights[q] / 2 * k.segment(seg, th) * math.Cos(2*math.Pi*f*t)
		}
	}
	return s
}

// glNodes and glWeights are the 20-point Gauss–Legendre rule on [−1, 1]
// (from memory: nodes are the roots of the Legendre polynomial P₂₀, weights
// 2/((1−x²)·P₂₀′(x)²)), found by Newton's method.
var glNodes, glWeights = gaussLegendre(20)

func gaussLegendre(n int) (nodes, weights []float64) {
	nodes = make([]float64, n)
	weights = make([]float64, n)
	for i := range n {
		x := math.Cos(math.Pi * (float64(i) + 0.75) / (float64(n) + 0.5))
		var dp float64
		for range 100 {
			p0, p1 := 1.0, x
			for m := 2; m <= n; m++ {
				p0, p1 = p1, ((2*float64(m)-1)*x*p1-(float64(m)-1)*p0)/float64(m)
			}
			dp = float64(n) * (x*p1 - p0) / (x*x - 1)
			dx := p1 / dp
			x -= dx
			if math.Abs(dx) < 1e-16 {
				break
			}
		}
		p0, p1 := 1.0, x
		for m := 2; m <= n; m++ {
			p0, p1 = p1, ((2*float64(m)-1)*x*p1-(float64(m)-1)*p0)/float64(m)
		}
		dp = float64(n) * (x*p1 - p0) / (x*x - 1)
		nodes[i] = x
		weights[i] = 2 / ((1 - x*x) * dp * dp)
	}
	return nodes, weights
}
