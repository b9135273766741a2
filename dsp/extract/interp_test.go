package extract

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// roundTol is for results that are exact up to rounding.
const roundTol = 1e-9

func TestLocalReproducesCubics(t *testing.T) {
	// Newton's divided differences through four distinct nodes reproduce
	// any cubic and its derivative exactly (interpolation theory, common
	// practice); through three, any parabola.
	p := func(x float64) (float64, float64) {
		return 1 - 2*x + 3*x*x - 0.5*x*x*x, -2 + 6*x - 1.5*x*x
	}
	rng := rand.New(rand.NewPCG(1, 1))
	for range 50 {
		x := []float64{rng.Float64(), 1 + rng.Float64(), 2 + rng.Float64(), 3 + rng.Float64()}
		y := make([]float64, 4)
		for i := range x {
			y[i], _ = p(x[i])
		}
		var l local
		l.fit(x, y)
		for _, t0 := range []float64{-1, 0.5, 1.7, 2.2, 4} {
			v, d := l.at(t0)
			wv, wd := p(t0)
			if math.Abs(v-wv) > roundTol*(1+math.Abs(wv)) || math.Abs(d-wd) > roundTol*(1+math.Abs(wd)) {
				t.Fatalf("at %v: %v, %v; want %v, %v", t0, v, d, wv, wd)
			}
		}
		// The complex form on a complex cubic.
		cp := func(x float64) complex128 {
			z := complex(x, 0)
			return complex(1, 2) + complex(0, -1)*z + complex(0.5, 0.25)*z*z*z
		}
		h := make([]complex128, 4)
		for i := range x {
			h[i] = cp(x[i])
		}
		var c clocal
		c.fit(x, h)
		v, d := c.at(1.3)
		dw := complex(0, -1) + 3*complex(0.5, 0.25)*complex(1.3*1.3, 0)
		if cmplx.Abs(v-cp(1.3)) > roundTol || cmplx.Abs(d-dw) > roundTol {
			t.Fatalf("complex cubic: %v, %v; want %v, %v", v, d, cp(1.3), dw)
		}
	}
}

func TestBiquadExact(t *testing.T) {
	// A second-order rational function is recovered exactly from four of
	// its values (Levy's equations are then consistent), and a first-order
	// one by the first-order model; checked away from the fitted points.
	h2 := func(f float64) complex128 {
		s := complex(0, f/700)
		return (0.3 + 0.7*s - 0.2*s*s) / (1 + 0.5*s + 2*s*s)
	}
	h1 := func(f float64) complex128 {
		s := complex(0, f/300)
		return (2 - s) / (1 + 0.4*s)
	}
	for _, c := range []struct {
		name  string
		order int
		h     func(float64) complex128
	}{{"second order", 2, h2}, {"first order", 1, h1}} {
		f := []float64{400, 520, 690, 900}
		z := make([]complex128, len(f))
		for i := range f {
			z[i] = c.h(f[i])
		}
		var q biquad
		if !q.fit(c.order, f, z) {
			t.Fatalf("%s: fit failed", c.name)
		}
		for _, fx := range []float64{300, 611, 1200} {
			got, dlog := q.at(math.Log10(fx))
			if e := cmplx.Abs(got/c.h(fx) - 1); e > roundTol {
				t.Errorf("%s at %v Hz: %v, want %v", c.name, fx, got, c.h(fx))
			}
			// d ln H/du by a central difference on the true function.
			const du = 1e-6
			num := (cmplx.Log(c.h(fx*math.Pow(10, du))) - cmplx.Log(c.h(fx*math.Pow(10, -du)))) / (2 * du)
			if cmplx.Abs(dlog-num) > 1e-6*(1+cmplx.Abs(num)) {
				t.Errorf("%s at %v Hz: d ln H/du %v, want %v", c.name, fx, dlog, num)
			}
		}
	}
	// A degenerate set (a constant) cannot determine the second-order model.
	var q biquad
	if q.fit(2, []float64{1, 2, 3}, []complex128{1, 1, 1}) {
		t.Errorf("constant data determined a second-order model")
	}
}

func TestLstsq(t *testing.T) {
	// Overdetermined 8×3 system: the least-squares solution satisfies the
	// normal equations AᵀA·x = Aᵀb (common practice), checked here by the
	// residual's orthogonality to every column.
	rng := rand.New(rand.NewPCG(5, 9))
	var A, A0 [maxRows][5]float64
	var b, b0 [maxRows]float64
	for i := range maxRows {
		for j := range 3 {
			A[i][j] = rng.NormFloat64()
		}
		b[i] = rng.NormFloat64()
	}
	A0, b0 = A, b
	x, ok := lstsq(&A, &b, maxRows, 3)
	if !ok {
		t.Fatal("lstsq failed on a full-rank system")
	}
	for j := range 3 {
		var dot float64
		for i := range maxRows {
			r := b0[i] - (A0[i][0]*x[0] + A0[i][1]*x[1] + A0[i][2]*x[2])
			dot += A0[i][j] * r
		}
		if math.Abs(dot) > roundTol {
			t.Errorf("residual·column %d = %g, want 0", j, dot)
		}
	}
	// Rank-deficient: two equal columns.
	for i := range maxRows {
		A0[i][1] = A0[i][0]
	}
	if _, ok := lstsq(&A0, &b0, maxRows, 3); ok {
		t.Error("lstsq accepted a rank-deficient system")
	}
}
