package multitone

import (
	"errors"
	"math"
	"testing"
)

// mainsHum returns n samples of 50 Hz hum with harmonics 2, 3 and 5, the
// fundamental at amplitude a, starting at sample start of the record.
func mainsHum(n, start int, rate, a float64) []float64 {
	lines := []struct{ k, rel, ph float64 }{{1, 1, 0.3}, {2, 0.25, 1.9}, {3, 0.4, -2.2}, {5, 0.16, 0.7}}
	x := make([]float64, n)
	for i := range x {
		t := float64(start+i) / rate
		for _, l := range lines {
			cyc := 50 * l.k * t
			cyc -= math.Floor(cyc)
			x[i] += a * l.rel * math.Cos(2*math.Pi*cyc+l.ph)
		}
	}
	return x
}

// TestDesignAvoid: with Options.Avoid no tone lies within AvoidBins bins
// of a mains line; without it the same design puts tones on them (so the
// option is what keeps them clear).
func TestDesignAvoid(t *testing.T) {
	opts := Options{Rate: 48000, Period: 16384, From: 20, To: 20000, LevelDBFS: -20, CapDBFS: -6}
	near := func(m *Multitone) int {
		df := m.Rate() / float64(m.Len())
		n := 0
		for _, tn := range m.Tones() {
			for _, l := range MainsLines(5) {
				if math.Abs(tn.Freq-l) < AvoidBins*df {
					n++
				}
			}
		}
		return n
	}
	plain, err := Design(opts)
	if err != nil {
		t.Fatal(err)
	}
	opts.Avoid = MainsLines(5)
	clear, err := Design(opts)
	if err != nil {
		t.Fatal(err)
	}
	if n := near(plain); n == 0 {
		t.Fatalf("the plain design has no tone near a mains line; the test proves nothing")
	}
	if n := near(clear); n != 0 {
		t.Errorf("%d tones within %d bins of a mains line despite Avoid", n, AvoidBins)
	}
	if a, b := plain.NumTones(), clear.NumTones(); b < a-3 {
		t.Errorf("Avoid cost %d of %d tones; it should move tones, not drop them", a-b, a)
	}
	if got := MainsLines(2); len(got) != 4 || got[0] != 50 || got[1] != 60 || got[2] != 100 || got[3] != 120 {
		t.Errorf("MainsLines(2) = %v, want [50 60 100 120]", got)
	}
}

// TestAnalyzeInterferers: a multitone through a cookbook low-pass (W3C
// Audio EQ Cookbook, REFERENCES §7) with 50 Hz hum and harmonics, 10 dB
// below the tones' level on the response and 30 dB below on the
// reference, no noise. Without SetInterferers the hum leaks into the tone
// bins; with it every tone matches the filter's digital response as
// closely as a hum-free period does (TestAnalyzeBiquadNoiseless' limits).
func TestAnalyzeInterferers(t *testing.T) {
	m, err := Design(Options{Rate: 48000, Period: 16384, From: 20, To: 20000, LevelDBFS: -10, CapDBFS: -6, Avoid: MainsLines(5)})
	if err != nil {
		t.Fatal(err)
	}
	dut := rbj("lpf", 48000, 1000, 0.7071, 0)
	ref, resp := steadyState(m, dut, 37, 6)
	toneAmp := m.Tones()[0].Amplitude
	start := 5 * m.Len() // the hum runs on from the start of the record
	hr, hy := mainsHum(m.Len(), start, 48000, toneAmp*0.03), mainsHum(m.Len(), start, 48000, toneAmp*0.3)
	for i := range ref {
		ref[i] += hr[i]
		resp[i] += hy[i]
	}
	worst := func(an *Analyzer) (db, deg float64) {
		t.Helper()
		f, err := an.Analyze(ref, resp)
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range f.Tones {
			g, ph := dbDiff(r.H, dut.response(r.Freq, 48000))
			db, deg = max(db, math.Abs(g)), max(deg, math.Abs(ph))
		}
		return db, deg
	}
	an := NewAnalyzer(m)
	plainDB, plainDeg := worst(an)
	if plainDB < 0.1 {
		t.Fatalf("hum leaks only %.3g dB into the plain analysis; the test proves nothing", plainDB)
	}
	if err := an.SetInterferers(MainsLines(5)); err != nil {
		t.Fatal(err)
	}
	db, deg := worst(an)
	t.Logf("worst error: plain %.3g dB %.3g°, hum fitted out %.2g dB %.2g°", plainDB, plainDeg, db, deg)
	if db > noiselessGainDB || deg > noiselessPhase {
		t.Errorf("with the hum fitted out, worst error %.2g dB %.2g°; want within %g dB, %g°", db, deg, noiselessGainDB, noiselessPhase)
	}

	// Fitting lines that are not there changes nothing measurable.
	clean, cleanResp := steadyState(m, dut, 37, 6)
	f, err := an.Analyze(clean, cleanResp)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range f.Tones {
		if g, ph := dbDiff(r.H, dut.response(r.Freq, 48000)); math.Abs(g) > noiselessGainDB || math.Abs(ph) > noiselessPhase {
			t.Errorf("%.2f Hz without hum: %.2g dB %.2g° off", r.Freq, g, ph)
		}
	}

	// No allocation per period.
	var fr Frame
	if n := testing.AllocsPerRun(5, func() { _ = an.AnalyzeInto(&fr, ref, resp) }); n != 0 {
		t.Errorf("AnalyzeInto with interferers allocates %v times per period", n)
	}

	// nil removes them again.
	if err := an.SetInterferers(nil); err != nil {
		t.Fatal(err)
	}
	if db, _ := worst(an); db != plainDB {
		t.Errorf("after SetInterferers(nil) the worst error is %.3g dB, want the plain %.3g dB", db, plainDB)
	}
}

// TestSetInterferersOnATone: a line within a tenth of a bin of a tone
// cannot be fitted out; the error says so and the previous setting stays.
func TestSetInterferersOnATone(t *testing.T) {
	m, err := Design(Options{Rate: 48000, Period: 8192, From: 20, To: 20000, LevelDBFS: -10, CapDBFS: -6})
	if err != nil {
		t.Fatal(err)
	}
	an := NewAnalyzer(m)
	if err := an.SetInterferers([]float64{50, 100}); err != nil {
		t.Fatal(err)
	}
	before := an.hum
	df := m.Rate() / float64(m.Len())
	err = an.SetInterferers([]float64{m.Tones()[4].Freq + 0.05*df})
	if !errors.Is(err, ErrInterferer) {
		t.Fatalf("error %v, want ErrInterferer", err)
	}
	t.Log(err)
	if an.hum != before {
		t.Error("a failed SetInterferers replaced the previous interferers")
	}
	if err := an.SetInterferers([]float64{0, -3, 24000, 30000}); err != nil || an.hum != nil {
		t.Errorf("only unusable lines: err %v, interferers %v; want none", err, an.hum)
	}
}
