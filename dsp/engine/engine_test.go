package engine

import (
	"context"
	"errors"
	"math"
	"math/cmplx"
	"runtime"
	"sort"
	"strings"
	"testing"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/multitone"
	"tonetrace/dsp/plan"
	"tonetrace/dsp/trace"
)

// Tolerances of the measurement tests (the brief's targets).
const (
	gainTolDB   = 0.05 // measured vs digital response, dB
	phaseTolDeg = 0.5  // measured vs digital response, degrees
	runTimeout  = 30 * time.Second
)

// TestBiquadCookbook checks the fake's filter against sox `lowpass 1000`
// at 48 kHz: coefficients and response (REFERENCES.md §7 [V]; the
// cookbook LPF with Q = 0.7071).
func TestBiquadCookbook(t *testing.T) {
	const coefTol = 1e-12
	q := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, 48000)
	// From REFERENCES.md §7 [V] (sox 14.4.2 lowpass 1000, normalised by a0).
	want := []float64{3.9161266605473831e-3, 7.8322533210947662e-3, 3.9161266605473831e-3, -1.8153410827045680, 0.83100558934675761}
	got := []float64{q.b0, q.b1, q.b2, q.a1, q.a2}
	for i := range want {
		if math.Abs(got[i]-want[i]) > coefTol {
			t.Errorf("coefficient %d = %.17g, want %.17g (sox lowpass 1000, REFERENCES.md §7)", i, got[i], want[i])
		}
	}
	h := q.response(1000, 48000)
	// |H(1 kHz)| = −3.0103 dB, −90° (REFERENCES.md §7 [V]).
	if g := 20 * math.Log10(cmplx.Abs(h)); math.Abs(g+3.0103) > 1e-4 {
		t.Errorf("|H(1 kHz)| = %.5f dB, want -3.0103 dB (REFERENCES.md §7)", g)
	}
	if p := cmplx.Phase(h) * 180 / math.Pi; math.Abs(p+90) > 1e-6 {
		t.Errorf("arg H(1 kHz) = %.6f°, want -90° (REFERENCES.md §7)", p)
	}
}

// checkAgainst compares each point with the filter's digital response
// H(e^{jω}) from the RBJ cookbook coefficients (REFERENCES.md §7 [S]).
func checkAgainst(t *testing.T, q *biquad, freqs []float64, h []complex128, valid []bool) {
	t.Helper()
	for i, f := range freqs {
		if !valid[i] {
			t.Errorf("%g Hz: point invalid on a clean stream", f)
			continue
		}
		want := q.response(f, fakeRate)
		dg := 20*math.Log10(cmplx.Abs(h[i])) - 20*math.Log10(cmplx.Abs(want))
		dp := cmplx.Phase(h[i]/want) * 180 / math.Pi
		if math.Abs(dg) > gainTolDB || math.Abs(dp) > phaseTolDeg {
			t.Errorf("%9.2f Hz: off the cookbook response by %+.4f dB, %+.3f° (want within %g dB, %g°; W3C Audio EQ Cookbook, REFERENCES.md §7)",
				f, dg, dp, gainTolDB, phaseTolDeg)
		}
	}
}

// filters are the cookbook networks the accuracy tests put between output
// 1 and input 1.
var filters = []struct {
	name               string
	kind               int
	f0, q, gain        float64
	multitoneTolerated bool
}{
	{"lowpass 1k", bqLowpass, 1000, math.Sqrt2 / 2, 0, true},
	{"peaking 2k +6dB", bqPeaking, 2000, 1, 6, true},
	{"highpass 200", bqHighpass, 200, math.Sqrt2 / 2, 0, true},
}

// TestStepsMatchBiquad runs the stepped sweep 20 Hz–20 kHz at 10 points
// per decade through each filter and checks every point, the latency and
// the timing targets.
func TestStepsMatchBiquad(t *testing.T) {
	for _, fc := range filters {
		t.Run(fc.name, func(t *testing.T) {
			d := newFake(t, newBiquad(fc.kind, fc.f0, fc.q, fc.gain, fakeRate), faults{})
			e, c, err := runEngine(t, d, Config{From: 20, To: 20000, PerDecade: 10}, runTimeout)
			if err != nil {
				t.Fatal(err)
			}
			res := e.Result()
			// The fake delays every input by exactly fakeDelay frames.
			if !res.LatencyFound || res.Latency != fakeDelay {
				t.Errorf("latency %d (found %v), want %d frames (the fake's delay)", res.Latency, res.LatencyFound, fakeDelay)
			}
			grid, _ := plan.PerDecade(20, 20000, 10)
			tr, ok := c.lastTrace(true)
			if !ok || len(tr.Trace.Points) != len(grid) || len(c.points) != len(grid) {
				t.Fatalf("got %d points and complete trace %v with %d points; want %d", len(c.points), ok, len(tr.Trace.Points), len(grid))
			}
			freqs := make([]float64, len(grid))
			h := make([]complex128, len(grid))
			for i, p := range tr.Trace.Points {
				freqs[i], h[i] = p.Freq, p.H
				if p.Freq != grid[i] {
					t.Errorf("trace point %d at %g Hz, want %g", i, p.Freq, grid[i])
				}
			}
			checkAgainst(t, newBiquad(fc.kind, fc.f0, fc.q, fc.gain, fakeRate), freqs, h, tr.Valid)
			if len(res.Problems) != 0 {
				t.Errorf("problems on a clean stream: %v", res.Problems)
			}
			tm := res.Timing
			// Targets of the brief: the sweep in at most 3 s of audio and
			// at most 1.5 times the sum of the per-point minimum times.
			if sec := tm.Seconds(tm.SweepFrames); sec > 3 {
				t.Errorf("sweep took %.3f s of audio, want ≤ 3 s", sec)
			}
			if ratio := float64(tm.SweepFrames) / float64(tm.MinFrames); ratio > 1.5 {
				t.Errorf("sweep took %.3f× the minimum, want ≤ 1.5×", ratio)
			}
			if st := d.Stats(); st.Dropped != 0 || st.Underruns != 0 || st.Late != 0 {
				t.Errorf("stream stats %+v: want no drop, underrun or late sample", st)
			}
			t.Logf("sweep %.3f s audio (minimum %.3f s, %.3f×), run %.3f s audio in %v wall",
				tm.Seconds(tm.SweepFrames), tm.Seconds(tm.MinFrames), float64(tm.SweepFrames)/float64(tm.MinFrames),
				tm.Seconds(tm.AudioFrames), tm.Wall)
		})
	}
}

// TestMultitoneMatchBiquad checks the multitone mode at its tones.
func TestMultitoneMatchBiquad(t *testing.T) {
	for _, fc := range filters {
		t.Run(fc.name, func(t *testing.T) {
			d := newFake(t, newBiquad(fc.kind, fc.f0, fc.q, fc.gain, fakeRate), faults{})
			cfg := Config{Method: Multitone, From: 20, To: 20000, PerDecade: 10, Period: 8192, Periods: 3}
			e, c, err := runEngine(t, d, cfg, runTimeout)
			if err != nil {
				t.Fatal(err)
			}
			res := e.Result()
			if res.Latency != fakeDelay {
				t.Errorf("latency %d, want %d frames (the fake's delay)", res.Latency, fakeDelay)
			}
			tr, ok := c.lastTrace(true)
			if !ok {
				t.Fatal("no complete trace")
			}
			mt, err := multitone.Design(multitone.Options{Rate: fakeRate, Period: 8192, From: 20, To: 20000, PerDecade: 10, LevelDBFS: 0, CapDBFS: 0,
				Avoid: multitone.MainsLines(humLines)}) // as the engine designs it
			if err != nil {
				t.Fatal(err)
			}
			if len(tr.Trace.Points) != mt.NumTones() {
				t.Fatalf("%d points, want one per tone (%d)", len(tr.Trace.Points), mt.NumTones())
			}
			freqs := make([]float64, len(tr.Trace.Points))
			h := make([]complex128, len(freqs))
			for i, p := range tr.Trace.Points {
				freqs[i], h[i] = p.Freq, p.H
			}
			checkAgainst(t, newBiquad(fc.kind, fc.f0, fc.q, fc.gain, fakeRate), freqs, h, tr.Valid)
			if len(res.Problems) != 0 {
				t.Errorf("problems on a clean stream: %v", res.Problems)
			}
			if v, _ := tr.Trace.MetaValue("periods"); v != "3" {
				t.Errorf("complete trace averages %q periods, want 3", v)
			}
			live := 0
			for _, ev := range c.traces {
				if ev.Live {
					live++
				}
			}
			if live == 0 {
				t.Error("no live trace while averaging")
			}
		})
	}
}

// TestAdaptiveNotch drives an adaptive plan through a cookbook notch: the
// points must crowd around the notch and match the filter.
func TestAdaptiveNotch(t *testing.T) {
	const f0 = 1234.0
	q := newBiquad(bqNotch, f0, 2, 0, fakeRate)
	d := newFake(t, q, faults{})
	ad := &plan.Adaptive{From: 20, To: 20000, StartPerDecade: 3}
	_, c, err := runEngine(t, d, Config{Adaptive: ad}, runTimeout)
	if err != nil {
		t.Fatal(err)
	}
	tr, ok := c.lastTrace(true)
	if !ok {
		t.Fatal("no complete trace")
	}
	pts := tr.Trace.Points
	density := func(lo, hi float64) float64 {
		n := 0
		for _, p := range pts {
			if p.Freq >= lo && p.Freq <= hi {
				n++
			}
		}
		return float64(n) / math.Log10(hi/lo)
	}
	near, flat := density(f0/1.1, f0*1.1), density(20, 200)
	// The notch bends the curve, the band 20–200 Hz is flat: the plan must
	// put far more points per decade at the notch (plan.Adaptive's rule).
	if near < 10*flat {
		t.Errorf("%.0f points per decade at the notch vs %.0f in 20–200 Hz; want ≥ 10×", near, flat)
	}
	deepest := pts[0]
	for _, p := range pts {
		if cmplx.Abs(p.H) < cmplx.Abs(deepest.H) {
			deepest = p
		}
	}
	if math.Abs(deepest.Freq/f0-1) > 0.02 {
		t.Errorf("deepest point at %g Hz, want within 2%% of the notch at %g Hz", deepest.Freq, f0)
	}
	var freqs []float64
	var h []complex128
	var valid []bool
	for i, p := range pts {
		if cmplx.Abs(q.response(p.Freq, fakeRate)) > 0.01 { // keep to −40 dB and above
			freqs, h, valid = append(freqs, p.Freq), append(h, p.H), append(valid, tr.Valid[i])
		}
	}
	checkAgainst(t, q, freqs, h, valid)
}

// steepLowpass is an 8th-order low-pass at 1 kHz: −140 dB at 20 kHz.
func steepLowpass() *biquad {
	return cascade(newBiquad(bqLowpass, 1000, 0.51, 0, fakeRate), newBiquad(bqLowpass, 1000, 0.6, 0, fakeRate),
		newBiquad(bqLowpass, 1000, 0.9, 0, fakeRate), newBiquad(bqLowpass, 1000, 2.56, 0, fakeRate))
}

// steepHighpass is an 8th-order high-pass at 2 kHz.
func steepHighpass() *biquad {
	return cascade(newBiquad(bqHighpass, 2000, 0.51, 0, fakeRate), newBiquad(bqHighpass, 2000, 0.6, 0, fakeRate),
		newBiquad(bqHighpass, 2000, 0.9, 0, fakeRate), newBiquad(bqHighpass, 2000, 2.56, 0, fakeRate))
}

// faultCases inject each fault the monitors know; want is the code the
// monitors must name, allowed any other code the fault may also cause.
// The network is a 2nd-order low-pass at 1 kHz unless net says otherwise.
var faultCases = []struct {
	name    string
	f       faults
	method  Method
	want    string
	allowed []string
	net     func() *biquad
}{
	{"swap", faults{swap: true}, Steps, CodeSwap, nil, nil},
	{"dead reference", faults{deadRef: true}, Steps, CodeDeadRef, nil, nil},
	{"dead response", faults{deadDUT: true}, Steps, CodeDeadDUT, nil, nil},
	{"clip", faults{clipGain: 20}, Steps, CodeClip, nil, nil},
	{"hum", faults{humAmp: 0.01}, Steps, CodeHum, nil, nil},
	{"hum on the response only", faults{humAmp: 0.003, humChannels: 1}, Steps, CodeHum, nil, nil},
	{"inverted reference", faults{invertRef: true}, Steps, CodeInvert, nil, nil},
	{"inverted response", faults{invertResp: true}, Steps, CodeInvert, nil, nil},
	{"dropped frames", faults{dropAt: 40000}, Steps, CodeDropout, nil, nil},
	{"zeroed samples", faults{zeroAt: 20000, zeroN: 50, zeroEvery: 7919}, Steps, CodeDropout, nil, nil},
	{"zeroed samples once", faults{zeroAt: 33000, zeroN: 30}, Steps, CodeDropout, nil, nil},
	{"zeroed samples once, later", faults{zeroAt: 51234, zeroN: 30}, Steps, CodeDropout, nil, nil},
	{"drift 200 ppm", faults{ppm: 200}, Steps, CodeDrift, nil, nil},
	{"multitone swap", faults{swap: true}, Multitone, CodeSwap, nil, nil},
	{"multitone dead reference", faults{deadRef: true}, Multitone, CodeDeadRef, nil, nil},
	{"multitone dead response", faults{deadDUT: true}, Multitone, CodeDeadDUT, nil, nil},
	{"multitone clip", faults{clipGain: 20}, Multitone, CodeClip, nil, nil},
	{"multitone hum", faults{humAmp: 0.01}, Multitone, CodeHum, nil, nil},
	{"multitone inverted reference", faults{invertRef: true}, Multitone, CodeInvert, nil, nil},
	{"multitone inverted response", faults{invertResp: true}, Multitone, CodeInvert, nil, nil},
	{"multitone dropped frames", faults{dropAt: 40000}, Multitone, CodeDropout, nil, nil},
	{"multitone zeroed samples", faults{zeroAt: 40000, zeroN: 100}, Multitone, CodeDropout, nil, nil},
	{"multitone drift 200 ppm", faults{ppm: 200}, Multitone, CodeDrift, nil, nil},
	// With input noise, and through steep networks whose stopbands sink
	// below the noise.
	{"noisy dead reference", faults{deadRef: true, noise: 3e-5}, Steps, CodeDeadRef, nil, nil},
	{"noisy dead response", faults{deadDUT: true, noise: 3e-5}, Steps, CodeDeadDUT, nil, nil},
	{"response lead pulled mid-sweep", faults{pullDUTAt: pullAt, noise: 3e-5}, Steps, CodeDeadDUT, nil, nil},
	{"noisy drift", faults{ppm: 100, noise: 3e-5}, Steps, CodeDrift, nil, nil},
	{"swap through a steep low-pass", faults{swap: true}, Steps, CodeSwap, nil, steepLowpass},
	{"noisy swap through a steep high-pass", faults{swap: true, noise: 3e-5}, Steps, CodeSwap, nil, steepHighpass},
	{"multitone swap through a steep low-pass", faults{swap: true, noise: 3e-5}, Multitone, CodeSwap, nil, steepLowpass},
	{"multitone noisy dead response", faults{deadDUT: true, noise: 3e-5}, Multitone, CodeDeadDUT, nil, nil},
	{"swap through a mild peaking filter", faults{swap: true, noise: 3e-5, iface: true}, Steps, CodeSwap, nil, mildPeaking},
	{"multitone swap through a mild peaking filter", faults{swap: true, noise: 3e-5, iface: true}, Multitone, CodeSwap, nil, mildPeaking},
	{"inverted reference behind interface filters", faults{invertRef: true, noise: 3e-5, iface: true}, Steps, CodeInvert, nil, nil},
	{"multitone inverted reference behind interface filters", faults{invertRef: true, noise: 3e-5, iface: true}, Multitone, CodeInvert, nil, nil},
	{"multitone zeroed samples behind interface filters", faults{zeroAt: 40000, zeroN: 20, noise: 3e-5, iface: true}, Multitone, CodeDropout, nil, nil},
	{"zeroed samples behind interface filters", faults{zeroAt: 40000, zeroN: 20, noise: 3e-5, iface: true}, Steps, CodeDropout, nil, nil},
}

// mildPeaking is a +4 dB cookbook peaking filter at 2 kHz.
func mildPeaking() *biquad { return newBiquad(bqPeaking, 2000, 1, 4, fakeRate) }

// monitorConfig is a quick measurement for the monitor tests (the fake's
// latency is 26 ms: a 60 ms search window is enough).
func monitorConfig(m Method) Config {
	if m == Multitone {
		return Config{Method: Multitone, Period: 8192, Periods: 5, MaxLatency: 60 * time.Millisecond}
	}
	return Config{PerDecade: 4, MaxLatency: 60 * time.Millisecond}
}

// TestMonitorsNameFaults injects each fault into a fake stream with a
// low-pass network and checks the monitors name it — in a status event and
// in the result — and name nothing else.
func TestMonitorsNameFaults(t *testing.T) {
	for _, tc := range faultCases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			net := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
			if tc.net != nil {
				net = tc.net()
			}
			d := newFake(t, net, tc.f)
			e, c, err := runEngine(t, d, monitorConfig(tc.method), runTimeout)
			if err != nil {
				t.Fatal(err)
			}
			res := e.Result()
			if !c.codes[tc.want] {
				t.Errorf("no status event named %q; statuses named %v", tc.want, keys(c.codes))
			}
			for code := range problemCodes(res) {
				if code != tc.want && !contains(tc.allowed, code) {
					t.Errorf("also raised %q: %v", code, res.Problems)
				}
			}
			for _, p := range res.Problems {
				if p.Message == "" || p.Fix == "" {
					t.Errorf("problem %q lacks a message or a fix: %+v", p.Code, p)
				}
			}
		})
	}
}

func keys(m map[string]bool) []string {
	var k []string
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}

// TestMonitorsQuietOnCleanRuns: no problem on clean streams, for several
// networks (an all-pass passes through −180° on a flat gain, a high-pass
// leads by 180° at low frequencies, a notch nearly silences one
// frequency), with input noise and the interface's own filters on both
// inputs (and without, for two of them).
func TestMonitorsQuietOnCleanRuns(t *testing.T) {
	bq := func(kind int, f0, q, g float64) func() *biquad {
		return func() *biquad { return newBiquad(kind, f0, q, g, fakeRate) }
	}
	nets := []struct {
		name string
		q    func() *biquad // a fresh filter per run: runs go in parallel
	}{
		{"wire", func() *biquad { return nil }},
		{"lowpass", bq(bqLowpass, 1000, math.Sqrt2/2, 0)},
		{"highpass", bq(bqHighpass, 200, math.Sqrt2/2, 0)},
		{"allpass", bq(bqAllpass, 1000, 0.7, 0)},
		{"notch", bq(bqNotch, 1000, 3, 0)},
		{"peaking +12 dB", bq(bqPeaking, 3000, 2, 12)},
		// 8th-order low-pass and high-pass: stopbands far below the dead
		// margin (and below the noise) must not read as a dead response.
		{"steep lowpass", steepLowpass},
		{"steep highpass", steepHighpass},
		{"narrow bandpass", bq(bqBandpass, 1000, 10, 0)},
		{"mild peaking +4 dB", mildPeaking},
	}
	for _, n := range nets {
		for _, m := range []Method{Steps, Multitone} {
			variants := []faults{{noise: 3e-5, iface: true}}
			if n.name == "wire" || n.name == "lowpass" {
				variants = append(variants, faults{}, faults{noise: 3e-5})
			}
			for _, f := range variants {
				name := n.name + "/" + m.String()
				if f.noise != 0 {
					name += "/noise"
				}
				if f.iface {
					name += "/interface"
				}
				t.Run(name, func(t *testing.T) {
					t.Parallel()
					d := newFake(t, n.q(), f)
					e, c, err := runEngine(t, d, monitorConfig(m), runTimeout)
					if err != nil {
						t.Fatal(err)
					}
					if p := e.Result().Problems; len(p) != 0 {
						t.Errorf("false alarms: %v", p)
					}
					if len(c.codes) != 0 {
						t.Errorf("statuses named %v", keys(c.codes))
					}
					for _, p := range c.points {
						if !p.Valid {
							t.Errorf("point at %g Hz invalid: %v", p.Point.Freq, p.Problems)
						}
					}
				})
			}
		}
	}
}

// TestInvalidPoints: a dead reference or a clipping input marks the
// affected points invalid and says why.
func TestInvalidPoints(t *testing.T) {
	tests := []struct {
		name string
		f    faults
		code string
		all  bool // every point is affected
	}{
		{"dead reference", faults{deadRef: true}, CodeDeadRef, true},
		{"clipping response", faults{clipGain: 20}, CodeClip, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			d := newFake(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), tc.f)
			_, c, err := runEngine(t, d, monitorConfig(Steps), runTimeout)
			if err != nil {
				t.Fatal(err)
			}
			bad := 0
			for _, p := range c.points {
				named := false
				for _, pr := range p.Problems {
					named = named || pr.Code == tc.code
				}
				if named && p.Valid {
					t.Errorf("%g Hz: %q named but the point is valid", p.Point.Freq, tc.code)
				}
				if !p.Valid {
					bad++
					if !named {
						t.Errorf("%g Hz: invalid without %q: %v", p.Point.Freq, tc.code, p.Problems)
					}
				}
			}
			if tc.all && bad != len(c.points) || bad == 0 {
				t.Errorf("%d of %d points invalid", bad, len(c.points))
			}
			tr, _ := c.lastTrace(true)
			for i, v := range tr.Valid {
				if tc.all && v {
					t.Errorf("trace point %d valid", i)
				}
			}
		})
	}
}

// TestDeviceLostMidSweep unplugs the fake in the middle of a sweep: Run
// must return the error promptly, with every point measured so far in a
// partial trace and a status naming the fault.
func TestDeviceLostMidSweep(t *testing.T) {
	for _, m := range []Method{Steps, Multitone} {
		t.Run(m.String(), func(t *testing.T) {
			d := newFake(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), faults{lostAt: 70000})
			start := time.Now()
			cfg := Config{Method: m, PerDecade: 10, Period: 8192, Periods: 20}
			e, c, err := runEngine(t, d, cfg, runTimeout)
			if !errors.Is(err, audio.ErrDeviceLost) {
				t.Fatalf("Run = %v, want audio.ErrDeviceLost", err)
			}
			// The core reports a lost device at once (SetLost); allow for a
			// slow machine.
			if el := time.Since(start); el > 5*time.Second {
				t.Errorf("Run took %v to return", el)
			}
			tr, ok := c.lastTrace(false)
			if !ok {
				t.Fatal("no partial trace")
			}
			if m == Steps {
				if len(c.points) == 0 || len(tr.Trace.Points) != len(c.points) {
					t.Errorf("partial trace has %d points, %d were measured", len(tr.Trace.Points), len(c.points))
				}
			} else if len(tr.Trace.Points) == 0 {
				t.Error("partial multitone trace is empty")
			}
			if !c.codes[CodeUnplug] {
				t.Errorf("no status named %q", CodeUnplug)
			}
			if len(c.errs) != 1 || !errors.Is(c.errs[0], audio.ErrDeviceLost) {
				t.Errorf("error events %v, want the one device-lost error", c.errs)
			}
			if r := e.Result(); r.Complete || len(r.Trace.Points) != len(tr.Trace.Points) {
				t.Errorf("result: complete %v with %d points, want the partial trace", r.Complete, len(r.Trace.Points))
			}
		})
	}
}

// TestCancelStopsPromptly cancels a repeating measurement after a few
// points; Run must return context.Canceled promptly, keep the points and
// leave no goroutine behind.
func TestCancelStopsPromptly(t *testing.T) {
	for _, m := range []Method{Steps, Multitone} {
		t.Run(m.String(), func(t *testing.T) {
			before := runtime.NumGoroutine()
			d := newFake(t, nil, faults{})
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			e := New(d, Config{Method: m, PerDecade: 10, Repeat: true, Period: 8192})
			var cancelled time.Time
			var points, partial int
			var events int
			done := make(chan struct{})
			go func() {
				defer close(done)
				for ev := range e.Events() {
					events++
					switch v := ev.(type) {
					case PointEvent:
						points++
					case TraceEvent:
						if !v.Complete && !v.Live {
							partial = len(v.Trace.Points)
						}
					}
					if cancelled.IsZero() && events > 30 {
						cancelled = time.Now()
						cancel()
					}
				}
			}()
			err := e.Run(ctx)
			returned := time.Now()
			<-done
			if !errors.Is(err, context.Canceled) {
				t.Fatalf("Run = %v, want context.Canceled", err)
			}
			if el := returned.Sub(cancelled); el > time.Second {
				t.Errorf("Run returned %v after the cancel", el)
			}
			if m == Steps && points > 0 && partial == 0 && e.Result().Complete == false {
				t.Errorf("%d points measured, no partial trace", points)
			}
			d.close()
			deadline := time.Now().Add(2 * time.Second)
			for runtime.NumGoroutine() > before && time.Now().Before(deadline) {
				time.Sleep(10 * time.Millisecond)
			}
			if n := runtime.NumGoroutine(); n > before {
				t.Errorf("%d goroutines after the run, %d before", n, before)
			}
		})
	}
}

// TestSlowConsumer reads events slowly through a tiny buffer: the engine
// must neither block nor lose a point or the final trace; it may coalesce
// status events.
func TestSlowConsumer(t *testing.T) {
	d := newFake(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), faults{})
	e := New(d, Config{PerDecade: 10, EventBuffer: 1, DrainTimeout: 10 * time.Second})
	c := &collected{codes: map[string]bool{}}
	done := make(chan struct{})
	go func() {
		defer close(done)
		for ev := range e.Events() {
			time.Sleep(2 * time.Millisecond)
			c.add(ev)
		}
	}()
	if err := e.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	<-done
	grid, _ := plan.PerDecade(20, 20000, 10)
	if len(c.points) != len(grid) {
		t.Errorf("%d point events, want %d", len(c.points), len(grid))
	}
	for i, p := range c.points {
		if p.Index != i {
			t.Errorf("point event %d has index %d (out of order or lost)", i, p.Index)
		}
	}
	if _, ok := c.lastTrace(true); !ok {
		t.Error("final trace lost")
	}
	intervals := int(e.Result().Timing.Seconds(e.Result().Timing.AudioFrames) / 0.1)
	if len(c.statuses) >= intervals {
		t.Errorf("%d status events for %d intervals: none coalesced", len(c.statuses), intervals)
	}
}

// TestConfigErrors checks each invalid setting is refused with ErrConfig
// and a message naming it, as the last event and Run's result.
func TestConfigErrors(t *testing.T) {
	tests := []struct {
		name string
		cfg  Config
		want string
	}{
		{"band reversed", Config{From: 1000, To: 100}, "band"},
		{"band above Nyquist", Config{To: 30000}, "band"},
		{"density", Config{PerDecade: -2}, "points per decade"},
		{"plan above Nyquist", Config{Plan: []float64{100, 30000}}, "plan frequency"},
		{"level above cap", Config{LevelDBFS: -3}, "cap"},
		{"level positive", Config{LevelDBFS: 3}, "level"},
		{"negative settle", Config{MinSettle: -time.Millisecond}, "MinSettle"},
		{"integration bounds", Config{MinIntegrate: time.Second, MaxIntegrate: 100 * time.Millisecond}, "MaxIntegrate"},
		{"periods", Config{Method: Multitone, Periods: -1}, "Periods"},
		{"method", Config{Method: 7}, "method"},
		{"multitone period", Config{Method: Multitone, Period: 1001}, "multitone"},
		{"adaptive beyond Nyquist", Config{Adaptive: &plan.Adaptive{From: 20, To: 30000}}, "adaptive"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			d := newFake(t, nil, faults{})
			_, c, err := runEngine(t, d, tc.cfg, runTimeout)
			if !errors.Is(err, ErrConfig) {
				t.Fatalf("Run = %v, want ErrConfig", err)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q does not mention %q", err, tc.want)
			}
			if len(c.errs) != 1 || c.errs[0] != err {
				t.Errorf("error events %v, want Run's error once", c.errs)
			}
		})
	}
	d := newFake(t, nil, faults{})
	e := New(d, Config{Plan: []float64{1000}})
	go func() {
		for range e.Events() {
		}
	}()
	if err := e.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	if err := e.Run(context.Background()); !errors.Is(err, ErrRunTwice) {
		t.Errorf("second Run = %v, want ErrRunTwice", err)
	}
}

// TestNoSignal: with both inputs silent no latency can be found; Run
// ends with ErrNoSignal and names both dead inputs.
func TestNoSignal(t *testing.T) {
	d := newFake(t, nil, faults{deadRef: true, deadDUT: true})
	e, _, err := runEngine(t, d, Config{}, runTimeout)
	if !errors.Is(err, ErrNoSignal) {
		t.Fatalf("Run = %v, want ErrNoSignal", err)
	}
	codes := problemCodes(e.Result())
	if !codes[CodeDeadRef] || !codes[CodeDeadDUT] {
		t.Errorf("problems %v, want dead-ref and dead-dut", e.Result().Problems)
	}
}

// TestRepeatSweeps: with Repeat the sweep runs again and again, each one
// complete, until MaxDuration.
func TestRepeatSweeps(t *testing.T) {
	d := newFake(t, nil, faults{})
	_, c, err := runEngine(t, d, Config{PerDecade: 2, Repeat: true, MaxDuration: 4 * time.Second}, runTimeout)
	if err != nil {
		t.Fatal(err)
	}
	complete := 0
	for _, tr := range c.traces {
		if tr.Complete {
			if tr.Sweep != complete {
				t.Errorf("complete trace of sweep %d, want %d", tr.Sweep, complete)
			}
			complete++
		}
	}
	if complete < 3 {
		t.Errorf("%d complete sweeps in 4 s, want at least 3", complete)
	}
	if len(c.codes) != 0 {
		t.Errorf("problems %v", keys(c.codes))
	}
}

// TestTimeLimit: a single measurement that cannot finish within
// MaxDuration ends with ErrTimeLimit and its partial trace.
func TestTimeLimit(t *testing.T) {
	d := newFake(t, nil, faults{})
	_, c, err := runEngine(t, d, Config{PerDecade: 10, MaxDuration: time.Second}, runTimeout)
	if !errors.Is(err, ErrTimeLimit) {
		t.Fatalf("Run = %v, want ErrTimeLimit", err)
	}
	if tr, ok := c.lastTrace(false); !ok || len(tr.Trace.Points) != len(c.points) {
		t.Errorf("partial trace missing or short: %v, %d points measured", ok, len(c.points))
	}
}

// TestRealTimeDevice runs a short sweep on a device paced by the wall
// clock, which never waits for the engine: the engine must keep the
// playout queue fed and read in time (no underrun, late sample, drop or
// problem) and measure correctly.
//
// A machine busy with other work (go test runs packages in parallel) can
// starve any real-time program now and then; the engine then reports the
// underrun as a dropout, as it must. So a run spoiled that way is tried
// again, up to realTimeAttempts times: the test fails when the engine
// cannot keep up even once, or measures wrongly.
func TestRealTimeDevice(t *testing.T) {
	if testing.Short() {
		t.Skip("runs in real time (about 1.5 s)")
	}
	q := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
	var (
		e *Engine
		c *collected
	)
	for attempt := 1; ; attempt++ {
		d := newFake(t, q, faults{paced: true})
		var err error
		e, c, err = runEngine(t, d, Config{PerDecade: 2, MaxLatency: 50 * time.Millisecond}, runTimeout)
		if err != nil {
			t.Fatal(err)
		}
		st := d.Stats()
		if st.Underruns == 0 && st.Late == 0 && st.Dropped == 0 {
			if p := e.Result().Problems; len(p) != 0 {
				t.Errorf("problems: %v", p)
			}
			break
		}
		if !problemCodes(e.Result())[CodeDropout] {
			t.Errorf("stream stats %+v, yet no dropout was reported", st)
		}
		if attempt == realTimeAttempts {
			t.Fatalf("stream stats %+v in all %d attempts: want no underrun, late sample or drop", st, attempt)
		}
		t.Logf("attempt %d: stream stats %+v (a busy machine); again", attempt, st)
		q = newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
	}
	tr, ok := c.lastTrace(true)
	if !ok {
		t.Fatal("no complete trace")
	}
	var freqs []float64
	var h []complex128
	for _, p := range tr.Trace.Points {
		freqs, h = append(freqs, p.Freq), append(h, p.H)
	}
	checkAgainst(t, q, freqs, h, tr.Valid)
}

// realTimeAttempts is how many times a real-time test repeats a run that
// a busy machine spoiled with an underrun.
const realTimeAttempts = 3

// TestDropoutRemeasured: a point whose block lost frames is measured
// again, so the sweep still ends complete and valid, with the dropout
// named.
func TestDropoutRemeasured(t *testing.T) {
	for _, f := range []faults{{dropAt: 40000}, {zeroAt: 20000, zeroN: 50, zeroEvery: 7919}} {
		d := newFake(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), f)
		cfg := monitorConfig(Steps)
		e, c, err := runEngine(t, d, cfg, runTimeout)
		if err != nil {
			t.Fatal(err)
		}
		grid, _ := plan.PerDecade(20, 20000, cfg.PerDecade)
		tr, ok := c.lastTrace(true)
		if !ok || len(tr.Trace.Points) != len(grid) {
			t.Fatalf("%+v: complete trace %v with %d points, want %d", f, ok, len(tr.Trace.Points), len(grid))
		}
		for i, v := range tr.Valid {
			if !v {
				t.Errorf("%+v: point at %g Hz invalid", f, tr.Trace.Points[i].Freq)
			}
		}
		seen := map[int]bool{}
		for _, p := range c.points {
			if seen[p.Index] {
				t.Errorf("%+v: point %d sent twice", f, p.Index)
			}
			seen[p.Index] = true
		}
		if !problemCodes(e.Result())[CodeDropout] {
			t.Errorf("%+v: dropout not named: %v", f, e.Result().Problems)
		}
		checkAgainst(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), grid, pointsH(tr), tr.Valid)
	}
}

// pointsH returns the ratios of a trace event's points.
func pointsH(tr TraceEvent) []complex128 {
	h := make([]complex128, len(tr.Trace.Points))
	for i, p := range tr.Trace.Points {
		h[i] = p.H
	}
	return h
}

// pullAt is the capture index at which the "response lead pulled
// mid-sweep" fault silences the response: about half-way through the
// monitor test's sweep.
const pullAt = 45000

// TestLeadPulledMidSweep: the response lead comes off half-way through a
// sweep of a low-pass with input noise. The points measured before stay
// valid; from the first silent point on, every point is invalid and says
// the response hears nothing.
func TestLeadPulledMidSweep(t *testing.T) {
	d := newFake(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), faults{pullDUTAt: pullAt, noise: 3e-5})
	e, _, err := runEngine(t, d, monitorConfig(Steps), runTimeout)
	if err != nil {
		t.Fatal(err)
	}
	res := e.Result()
	var valid, invalid []float64
	for _, p := range res.Points {
		if p.Valid {
			if len(invalid) > 0 {
				t.Errorf("point at %g Hz valid after the lead came off", p.Point.Freq)
			}
			valid = append(valid, p.Point.Freq)
			continue
		}
		invalid = append(invalid, p.Point.Freq)
		if len(p.Problems) == 0 || p.Problems[len(p.Problems)-1].Code != CodeDeadDUT {
			t.Errorf("point at %g Hz invalid for %v, want %s", p.Point.Freq, p.Problems, CodeDeadDUT)
		}
	}
	t.Logf("valid %v Hz, invalid %v Hz; problems %v; %d frames", valid, invalid, res.Problems, res.Timing.AudioFrames)
	if len(valid) < 3 || len(invalid) < leadSilentPoints {
		t.Errorf("%d valid and %d invalid points; the pull should fall mid-sweep", len(valid), len(invalid))
	}
}

// TestRunAfterCancelledRun: a run cancelled while its stimulus is queued
// ahead (a mode change on the live screen) leaves that stimulus, and its
// fade-out, in the playout queue. The next run on the same stream must
// start after it — for every pair of methods — and measure normally.
func TestRunAfterCancelledRun(t *testing.T) {
	for _, first := range []Method{Multitone, Steps} {
		for _, second := range []Method{Steps, Multitone} {
			t.Run(first.String()+"→"+second.String(), func(t *testing.T) {
				d := newFake(t, newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), faults{})
				cfg1 := Config{Method: first, Repeat: true, Period: 8192, MaxLatency: 60 * time.Millisecond, Ahead: 300 * time.Millisecond}
				ctx, cancel := context.WithTimeout(context.Background(), runTimeout)
				e1 := New(d, cfg1)
				go func() {
					for ev := range e1.Events() {
						if _, ok := ev.(TraceEvent); ok {
							cancel() // as a mode change does
						}
					}
				}()
				if err := e1.Run(ctx); err != nil && !errors.Is(err, context.Canceled) {
					t.Fatalf("first run: %v", err)
				}
				queued := d.WriteIndex() - d.PlayIndex()
				if queued <= 0 {
					t.Logf("nothing left queued after the first run")
				}
				cfg2 := Config{Method: second, Plan: []float64{631}, Period: 8192, Periods: 2, MaxLatency: 60 * time.Millisecond}
				if second == Multitone {
					cfg2.Plan = nil
				}
				_, c, err := runEngine(t, d, cfg2, runTimeout)
				if err != nil {
					t.Fatalf("second run, with %d frames still queued when it began: %v", queued, err)
				}
				if _, ok := c.lastTrace(true); !ok {
					t.Errorf("second run gave no complete trace")
				}
			})
		}
	}
}

// TestSilentReferenceKeepsPoints: a reference input of exact digital
// silence (a channel muted in a mixer, a software route gone) gives no
// resp/ref ratio. Every point must still be kept — invalid, and given
// relative to the stimulus — by both methods; the fake has no interface
// filters, so that equals the network's cookbook response (W3C Audio EQ
// Cookbook, REFERENCES §7) within 0.01 dB and 0.1°.
func TestSilentReferenceKeepsPoints(t *testing.T) {
	for _, m := range []Method{Steps, Multitone} {
		t.Run(m.String(), func(t *testing.T) {
			net := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
			want := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
			d := newFake(t, net, faults{deadRef: true})
			cfg := monitorConfig(m)
			cfg.FixedLatency = fakeDelay // the burst reaches the response; pin it for the comparison
			e, _, err := runEngine(t, d, cfg, runTimeout)
			if err != nil {
				t.Fatal(err)
			}
			res := e.Result()
			if len(res.Trace.Points) == 0 {
				t.Fatal("no point kept")
			}
			var worstDB, worstDeg float64
			for i, p := range res.Trace.Points {
				if res.Valid[i] {
					t.Errorf("%g Hz valid with a silent reference", p.Freq)
				}
				h := want.response(p.Freq, fakeRate)
				worstDB = max(worstDB, math.Abs(p.GainDB()-20*math.Log10(cmplx.Abs(h))))
				worstDeg = max(worstDeg, math.Abs(trace.WrapDeg(p.PhaseDeg()-cmplx.Phase(h)*180/math.Pi)))
			}
			t.Logf("%d points kept, all invalid; against the stimulus: worst %.4f dB, %.3f°", len(res.Trace.Points), worstDB, worstDeg)
			if worstDB > 0.01 || worstDeg > 0.1 {
				t.Errorf("kept points off the network's response by %.4f dB, %.3f°", worstDB, worstDeg)
			}
		})
	}
}

// TestHumOffNominal: mains at 49.93 Hz (grids wander by a tenth of a
// hertz) with a 3rd harmonic, 14 dB below the stimulus on the response
// and the reference. The stepped sine must measure the mains frequency on
// the quiet window and fit the lines out: every valid point within 0.005
// dB and 0.05° of the network's cookbook response (W3C Audio EQ Cookbook,
// REFERENCES §7), and only points on a line invalid.
func TestHumOffNominal(t *testing.T) {
	net := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
	want := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
	d := newFake(t, net, faults{humAmp: 0.02, humHz: 49.93, humH3: 0.5, noise: 1e-5})
	cfg := Config{PerDecade: 10, To: 2000, MaxLatency: 60 * time.Millisecond}
	e, _, err := runEngine(t, d, cfg, runTimeout)
	if err != nil {
		t.Fatal(err)
	}
	res := e.Result()
	var worstDB, worstDeg float64
	valid := 0
	for i, p := range res.Trace.Points {
		if !res.Valid[i] {
			onLine := false
			for k := 1.0; k <= 5; k++ {
				onLine = onLine || math.Abs(p.Freq-k*49.93) < 1
			}
			if !onLine {
				t.Errorf("%g Hz invalid, but no hum line is near it", p.Freq)
			}
			continue
		}
		valid++
		h := want.response(p.Freq, fakeRate)
		worstDB = max(worstDB, math.Abs(p.GainDB()-20*math.Log10(cmplx.Abs(h))))
		worstDeg = max(worstDeg, math.Abs(trace.WrapDeg(p.PhaseDeg()-cmplx.Phase(h)*180/math.Pi)))
	}
	t.Logf("%d of %d points valid; worst %.4f dB, %.3f° against the cookbook response", valid, len(res.Trace.Points), worstDB, worstDeg)
	if worstDB > 0.005 || worstDeg > 0.05 {
		t.Errorf("with hum fitted out, worst %.4f dB, %.3f°; want within 0.005 dB, 0.05°", worstDB, worstDeg)
	}
	if valid < len(res.Trace.Points)-2 {
		t.Errorf("only %d of %d points valid", valid, len(res.Trace.Points))
	}
}

// TestAheadGrowsAfterUnderrun: three times in a sweep the device plays
// 150 ms on while the engine is kept from running (as a busy machine
// deschedules it), longer than the 100 ms the engine queues ahead by
// default. The first pause starves the output and is reported; the engine
// then queues further ahead, so the later pauses pass without an
// underrun. The fake counts the pauses in frames, not wall time, so the
// test does not depend on how busy the test machine is.
func TestAheadGrowsAfterUnderrun(t *testing.T) {
	q := newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate)
	d := newFake(t, q, faults{stalls: []int64{30000, 60000, 90000}, stallFrames: fakeRate * 150 / 1000})
	e, _, err := runEngine(t, d, Config{PerDecade: 10, MaxLatency: 50 * time.Millisecond}, runTimeout)
	if err != nil {
		t.Fatal(err)
	}
	st := d.Stats()
	t.Logf("%d pauses, stream stats %+v", d.stalled, st)
	if d.stalled < 3 {
		t.Fatalf("only %d of 3 pauses happened; lengthen the sweep", d.stalled)
	}
	if st.Underruns == 0 {
		t.Fatal("no underrun at all: the pauses do not exceed what is queued ahead, the test proves nothing")
	}
	if !problemCodes(e.Result())[CodeDropout] {
		t.Errorf("the first pause starved the output, yet no dropout was reported")
	}
	if st.Underruns > 1 {
		t.Errorf("%d underruns for 3 pauses; after the first the engine should queue far enough ahead", st.Underruns)
	}
}
