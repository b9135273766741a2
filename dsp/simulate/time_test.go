package simulate

import (
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"tonetrace/dsp/mna"
	"tonetrace/dsp/tone"
)

// transientTol bounds the difference between the simulated and the
// analytic step and impulse responses of the RC low-pass, once the
// interpolation kernel has passed (a few 1e−7 are the kernel's own
// ripple).
const transientTol = 2e-6

// TestStepResponseRC checks the step response of the RC low-pass
// (R = 10 kΩ, C = 15 nF, τ = RC = 150 µs) against the handbook formula
// y(t) = 1 − e^{−t/RC} (from memory).
//
// The samples u[n] = 1 for n ≥ 0 pass through the band-limited
// interpolation as a smooth step that goes from 0 at sample Latency()−1 to
// 1 at sample Latency(): an ideal step at t₀ = (Latency() − ½)/rate, with
// Gibbs ringing over the kernel's span. What the ringing leaves in the RC
// decays with the RC's own time constant (1e−4 at 2·Latency()), so from
// 4·Latency() on the output must follow 1 − e^{−(t − t₀)/RC}; at n = 0,
// before any input has arrived, it must be exactly 0.
func TestStepResponseRC(t *testing.T) {
	const r, c = 10e3, 15e-9
	sim, err := New(rcLowPass(r, c), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	d := sim.Latency()
	n := 40 * d
	u := make([]float64, n)
	for i := range u {
		u[i] = 1
	}
	y := make([]float64, n)
	sim.Process(y, u)
	if y[0] != 0 {
		t.Errorf("y[0] = %g; the output cannot respond before the input", y[0])
	}
	t0 := (float64(d) - 0.5) / testRate
	worst := 0.0
	for i := 4 * d; i < n; i++ {
		want := 1 - math.Exp(-(float64(i)/testRate-t0)/(r*c)) // 1 − e^{−t/RC}, handbook (from memory)
		e := math.Abs(y[i] - want)
		worst = math.Max(worst, e)
		if e > transientTol {
			t.Fatalf("step response at sample %d: %.9f, 1 − e^{−t/RC} gives %.9f", i, y[i], want)
		}
	}
	t.Logf("step response: worst deviation %.2e after sample %d", worst, 4*d)
}

// TestImpulseResponseRC checks the response to one sample of 1 (an
// impulse of area 1/rate) against the RC low-pass's impulse response
// h(t) = e^{−t/RC}/RC (handbook formula, from memory), delayed by
// Latency(): y[n] = e^{−(n − Latency())/(rate·RC)}/(rate·RC) once the
// kernel has passed; the sum of the response is the 0 Hz gain, 1.
func TestImpulseResponseRC(t *testing.T) {
	const r, c = 10e3, 15e-9
	sim, err := New(rcLowPass(r, c), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	d := sim.Latency()
	n := 60 * d
	u := make([]float64, n)
	u[0] = 1
	y := make([]float64, n)
	sim.Process(y, u)
	a := 1 / (testRate * r * c)
	sum := 0.0
	for i := range y {
		sum += y[i]
		if i < 2*d {
			continue
		}
		want := a * math.Exp(-float64(i-d)*a) // e^{−t/RC}/RC, handbook (from memory)
		if math.Abs(y[i]-want) > transientTol*a {
			t.Fatalf("impulse response at sample %d: %.9g, e^{−t/RC}/RC gives %.9g", i, y[i], want)
		}
	}
	// 0 Hz gain of the RC low-pass is 1 (REFERENCES.md §5: H = 1/(1+jωRC)).
	if math.Abs(sum-1) > transientTol {
		t.Errorf("sum of the impulse response %.9f; the 0 Hz gain is 1", sum)
	}
}

// TestLongRun runs the 20-element network for 10⁶ samples (2·10⁵ with
// -short) of a 1 kHz tone: the gain and phase measured at the end must
// equal those at the start (no drift of the recursion), and after the tone
// stops the output must decay to nothing. The RC low-pass driven by a
// constant for as long must hold its 0 Hz gain of 1 (REFERENCES.md §5).
func TestLongRun(t *testing.T) {
	const driftTol = 1e-9 // relative change of H between start and end
	total := 1_000_000
	if testing.Short() {
		total = 200_000
	}
	sim, err := New(network20(), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	const f = 1000
	x := make([]float64, total)
	for n := range x {
		cyc := f * float64(n) / testRate
		cyc -= math.Floor(cyc)
		x[n] = 0.5 * math.Cos(2*math.Pi*cyc)
	}
	y := make([]float64, total)
	sim.Process(y, x)
	est, err := tone.NewEstimator(testRate)
	if err != nil {
		t.Fatal(err)
	}
	lat := sim.Latency()
	const nb = 4800 // 100 cycles
	ratio := func(start int) complex128 {
		ex, err := est.Fit(x[start:start+nb], f)
		if err != nil {
			t.Fatal(err)
		}
		ey, err := est.Fit(y[start+lat:start+lat+nb], f)
		if err != nil {
			t.Fatal(err)
		}
		return ey.Phasor / ex.Phasor
	}
	first := ratio(48000) // after 1 s of settling (slowest pole 96.5 rad/s)
	last := ratio(total - nb - lat)
	if e := cmplx.Abs(last/first - 1); e > driftTol {
		t.Errorf("H drifted by %.2e (relative) over %d samples: %s then %s", e, total, fmtC(first), fmtC(last))
	}
	// The AC solve's prediction at 1 kHz.
	if want := acResponse(t, network20(), f); cmplx.Abs(last/want-1) > 1e-5 {
		t.Errorf("H after %d samples %s, AC solve %s", total, fmtC(last), fmtC(want))
	}
	// Silence: the state must decay (slowest pole −96.5 rad/s: e^{−96.5·1 s}).
	zero := make([]float64, 48000)
	out := make([]float64, len(zero))
	sim.Process(out, zero)
	if v := math.Abs(out[len(out)-1]); v > 1e-30 {
		t.Errorf("output %g one second after the input stopped; it should have decayed", v)
	}

	rc, err := New(rcLowPass(10e3, 15e-9), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	for n := range x {
		x[n] = 1
	}
	rc.Process(y, x)
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range y[total-10000:] {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	if math.Abs(lo-1) > transientTol || math.Abs(hi-1) > transientTol || hi-lo > 1e-12 {
		t.Errorf("RC at 0 Hz after %d samples: output in [%.12f, %.12f]; want 1 and steady", total, lo, hi)
	}
}

// TestReset checks that Reset returns to rest: after a burst of noise and
// Reset, the output equals a fresh simulator's, sample for sample.
func TestReset(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	noise := make([]float64, 5000)
	for i := range noise {
		noise[i] = r.NormFloat64()
	}
	for _, d := range []*mna.Descriptor{network20(), differentiator()} {
		a, err := New(d, testRate, Options{})
		if err != nil {
			t.Fatal(err)
		}
		b, err := New(d, testRate, Options{})
		if err != nil {
			t.Fatal(err)
		}
		tmp := make([]float64, 1234)
		a.Process(tmp, noise[:1234])
		a.Reset()
		ya := make([]float64, len(noise))
		yb := make([]float64, len(noise))
		a.Process(ya, noise)
		b.Process(yb, noise)
		for i := range ya {
			if ya[i] != yb[i] {
				t.Fatalf("after Reset sample %d is %g, a fresh simulator gives %g", i, ya[i], yb[i])
			}
		}
	}
}

// TestChunking checks that consecutive calls behave as one long call,
// whatever the block sizes (seeded PCG), and that dst may alias src.
func TestChunking(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	x := make([]float64, 20000)
	for i := range x {
		x[i] = r.NormFloat64()
	}
	for _, d := range []*mna.Descriptor{network20(), doubleDifferentiator()} {
		whole, err := New(d, testRate, Options{})
		if err != nil {
			t.Fatal(err)
		}
		want := make([]float64, len(x))
		whole.Process(want, x)
		parts, err := New(d, testRate, Options{})
		if err != nil {
			t.Fatal(err)
		}
		got := append([]float64(nil), x...)
		for i := 0; i < len(got); {
			n := min(r.IntN(300), len(got)-i)
			parts.Process(got[i:i+n], got[i:i+n]) // in place
			i += n
		}
		for i := range got {
			if got[i] != want[i] {
				t.Fatalf("sample %d: %g in blocks, %g in one call", i, got[i], want[i])
			}
		}
	}
}

// TestProcessAllocs proves that Process does not allocate, on the plain
// path and on the path with derivative taps.
func TestProcessAllocs(t *testing.T) {
	for _, d := range []*mna.Descriptor{network20(), differentiator()} {
		sim, err := New(d, testRate, Options{})
		if err != nil {
			t.Fatal(err)
		}
		src := make([]float64, 512)
		for i := range src {
			src[i] = math.Sin(float64(i))
		}
		dst := make([]float64, len(src))
		if a := testing.AllocsPerRun(100, func() { sim.Process(dst, src) }); a != 0 {
			t.Errorf("Process allocates %v times per call", a)
		}
	}
}

// TestProcessPanics checks the panic on a length mismatch (a programmer
// mistake).
func TestProcessPanics(t *testing.T) {
	sim, err := New(rcLowPass(10e3, 15e-9), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer func() {
		if recover() == nil {
			t.Error("Process with len(dst) ≠ len(src) did not panic")
		}
	}()
	sim.Process(make([]float64, 3), make([]float64, 4))
}

// TestUpdate turns a trimmer mid-stream: the output must not step at the
// change by more than the tone's own largest sample-to-sample step, and
// must then settle to the new network's AC prediction. Without keeping
// the state (a restart from rest) the step would be the whole output
// level, which the test also shows.
func TestUpdate(t *testing.T) {
	cases := []struct {
		name   string
		before *mna.Descriptor
		after  *mna.Descriptor
		f      float64
	}{
		{"RC: R 10 kΩ → 15 kΩ", rcLowPass(10e3, 15e-9), rcLowPass(15e3, 15e-9), 1000},
		{"RC: C 15 nF → 22 nF", rcLowPass(10e3, 15e-9), rcLowPass(10e3, 22e-9), 1000},
		{"20 elements: Rf 22 kΩ → 33 kΩ", network20(), network20With(33e3), 300},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sim, err := New(c.before, testRate, Options{})
			if err != nil {
				t.Fatal(err)
			}
			const pre, post = 48000, 9600
			x := make([]float64, pre+post)
			for n := range x {
				x[n] = 0.5 * math.Sin(2*math.Pi*c.f*float64(n)/testRate)
			}
			y := make([]float64, len(x))
			sim.Process(y[:pre], x[:pre])
			if err := sim.Update(c.after); err != nil {
				t.Fatal(err)
			}
			sim.Process(y[pre:], x[pre:])
			ownStep := 0.0
			for n := pre - 4800; n < pre; n++ {
				ownStep = math.Max(ownStep, math.Abs(y[n]-y[n-1]))
			}
			if jump := math.Abs(y[pre] - y[pre-1]); jump > ownStep {
				t.Errorf("step of %.3g at the update, the signal's own steps reach %.3g", jump, ownStep)
			}
			// A restart from rest steps by the output level itself.
			fresh, err := New(c.after, testRate, Options{})
			if err != nil {
				t.Fatal(err)
			}
			yf := make([]float64, 1)
			fresh.Process(yf, x[pre:pre+1])
			if math.Abs(yf[0]-y[pre-1]) <= ownStep {
				t.Errorf("the test cannot tell: a restart would step by only %.3g", math.Abs(yf[0]-y[pre-1]))
			}
			// Settled: the new response, by the AC solve.
			est, err := tone.NewEstimator(testRate)
			if err != nil {
				t.Fatal(err)
			}
			nb, err := tone.CycleLength(c.f, testRate, 0.02)
			if err != nil {
				t.Fatal(err)
			}
			start := len(x) - nb - sim.Latency()
			ex, _ := est.Fit(x[start:start+nb], c.f)
			ey, _ := est.Fit(y[start+sim.Latency():start+sim.Latency()+nb], c.f)
			got, want := ey.Phasor/ex.Phasor, acResponse(t, c.after, c.f)
			if eg, ep := dB(got/want), deg(got/want); math.Abs(eg) > gainTolDB || math.Abs(ep) > phaseTolDeg {
				t.Errorf("after the update %s, AC solve of the new network %s", fmtC(got), fmtC(want))
			}
		})
	}
}

// TestUpdateErrors checks that a descriptor of another network is refused
// and leaves the simulator running as before.
func TestUpdateErrors(t *testing.T) {
	cases := []struct {
		name string
		d    *mna.Descriptor
		want error
	}{
		{"other size", rlcBandPass(), ErrMismatch},
		{"other output", func() *mna.Descriptor { d := rcLowPass(10e3, 15e-9); d.Out = 0; return d }(), ErrMismatch},
		{"nil", nil, ErrDescriptor},
		{"unstable", func() *mna.Descriptor {
			d := rcLowPass(10e3, 15e-9)
			d.G.Set(1, 1, -d.G.At(1, 1)) // a negative resistance to ground at the output
			return d
		}(), ErrUnstable},
	}
	x := make([]float64, 2000)
	for i := range x {
		x[i] = math.Sin(0.01 * float64(i))
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a, _ := New(rcLowPass(10e3, 15e-9), testRate, Options{})
			b, _ := New(rcLowPass(10e3, 15e-9), testRate, Options{})
			ya := make([]float64, len(x))
			yb := make([]float64, len(x))
			a.Process(ya[:1000], x[:1000])
			b.Process(yb[:1000], x[:1000])
			err := a.Update(c.d)
			if !errors.Is(err, c.want) {
				t.Fatalf("Update: %v, want %v", err, c.want)
			}
			a.Process(ya[1000:], x[1000:])
			b.Process(yb[1000:], x[1000:])
			for i := range ya {
				if ya[i] != yb[i] {
					t.Fatalf("sample %d changed after a refused update", i)
				}
			}
		})
	}
}

// TestExactDiscretisation checks that the recursion is the exact solution
// of the network's equation for the interpolated input, not an
// approximation: for the RC low-pass, y′ = (ũ − y)/RC, the output at each
// sample must equal the variation-of-constants formula
// y(t+T) = e^{−T/RC}·y(t) + ∫₀ᵀ e^{−(T−θ)/RC}/RC·ũ(t+θ) dθ (from memory)
// integrated by 20-point Gauss–Legendre quadrature on each sample
// interval, with ũ summed from the kernel function itself (not from the
// polynomial segments the simulator uses), for a seeded random input.
func TestExactDiscretisation(t *testing.T) {
	const tol = 1e-12
	const r, c = 10e3, 15e-9
	sim, err := New(rcLowPass(r, c), testRate, Options{})
	if err != nil {
		t.Fatal(err)
	}
	k := sim.kern
	rng := rand.New(rand.NewPCG(9, 10))
	u := make([]float64, 400)
	for i := range u {
		u[i] = rng.NormFloat64()
	}
	y := make([]float64, len(u))
	sim.Process(y, u)

	T := 1.0 / testRate
	tau := r * c
	half := k.half
	uTilde := func(n int, th float64) float64 { // ũ((n+θ)T)
		s := 0.0
		for m := 0; m < 2*half && m <= n; m++ {
			s += u[n-m] * k.eval(th+float64(m-half)) / k.area
		}
		return s
	}
	ref := 0.0
	for n := range u {
		if e := math.Abs(y[n] - ref); e > tol {
			t.Fatalf("sample %d: simulated %.15f, quadrature %.15f (error %.1e)", n, y[n], ref, e)
		}
		next := math.Exp(-T/tau) * ref
		for q, x := range glNodes {
			th := (x + 1) / 2
			next += glWeights[q] / 2 * T * math.Exp(-(1-th)*T/tau) / tau * uTilde(n, th)
		}
		ref = next
	}
}
