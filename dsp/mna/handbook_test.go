package mna

import (
	"math"
	"math/cmplx"
	"testing"

	"tonetrace/dsp/netlist"
)

// Tolerances for the handbook values, which REFERENCES.md gives to four
// decimals of dB and three to four of degrees.
const (
	tolDB  = 1e-4 // dB
	tolDeg = 1e-3 // degrees
	// tolFormula is the relative error allowed against a closed-form
	// transfer function evaluated in float64.
	tolFormula = 1e-10
)

// rcR and rcC are the parts of the first-order examples in REFERENCES §5.
const (
	rcR = 10e3
	rcC = 15e-9
)

func rcLowPass() *netlist.Netlist {
	return nl("RC low-pass", el("R1", "in out", rcR), el("C1", "out 0", rcC))
}

func rcHighPass() *netlist.Netlist {
	return nl("RC high-pass", el("C1", "in out", rcC), el("R1", "out 0", rcR))
}

type polarCheck struct {
	name    string
	f       float64 // Hz
	dB, deg float64
	noPhase bool // the source gives no phase
}

func checkPolar(t *testing.T, s *Solver, cases []polarCheck, tdb, tdeg float64) {
	t.Helper()
	for _, c := range cases {
		h := mustResponse(t, s, c.f)
		if got := db(h); math.Abs(got-c.dB) > tdb {
			t.Errorf("%s (%.6g Hz): gain %.6f dB, want %.4f dB (±%g)", c.name, c.f, got, c.dB, tdb)
		}
		if c.noPhase {
			continue
		}
		if got := deg(h); math.Abs(wrapDeg(got-c.deg)) > tdeg {
			t.Errorf("%s (%.6g Hz): phase %.6f°, want %.4f° (±%g)", c.name, c.f, got, c.deg, tdeg)
		}
	}
}

// TestFirstOrderRC checks the first-order RC table of REFERENCES §5
// ([V] ngspice-39 AC analysis), R = 10 kΩ, C = 15 nF, fc = 1061.0330 Hz,
// and the textbook forms 1/(1 + jωRC) and jωRC/(1 + jωRC).
func TestFirstOrderRC(t *testing.T) {
	fc := 1 / (2 * math.Pi * rcR * rcC)
	if math.Abs(fc-1061.0330) > 5e-5 { // REFERENCES §5: fc = 1061.0330 Hz
		t.Fatalf("fc = %.6f Hz, want 1061.0330", fc)
	}
	lp := NewSolver(mustBuild(t, rcLowPass(), Fixture{}))
	hp := NewSolver(mustBuild(t, rcHighPass(), Fixture{}))
	// REFERENCES §5 table [V: ngspice-39].
	checkPolar(t, lp, []polarCheck{
		{"low-pass 0.1·fc", 0.1 * fc, -0.0432, -5.7106, false},
		{"low-pass 0.5·fc", 0.5 * fc, -0.9691, -26.5651, false},
		{"low-pass fc", fc, -3.0103, -45.0000, false},
		{"low-pass 2·fc", 2 * fc, -6.9897, -63.4349, false},
		{"low-pass 10·fc", 10 * fc, -20.0432, -84.2894, false},
	}, tolDB, tolDeg)
	checkPolar(t, hp, []polarCheck{
		{"high-pass 0.1·fc", 0.1 * fc, -20.0432, 84.2894, false},
		{"high-pass 0.5·fc", 0.5 * fc, -6.9897, 63.4349, false},
		{"high-pass fc", fc, -3.0103, 45.0000, false},
		{"high-pass 2·fc", 2 * fc, -0.9691, 26.5651, false},
		{"high-pass 10·fc", 10 * fc, -0.0432, 5.7106, false},
	}, tolDB, tolDeg)
	// Textbook first-order forms (common practice), over six decades.
	for f := 1.0; f < 1e6; f *= 1.37 {
		s := complex(0, 2*math.Pi*f*rcR*rcC)
		if got, want := mustResponse(t, lp, f), 1/(1+s); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
			t.Errorf("low-pass %g Hz: %v, want %v", f, got, want)
		}
		if got, want := mustResponse(t, hp, f), s/(1+s); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
			t.Errorf("high-pass %g Hz: %v, want %v", f, got, want)
		}
	}
}

// TestSeriesRLC checks the series RLC band-pass of REFERENCES §5
// ([V] ngspice-39): L = 10 mH, C = 100 nF, R = 100 Ω, output across R.
func TestSeriesRLC(t *testing.T) {
	const L, C, R = 10e-3, 100e-9, 100.0
	s := NewSolver(mustBuild(t, nl("series RLC", el("L1", "in a", L), el("C1", "a out", C), el("R1", "out 0", R)), Fixture{}))
	checkPolar(t, s, []polarCheck{
		{"f0", 5032.921, 0, 0, false},             // REFERENCES §5: f0 = 5032.921 Hz, the peak
		{"f1", 4299.670, -3.0103, 45, false},      // REFERENCES §5: f1, −3.0103 dB, +45°
		{"f2", 5891.219, -3.0103, -45, false},     // REFERENCES §5: f2, −3.0103 dB, −45°
		{"1 kHz", 1000, -23.7051, 86.2574, false}, // REFERENCES §5: 1 kHz value
	}, tolDB, tolDeg)
	// The half-power and zero-phase frequencies found from the solver,
	// against the values REFERENCES §5 gives to 3 decimals (±0.0005 Hz
	// plus the bisection's width).
	const tolHz = 5.1e-4
	phase := func(f float64) float64 { return deg(mustResponse(t, s, f)) }
	gain := func(f float64) float64 { return db(mustResponse(t, s, f)) }
	half := 10 * math.Log10(0.5)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"f0", crossing(t, phase, 0, 3000, 8000), 5032.921},   // REFERENCES §5
		{"f1", crossing(t, gain, half, 3000, 5032), 4299.670}, // REFERENCES §5
		{"f2", crossing(t, gain, half, 5033, 8000), 5891.219}, // REFERENCES §5
	} {
		if math.Abs(c.got-c.want) > tolHz {
			t.Errorf("%s = %.6f Hz, want %.3f Hz", c.name, c.got, c.want)
		}
	}
	// Q = f0/BW = 3.16228 (REFERENCES §5, BW = 1591.549 Hz).
	f1, f2 := crossing(t, gain, half, 3000, 5032), crossing(t, gain, half, 5033, 8000)
	if bw := f2 - f1; math.Abs(bw-1591.549) > 2*tolHz {
		t.Errorf("bandwidth %.6f Hz, want 1591.549 Hz", bw)
	}
	if q := math.Sqrt(f1*f2) / (f2 - f1); math.Abs(q-3.16228) > 5e-6 {
		t.Errorf("Q = %.7f, want 3.16228", q)
	}
}

// TestTwinT checks the twin-T notch of REFERENCES §5 ([V] ngspice-39):
// R, R, R/2; C, C, 2C with R = 10 kΩ, C = 15 nF, ideal source, no load,
// H = (s² + ω0²)/(s² + 4ω0·s + ω0²).
func TestTwinT(t *testing.T) {
	const R, C = 10e3, 15e-9
	n := nl("twin-T",
		el("R1", "in a", R), el("R2", "a out", R), el("C3", "a 0", 2*C),
		el("C1", "in b", C), el("C2", "b out", C), el("R3", "b 0", R/2))
	s := NewSolver(mustBuild(t, n, Fixture{}))
	f0 := 1 / (2 * math.Pi * R * C)
	checkPolar(t, s, []polarCheck{
		{"0.1·f0", 0.1 * f0, -0.6567, -22.0007, false}, // REFERENCES §5
		{"0.5·f0", 0.5 * f0, -9.0908, -69.4440, false}, // REFERENCES §5
		{"0.9·f0", 0.9 * f0, -25.5631, 0, true},        // REFERENCES §5 (gain only)
		{"2·f0", 2 * f0, -9.0908, 69.4440, false},      // REFERENCES §5
	}, tolDB, tolDeg)
	// The notch: at f0 the response vanishes (to rounding).
	if h := mustResponse(t, s, f0); cmplx.Abs(h) > 1e-12 {
		t.Errorf("|H(f0)| = %g, want 0", cmplx.Abs(h))
	}
	// The closed form of REFERENCES §5.
	w0 := 2 * math.Pi * f0
	for f := 10.0; f < 1e6; f *= 1.53 {
		sj := complex(0, 2*math.Pi*f)
		want := (sj*sj + complex(w0*w0, 0)) / (sj*sj + complex(4*w0, 0)*sj + complex(w0*w0, 0))
		if got := mustResponse(t, s, f); cmplx.Abs(got-want) > 1e-9*cmplx.Abs(want) {
			t.Errorf("%g Hz: %v, want %v", f, got, want)
		}
	}
}

// TestWien checks the Wien network of REFERENCES §5: series RC into
// parallel RC, H = 1/(3 + j(x − 1/x)), x = ωRC.
func TestWien(t *testing.T) {
	const R, C = 4.7e3, 33e-9
	n := nl("Wien", el("R1", "in a", R), el("C1", "a out", C), el("R2", "out 0", R), el("C2", "out 0", C))
	s := NewSolver(mustBuild(t, n, Fixture{}))
	f0 := 1 / (2 * math.Pi * R * C)
	checkPolar(t, s, []polarCheck{
		{"f0", f0, -9.5424, 0, false},                   // REFERENCES §5: 1/3, 0°
		{"x = 0.5", 0.5 * f0, -10.5115, 26.5651, false}, // REFERENCES §5
		{"x = 2", 2 * f0, -10.5115, -26.5651, false},    // REFERENCES §5
	}, tolDB, tolDeg)
	for x := 0.01; x < 100; x *= 1.41 {
		want := 1 / complex(3, x-1/x)
		if got := mustResponse(t, s, x*f0); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
			t.Errorf("x = %g: %v, want %v", x, got, want)
		}
	}
}

// sallenKey returns the unity-gain Sallen-Key low-pass of REFERENCES §5
// with the given amplifier element between nodes b and out.
func sallenKey(r1, r2, c1, c2 float64, amp netlist.Element) *netlist.Netlist {
	return nl("Sallen-Key low-pass "+amp.Kind.String(),
		el("R1", "in a", r1), el("R2", "a b", r2), el("C1", "a out", c1), el("C2", "b 0", c2), amp)
}

// TestSallenKey checks the unity-gain Sallen-Key low-pass of REFERENCES §5
// ([V] ngspice-39): R1 = R2 = 10 kΩ, C1 = 22 nF, C2 = 10 nF,
// H = 1/(1 + s·C2(R1+R2) + s²R1R2C1C2), with the ideal amplifier (U) and
// with a unity-gain VCVS buffer (E).
func TestSallenKey(t *testing.T) {
	const r1, r2, c1, c2 = 10e3, 10e3, 22e-9, 10e-9
	for _, amp := range []netlist.Element{
		el("U1", "out b out", 0),
		el("E1", "out 0 b 0", 1),
	} {
		t.Run(amp.Kind.String(), func(t *testing.T) {
			s := NewSolver(mustBuild(t, sallenKey(r1, r2, c1, c2, amp), Fixture{}))
			const f0 = 1073.022 // REFERENCES §5
			checkPolar(t, s, []polarCheck{
				{"f0", f0, -2.5964, -90, false},             // REFERENCES §5
				{"2·f0", 2 * f0, -12.1146, -138.047, false}, // REFERENCES §5
				{"10·f0", 10 * f0, -39.9925, 0, true},       // REFERENCES §5
			}, tolDB, tolDeg)
			// "−3 dB at 1122.85 Hz" (REFERENCES §5, two decimals) is the
			// half-power point, −3.0103 dB; at −3.0000 dB it would be
			// 1121.64 Hz.
			gain := func(f float64) float64 { return db(mustResponse(t, s, f)) }
			if f3 := crossing(t, gain, 10*math.Log10(0.5), 500, 5000); math.Abs(f3-1122.85) > 0.005 {
				t.Errorf("−3 dB at %.4f Hz, want 1122.85 Hz", f3)
			}
			for f := 1.0; f < 1e6; f *= 1.29 {
				sj := complex(0, 2*math.Pi*f)
				want := 1 / (1 + sj*complex(c2*(r1+r2), 0) + sj*sj*complex(r1*r2*c1*c2, 0))
				if got := mustResponse(t, s, f); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
					t.Errorf("%g Hz: %v, want %v", f, got, want)
				}
			}
		})
	}
}

// TestLoadedRC checks the source and load of the fixture against
// REFERENCES §6 (common practice; values [V]): R = 10 kΩ, C = 15 nF,
// H = 1/(1 + (Rs+R)(1/RL + jω(C+CL))).
func TestLoadedRC(t *testing.T) {
	ideal := NewSolver(mustBuild(t, rcLowPass(), Fixture{}))
	for _, c := range []struct {
		name       string
		fx         Fixture
		dcDB, fcHz float64 // REFERENCES §6
		tolDB      float64 // half the last digit given
		err1k      *[2]float64
	}{
		{"100 Ω source, 10 kΩ line input", Fixture{SourceOhms: 100, LoadOhms: 10e3}, -6.0639, 2111.56, 5e-5, &[2]float64{-4.18, 17.96}},
		{"100 Ω source, 47 kΩ ∥ 100 pF", Fixture{SourceOhms: 100, LoadOhms: 47e3, LoadFarads: 100e-12}, -1.69, 1267.83, 5e-3, nil},
	} {
		t.Run(c.name, func(t *testing.T) {
			d := mustBuild(t, rcLowPass(), c.fx)
			s := NewSolver(d)
			dc := mustResponse(t, s, 0)
			if got := db(dc); math.Abs(got-c.dcDB) > c.tolDB {
				t.Errorf("DC gain %.6f dB, want %g dB", got, c.dcDB)
			}
			// fc′ is where the gain is 3.0103 dB below DC (first order).
			gain := func(f float64) float64 { return db(mustResponse(t, s, f)) }
			if fc := crossing(t, gain, db(dc)+10*math.Log10(0.5), 100, 1e5); math.Abs(fc-c.fcHz) > 0.005 {
				t.Errorf("fc′ = %.4f Hz, want %.2f Hz", fc, c.fcHz)
			}
			if c.err1k != nil {
				r := mustResponse(t, s, 1000) / mustResponse(t, ideal, 1000)
				if math.Abs(db(r)-c.err1k[0]) > 0.005 || math.Abs(deg(r)-c.err1k[1]) > 0.005 {
					t.Errorf("error at 1 kHz %.4f dB, %.4f°; want %.2f dB, %.2f°", db(r), deg(r), c.err1k[0], c.err1k[1])
				}
			}
			rs, rl, cl := c.fx.SourceOhms, c.fx.LoadOhms, c.fx.LoadFarads
			for f := 0.5; f < 1e6; f *= 1.41 {
				w := 2 * math.Pi * f
				want := 1 / (1 + complex(rs+rcR, 0)*complex(1/rl, w*(rcC+cl)))
				if got := mustResponse(t, s, f); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
					t.Errorf("%g Hz: %v, want %v", f, got, want)
				}
			}
		})
	}
}

// TestLoadedHighPass checks REFERENCES §6's high-pass form (common
// practice): H = Z_sh/(Rs + 1/(jωC) + Z_sh), Z_sh = R ∥ RL ∥ CL.
func TestLoadedHighPass(t *testing.T) {
	fx := Fixture{SourceOhms: 600, LoadOhms: 22e3, LoadFarads: 470e-12}
	s := NewSolver(mustBuild(t, rcHighPass(), fx))
	for f := 0.5; f < 1e6; f *= 1.41 {
		w := 2 * math.Pi * f
		zsh := 1 / complex(1/rcR+1/fx.LoadOhms, w*fx.LoadFarads)
		want := zsh / (complex(fx.SourceOhms, -1/(w*rcC)) + zsh)
		if got := mustResponse(t, s, f); cmplx.Abs(got-want) > tolFormula*cmplx.Abs(want) {
			t.Errorf("%g Hz: %v, want %v", f, got, want)
		}
	}
}

// butterworthAttenuation is REFERENCES §5's table of 10·log10(1+(f/fc)^2n)
// [V], by order, at 0.5, 1, 2 and 10 times fc.
var butterworthAttenuation = map[int][4]float64{
	1: {0.9691, 3.0103, 6.9897, 20.0432},
	2: {0.2633, 3.0103, 12.3045, 40.0004},
	3: {0.0673, 3.0103, 18.1291, 60.0000},
	4: {0.0169, 3.0103, 24.0993, 80.0000},
}

// TestButterworthCircuits builds Butterworth low-passes as circuits and
// checks REFERENCES §5's attenuation table: orders 1 (RC), 2 and 4
// (unity-gain Sallen-Key stages with the denominators of Carter &
// Mancini Table 16.6 [S]: s² + 1.4142s + 1; (s²+0.7654s+1)(s²+1.8478s+1)),
// and 3 (the doubly terminated LC ladder 1, 2, 1 — from memory — whose
// 6.0206 dB of termination loss is taken off).
func TestButterworthCircuits(t *testing.T) {
	const fc, R = 1000.0, 10e3
	wc := 2 * math.Pi * fc
	// sk returns a unity-gain Sallen-Key stage for s² + b·s + 1 at fc,
	// equal resistors: 2·C2·R·wc = b, C1·C2·(R·wc)² = 1.
	sk := func(k string, in, out string, b float64) []netlist.Element {
		c2 := b / 2 / (R * wc)
		c1 := 1 / (c2 * (R * wc) * (R * wc))
		a, p := "a"+k, "p"+k
		return []netlist.Element{
			el("R1"+k, in+" "+a, R), el("R2"+k, a+" "+p, R),
			el("C1"+k, a+" "+out, c1), el("C2"+k, p+" 0", c2), el("U"+k, out+" "+p+" "+out, 0),
		}
	}
	cases := []struct {
		order int
		n     *netlist.Netlist
		fx    Fixture
		dc    float64 // the DC gain in dB
	}{
		{1, nl("Butterworth 1", el("R1", "in out", R), el("C1", "out 0", 1/(wc*R))), Fixture{}, 0},
		{2, nl("Butterworth 2", sk("1", "in", "out", math.Sqrt2)...), Fixture{}, 0},
		{3, nl("Butterworth 3 ladder",
			el("C1", "in 0", 1/(wc*R)), el("L2", "in out", 2*R/wc), el("C3", "out 0", 1/(wc*R))),
			Fixture{SourceOhms: R, LoadOhms: R}, 20 * math.Log10(0.5)},
		{4, nl("Butterworth 4", append(sk("1", "in", "m", 2*math.Cos(3*math.Pi/8)), sk("2", "m", "out", 2*math.Cos(math.Pi/8))...)...), Fixture{}, 0},
	}
	for _, c := range cases {
		t.Run(c.n.Title, func(t *testing.T) {
			s := NewSolver(mustBuild(t, c.n, c.fx))
			if got := db(mustResponse(t, s, 0)); math.Abs(got-c.dc) > 1e-9 {
				t.Errorf("DC gain %.6f dB, want %.6f dB", got, c.dc)
			}
			for i, x := range []float64{0.5, 1, 2, 10} {
				want := butterworthAttenuation[c.order][i] // REFERENCES §5 [V]
				got := c.dc - db(mustResponse(t, s, x*fc))
				if math.Abs(got-want) > tolDB {
					t.Errorf("attenuation at %g·fc %.6f dB, want %.4f dB", x, got, want)
				}
			}
			// The exact Butterworth magnitude (common practice).
			for f := 10.0; f < 1e5; f *= 1.33 {
				want := 10 * math.Log10(1+math.Pow(f/fc, float64(2*c.order)))
				if got := c.dc - db(mustResponse(t, s, f)); math.Abs(got-want) > 1e-9 {
					t.Errorf("attenuation at %g Hz %.12f dB, want %.12f dB", f, got, want)
				}
			}
		})
	}
}

// TestBesselCircuits builds the unit-delay Bessel low-passes of Carter &
// Mancini Table 16.7 [S] (recomputed with scipy [V], REFERENCES §5),
// s² + 3s + 3 and s³ + 6s² + 15s + 15, as a Sallen-Key stage and as an RC
// pole with a buffer before one, and compares them with H = P(0)/P(s),
// with s normalised to ωn = 2π·1 kHz.
func TestBesselCircuits(t *testing.T) {
	const R = 10e3
	wn := 2 * math.Pi * 1000
	// sk makes a unity-gain Sallen-Key stage for c0/(s² + c1·s + c0).
	sk := func(k, in, out string, c1, c0 float64) []netlist.Element {
		c2 := c1 / c0 / 2 / (R * wn)
		cc1 := 1 / (c0 * c2 * (R * wn) * (R * wn))
		a, p := "a"+k, "p"+k
		return []netlist.Element{
			el("R1"+k, in+" "+a, R), el("R2"+k, a+" "+p, R),
			el("C1"+k, a+" "+out, cc1), el("C2"+k, p+" 0", c2), el("U"+k, out+" "+p+" "+out, 0),
		}
	}
	// The real root of s³ + 6s² + 15s + 15 by Newton's method, and the
	// quadratic that remains.
	p := -2.0
	for range 50 {
		p -= (((p+6)*p+15)*p + 15) / ((3*p+12)*p + 15)
	}
	q1, q0 := 6+p, 15+(6+p)*p // s³+6s²+15s+15 = (s − p)(s² + q1·s + q0)
	cases := []struct {
		name string
		n    *netlist.Netlist
		poly []float64 // coefficients, highest power first
	}{
		{"order 2", nl("Bessel 2", sk("1", "in", "out", 3, 3)...), []float64{1, 3, 3}},
		{"order 3", nl("Bessel 3", append([]netlist.Element{
			el("R0", "in x", R), el("C0", "x 0", 1/(-p*R*wn)), el("E0", "y 0 x 0", 1),
		}, sk("1", "y", "out", q1, q0)...)...), []float64{1, 6, 15, 15}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := NewSolver(mustBuild(t, c.n, Fixture{}))
			for f := 10.0; f < 1e5; f *= 1.21 {
				sn := complex(0, f/1000)
				var den complex128
				for _, a := range c.poly {
					den = den*sn + complex(a, 0)
				}
				want := complex(c.poly[len(c.poly)-1], 0) / den
				if got := mustResponse(t, s, f); cmplx.Abs(got-want) > 1e-9*cmplx.Abs(want) {
					t.Errorf("%g Hz: %v, want %v", f, got, want)
				}
			}
		})
	}
}
