package bench

import (
	"math"
	"math/cmplx"
	"testing"

	"tonetrace/audio"
	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
	"tonetrace/dsp/tone"
)

// Tolerances of the dual-channel ratio against the prediction: the brief's
// accuracy target for the bench with its default input mismatch (at most
// 0.025 dB and 0.15°, see DefaultInterface).
const (
	ratioTolDB  = 0.05
	ratioTolDeg = 0.5
	// With identical inputs only the simulators, the estimator and the
	// noise remain between measurement and prediction.
	idealTolDB  = 0.002
	idealTolDeg = 0.01
)

// testOutput is a louder stimulus than the default, for SNR.
func testOutput() audio.OutputConfig {
	o := audio.DefaultOutputConfig()
	o.LevelDBFS = -10
	return o
}

// openBench opens a bench and closes it when the test ends.
func openBench(t testing.TB, cfg Config) *Bench {
	t.Helper()
	b, err := Open(cfg)
	if err != nil {
		t.Fatalf("Open: %v", err)
	}
	t.Cleanup(func() { _ = b.Close() })
	return b
}

// measureMultitone plays a 1-s-periodic multitone at freqs (whole hertz)
// for 3 s and returns the ratio input 1/input 2 at each frequency, fitted
// (IEEE Std 1057 three-parameter fit, tonetrace/dsp/tone) on the same
// one-second block of both inputs, 1 s after the stimulus reached them.
func measureMultitone(t *testing.T, b *Bench, freqs []float64) []complex128 {
	t.Helper()
	stim := multitone(freqs, testRate, 3, 5)
	at := b.PlayIndex() + testRate/10
	start := at + int64(b.Latency()) + testRate
	rec := record(t, b, stim, at, start+testRate, false)
	if len(rec.jumps) != 0 {
		t.Fatalf("index jumps in a clean recording: %v", rec.jumps)
	}
	out := make([]complex128, len(freqs))
	for i, f := range freqs {
		out[i], _, _ = ratioAt(t, rec.x, int(start), testRate, f)
	}
	return out
}

// TestAccuracyDefaultNetwork measures the built-in presence network at 20
// log-spaced frequencies from 20 Hz to 20 kHz and compares the ratio with
// the MNA prediction of the netlist in the bench's fixture, divided by the
// reference loopback's loading (Bench.Expected). The MNA solver itself is
// checked against ngspice-39 (REFERENCES.md §5 [V]) in dsp/mna; the check
// here is that the simulated interface cancels in the ratio as the design
// says it must (DESIGN.md, "The measurement").
func TestAccuracyDefaultNetwork(t *testing.T) {
	for _, c := range []struct {
		name        string
		iface       Interface
		tolDB, tolD float64
	}{
		{"default interface", Interface{}, ratioTolDB, ratioTolDeg},
		{"matched inputs", matchedInterface(), idealTolDB, idealTolDeg},
	} {
		t.Run(c.name, func(t *testing.T) {
			b := openBench(t, Config{Seed: 1, Output: testOutput(), Interface: c.iface})
			freqs := logFreqs(20, 20000, 20)
			got := measureMultitone(t, b, freqs)
			exp, err := b.Expected(freqs)
			if err != nil {
				t.Fatal(err)
			}
			for i, f := range freqs {
				want := exp.Points[i].H
				gdB, gdeg := dB(got[i])-dB(want), phaseDiff(got[i], want)
				if math.Abs(gdB) > c.tolDB || math.Abs(gdeg) > c.tolD {
					t.Errorf("%6g Hz: measured %.4f dB %.3f°, expected %.4f dB %.3f° (off %.4f dB, %.3f°)",
						f, dB(got[i]), deg(got[i]), dB(want), deg(want), gdB, gdeg)
				}
			}
		})
	}
}

// matchedInterface is the default interface with identical inputs.
func matchedInterface() Interface {
	ifc := DefaultInterface()
	ifc.CouplingHz[1] = ifc.CouplingHz[0]
	ifc.AntiAlias[1] = ifc.AntiAlias[0]
	ifc.GainDB[1] = ifc.GainDB[0]
	return ifc
}

// rcNetlist is the first-order RC low-pass of REFERENCES.md §5.
func rcNetlist(t testing.TB) *netlist.Netlist {
	t.Helper()
	n, err := netlist.ParseFile("../../testdata/networks/rc-lowpass.cir")
	if err != nil {
		t.Fatal(err)
	}
	return n
}

// TestAccuracyRCFixture measures the RC low-pass (R = 10 kΩ, C = 15 nF) on
// the default fixture and compares with the closed forms of REFERENCES.md
// §6 [CP] — no MNA involved: the network reads
// H = 1/(1 + (Rs+R)·(1/RL + jω(C+CL))) and the reference loopback, a lead of
// LeadOhms with no shunt C, 1/(1 + (Rs+Rlead)·(1/RL + jωCL)).
func TestAccuracyRCFixture(t *testing.T) {
	b := openBench(t, Config{Seed: 2, Output: testOutput(), Netlist: rcNetlist(t)})
	fx := b.Fixture()
	if fx != DefaultFixture() {
		t.Fatalf("Fixture() = %+v, want the default %+v", fx, DefaultFixture())
	}
	const r, c = 10e3, 15e-9
	lowPass := func(f, series, shunt float64) complex128 {
		w := 2 * math.Pi * f
		return 1 / (1 + complex(fx.SourceOhms+series, 0)*complex(1/fx.LoadOhms, w*(shunt+fx.LoadFarads)))
	}
	freqs := logFreqs(20, 20000, 20)
	got := measureMultitone(t, b, freqs)
	for i, f := range freqs {
		want := lowPass(f, r, c) / lowPass(f, LeadOhms, 0)
		gdB, gdeg := dB(got[i])-dB(want), phaseDiff(got[i], want)
		if math.Abs(gdB) > ratioTolDB || math.Abs(gdeg) > ratioTolDeg {
			t.Errorf("%6g Hz: measured %.4f dB %.3f°, REFERENCES §6 %.4f dB %.3f°", f, dB(got[i]), deg(got[i]), dB(want), deg(want))
		}
	}
}

// TestAccuracyRCIdealFixture puts the RC low-pass on an ideal fixture (no
// source resistance, no load) and steps a sine through the check points of
// REFERENCES.md §5 [V] (ngspice-39): at 0.1, 0.5, 1, 2 and 10 × fc =
// 1061.0330 Hz the low-pass reads −0.0432, −0.9691, −3.0103, −6.9897 and
// −20.0432 dB at −5.7106°, −26.5651°, −45°, −63.4349° and −84.2894°.
func TestAccuracyRCIdealFixture(t *testing.T) {
	b := openBench(t, Config{Seed: 3, Output: testOutput(), Netlist: rcNetlist(t),
		Fixture: mna.Fixture{SourceOhms: 0, LoadOhms: math.Inf(1)}})
	const fc = 1061.0330
	points := []struct {
		mult, gainDB, phaseDeg float64
	}{
		{0.1, -0.0432, -5.7106},
		{0.5, -0.9691, -26.5651},
		{1, -3.0103, -45.0000},
		{2, -6.9897, -63.4349},
		{10, -20.0432, -84.2894},
	}
	// One continuous stimulus: 0.5 s of each sine in turn.
	const seg = testRate / 2
	var stim []float64
	for _, p := range points {
		stim = append(stim, sine(p.mult*fc, 1, seg)...)
	}
	at := b.PlayIndex() + testRate/10
	end := at + int64(b.Latency()) + int64(len(stim))
	rec := record(t, b, stim, at, end, false)
	// §5 values are rounded to 1e−4 dB and 1e−4°.
	const roundDB, roundDeg = 1e-4, 1e-4
	for i, p := range points {
		f := p.mult * fc
		n, err := tone.CycleLength(f, testRate, 0.15)
		if err != nil {
			t.Fatal(err)
		}
		// The last n frames of the segment, as captured.
		from := int(at) + b.Latency() + (i+1)*seg - n - 200
		h, _, _ := ratioAt(t, rec.x, from, n, f)
		if math.Abs(dB(h)-p.gainDB) > ratioTolDB+roundDB || math.Abs(deg(h)-p.phaseDeg) > ratioTolDeg+roundDeg {
			t.Errorf("%.4f Hz: measured %.4f dB %.4f°, REFERENCES §5 %.4f dB %.4f°", f, dB(h), deg(h), p.gainDB, p.phaseDeg)
		}
	}
	// The ideal loopback is exactly 1.
	exp, err := b.Expected([]float64{fc})
	if err != nil {
		t.Fatal(err)
	}
	if h := exp.Points[0].H; math.Abs(dB(h)+3.0103) > roundDB || math.Abs(deg(h)+45) > roundDeg {
		t.Errorf("Expected(fc) = %.5f dB %.5f°, REFERENCES §5: −3.0103 dB, −45°", dB(h), deg(h))
	}
}

// TestExpectedIsPredictionOverLoopback checks Bench.Expected against
// Bench.Prediction and the loopback's divider of REFERENCES.md §6 [CP]:
// 1/(1 + (Rs+Rlead)·(1/RL + jωCL)); with the defaults −0.0434 dB at low
// frequencies.
func TestExpectedIsPredictionOverLoopback(t *testing.T) {
	b := openBench(t, Config{})
	freqs := []float64{20, 1000, 3063, 20000}
	pred, err := b.Prediction(freqs)
	if err != nil {
		t.Fatal(err)
	}
	exp, err := b.Expected(freqs)
	if err != nil {
		t.Fatal(err)
	}
	fx := b.Fixture()
	const tol = 1e-9 // rounding only
	for i, f := range freqs {
		loop := 1 / (1 + complex(fx.SourceOhms+LeadOhms, 0)*complex(1/fx.LoadOhms, 2*math.Pi*f*fx.LoadFarads))
		if got, want := exp.Points[i].H, pred.Points[i].H/loop; cmplx.Abs(got-want) > tol*cmplx.Abs(want) {
			t.Errorf("%g Hz: Expected %v, want Prediction/loopback %v", f, got, want)
		}
	}
	if v, ok := exp.MetaValue(MetaReference); !ok || v == "" {
		t.Errorf("Expected trace lacks the %q metadata", MetaReference)
	}
	// −20·log10(20000/20100.1) from memory of the arithmetic, [CP] divider.
	if loss := dB(pred.Points[0].H / exp.Points[0].H); math.Abs(loss-(-0.0434)) > 0.0005 {
		t.Errorf("loopback loss at 20 Hz %.4f dB, want −0.0434 dB", loss)
	}
}
