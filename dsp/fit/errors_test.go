package fit

import (
	"errors"
	"math"
	"strings"
	"testing"

	"tonetrace/dsp/trace"
)

// divider is a resistive divider H = R2/(R1 + R2): only the ratio of R1
// and R2 matters, and the phase is 0 at every frequency.
func divider(r1, r2 float64) *Func {
	return NewFunc([]string{"R1", "R2"}, []float64{r1, r2},
		func(f float64, p []float64) complex128 { return complex(p[1]/(p[0]+p[1]), 0) })
}

// TestNotIdentifiable checks that components which act only together are
// detected from the rank of the Jacobian and named. The relations follow
// from the transfer functions: an RC section depends on R·C alone, a
// divider on R1/R2 alone, a series RLC band-pass on RC and LC alone (two
// combinations of three parts), and the Sallen-Key on C2(R1+R2) and
// R1R2C1C2 alone (REFERENCES.md §5 formula).
func TestNotIdentifiable(t *testing.T) {
	fr := logGrid(20, 20e3, 40)
	cases := []struct {
		name     string
		m        Model
		free     []string
		use      Quantity
		names    []string
		relation Relation
		message  string
	}{
		{"RC product", rcLowPass(10e3, 15e-9), []string{"R1", "C1"}, GainAndPhase, []string{"R1", "C1"}, Product,
			"fit: R1 and C1 only act through their product; fix one of them"},
		{"RC product gain only", rcLowPass(10e3, 15e-9), []string{"C1", "R1"}, GainOnly, []string{"C1", "R1"}, Product,
			"fit: C1 and R1 only act through their product; fix one of them"},
		{"divider ratio", divider(10e3, 4.7e3), []string{"R1", "R2"}, GainAndPhase, []string{"R1", "R2"}, Ratio,
			"fit: R1 and R2 only act through their ratio R1/R2; fix one of them"},
		{"RLC three parts", rlcBandPass(100, 10e-3, 100e-9), []string{"R1", "L1", "C1"}, GainAndPhase, []string{"R1", "L1", "C1"}, Combination,
			"fit: R1, L1 and C1 cannot all be fitted from this trace: changing them together in a certain way leaves the response unchanged; fix one of them"},
		{"Sallen-Key three parts", sallenKey(10e3, 10e3, 22e-9, 10e-9), []string{"R1", "C1", "C2"}, GainAndPhase, []string{"R1", "C1", "C2"}, Combination,
			"fit: R1, C1 and C2 cannot all be fitted"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Fit(c.m, synth(c.m, fr), c.free, Options{Use: c.use})
			var ni *NotIdentifiableError
			if !errors.As(err, &ni) {
				t.Fatalf("error %v, want *NotIdentifiableError", err)
			}
			if strings.Join(ni.Names, ",") != strings.Join(c.names, ",") || ni.Relation != c.relation || ni.Fix != 1 {
				t.Errorf("got %+v, want names %v relation %v", ni, c.names, c.relation)
			}
			if !strings.HasPrefix(err.Error(), c.message) {
				t.Errorf("message %q, want it to start %q", err, c.message)
			}
		})
	}
}

// TestNoInfluence checks that a free component that cannot change the
// fitted quantity is named: C3 across an ideal source (it draws current
// but the source holds the voltage), and a divider's resistors when only
// the phase is fitted (a divider has no phase shift).
func TestNoInfluence(t *testing.T) {
	fr := logGrid(20, 20e3, 40)
	cases := []struct {
		name    string
		m       Model
		free    []string
		use     Quantity
		names   []string
		message string
	}{
		{"capacitor across the source", rcLowPass(10e3, 15e-9), []string{"C1", "C3"}, GainAndPhase, []string{"C3"},
			"fit: changing C3 does not change the response over the measured range (20 Hz to 20 kHz): it cannot be fitted from this trace"},
		{"divider phase only", divider(10e3, 4.7e3), []string{"R1", "R2"}, PhaseOnly, []string{"R1", "R2"},
			"fit: changing R1 or R2 does not change the phase over the measured range (20 Hz to 20 kHz): they cannot be fitted from this trace"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Fit(c.m, synth(c.m, fr), c.free, Options{Use: c.use})
			var ni *NoInfluenceError
			if !errors.As(err, &ni) {
				t.Fatalf("error %v, want *NoInfluenceError", err)
			}
			if strings.Join(ni.Names, ",") != strings.Join(c.names, ",") {
				t.Errorf("names %v, want %v", ni.Names, c.names)
			}
			if !strings.HasPrefix(err.Error(), c.message) {
				t.Errorf("message %q, want it to start %q", err, c.message)
			}
		})
	}
}

// TestErrors checks every other error Fit reports, and that each says what
// is wrong and what to do.
func TestErrors(t *testing.T) {
	fr := logGrid(20, 20e3, 20)
	good := synth(rcLowPass(10e3, 15e-9), fr)
	with := func(i int, p trace.Point) []trace.Point {
		out := append([]trace.Point(nil), good...)
		out[i] = p
		return out
	}
	cases := []struct {
		name  string
		m     Model
		meas  []trace.Point
		free  []string
		opts  Options
		is    error    // sentinel, or nil
		as    any      // pointer to a typed error, or nil
		parts []string // substrings of the message
	}{
		{name: "unknown component", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"R9"},
			as: new(*UnknownComponentError), parts: []string{`unknown component "R9"`, "the model has R1, C1, C3"}},
		{name: "named twice", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1", "c1"},
			parts: []string{"C1 is named twice"}},
		{name: "nothing free", m: rcLowPass(10e3, 15e-9), meas: good, free: nil,
			parts: []string{"no free components", "R1, C1 or C3"}},
		{name: "fewer values than components", m: sallenKey(10e3, 10e3, 22e-9, 10e-9), meas: good[:1], free: []string{"R1", "C1", "C2"},
			is: ErrTooFewPoints, parts: []string{"2 measured values (1 point, fitting gain and phase)", "3 free components", "measure more points"}},
		{name: "fewer values gain only", m: sallenKey(10e3, 10e3, 22e-9, 10e-9), meas: good[:1], free: []string{"C1", "C2"},
			opts: Options{Use: GainOnly}, is: ErrTooFewPoints, parts: []string{"1 measured value (1 point, fitting gain) for 2 free components"}},
		{name: "empty trace", m: rcLowPass(10e3, 15e-9), meas: nil, free: []string{"C1"},
			parts: []string{"no points"}},
		{name: "zero response", m: rcLowPass(10e3, 15e-9), meas: with(3, trace.NewPoint(fr[3], 0)), free: []string{"C1"},
			parts: []string{"point 4", "not finite", "drop the point"}},
		{name: "NaN frequency", m: rcLowPass(10e3, 15e-9), meas: with(2, trace.NewPoint(math.NaN(), 1)), free: []string{"C1"},
			parts: []string{"point 3", "finite"}},
		{name: "negative nominal", m: rcLowPass(-10e3, 15e-9), meas: good, free: []string{"R1"},
			parts: []string{"R1 has nominal value -10000", "positive"}},
		{name: "start for unknown", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{Start: map[string]float64{"C9": 1e-9}}, as: new(*UnknownComponentError), parts: []string{`"C9"`}},
		{name: "start for fixed", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{Start: map[string]float64{"R1": 1e3}}, parts: []string{"R1, which is not free"}},
		{name: "zero start", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{Start: map[string]float64{"c1": 0}}, parts: []string{"C1 has start value 0"}},
		{name: "negative GainU", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{GainU: -1}, parts: []string{"Options.GainU", "default 0.1 dB"}},
		{name: "NaN PhaseU", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{PhaseU: math.NaN()}, parts: []string{"Options.PhaseU"}},
		{name: "bad Use", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{Use: 7}, parts: []string{"Options.Use is 7"}},
		{name: "bad Sigma", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{Sigma: -1}, parts: []string{"Options.Sigma"}},
		{name: "negative iterations", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{MaxIterations: -1}, parts: []string{"Options.MaxIterations"}},
		{name: "negative starts", m: rcLowPass(10e3, 15e-9), meas: good, free: []string{"C1"},
			opts: Options{Starts: -2}, parts: []string{"Options.Starts"}},
		{name: "model fails", m: NewFunc([]string{"R"}, []float64{1}, func(f float64, p []float64) complex128 { return complex(math.Inf(1), 0) }),
			meas: good, free: []string{"R"}, parts: []string{"cannot be evaluated at the starting values", "not finite"}},
		{name: "no convergence", m: sallenKey(10e3, 10e3, 1e-6, 1e-12), meas: synth(sallenKey(10e3, 10e3, 22e-9, 10e-9), fr), free: []string{"C1", "C2"},
			opts: Options{MaxIterations: 2, Starts: 1}, as: new(*NotConvergedError),
			parts: []string{"the fit did not converge after 2 iterations; check the measured trace and the starting values"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Fit(c.m, c.meas, c.free, c.opts)
			if err == nil {
				t.Fatal("no error")
			}
			if c.is != nil && !errors.Is(err, c.is) {
				t.Errorf("error %v is not %v", err, c.is)
			}
			if c.as != nil && !errors.As(err, c.as) {
				t.Errorf("error %v is not a %T", err, c.as)
			}
			if !strings.HasPrefix(err.Error(), "fit: ") {
				t.Errorf("message %q does not start with the package name", err)
			}
			for _, p := range c.parts {
				if !strings.Contains(err.Error(), p) {
					t.Errorf("message %q lacks %q", err, p)
				}
			}
		})
	}
}

// TestNotConvergedKeepsResult checks that a fit that runs out of
// iterations still returns its best values, marked not converged.
func TestNotConvergedKeepsResult(t *testing.T) {
	fr := logGrid(20, 20e3, 20)
	res, err := Fit(sallenKey(10e3, 10e3, 1e-6, 1e-12), synth(sallenKey(10e3, 10e3, 22e-9, 10e-9), fr),
		[]string{"C1", "C2"}, Options{MaxIterations: 2, Starts: 1})
	var nc *NotConvergedError
	if !errors.As(err, &nc) || nc.Iterations != 2 {
		t.Fatalf("error %v, want *NotConvergedError after 2 iterations", err)
	}
	if res.Converged || len(res.Components) != 2 || !(res.Components[0].Value > 0) {
		t.Errorf("result %+v, want two values marked not converged", res)
	}
}
