package engine

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/tone"
)

// TestXcorrPeak finds a known delay of a seeded noise burst, its sign,
// and refuses silence and unrelated noise.
func TestXcorrPeak(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	burst := make([]float64, 1000)
	for i := range burst {
		burst[i] = rng.NormFloat64() * 0.1
	}
	noise := func(n int, sigma float64) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64() * sigma
		}
		return x
	}
	delayed := func(lag int, gain, sigma float64) []float64 {
		y := noise(6000, sigma)
		for i, v := range burst {
			y[lag+i] += gain * v
		}
		return y
	}
	tests := []struct {
		name    string
		y       []float64
		wantLag int
		wantOK  bool
		wantNeg bool
	}{
		{"delay 1234", delayed(1234, 0.1, 0), 1234, true, false},
		{"delay 0 with noise", delayed(0, 0.1, 1e-3), 0, true, false},
		{"inverted at 4321", delayed(4321, -0.3, 1e-4), 4321, true, true},
		{"at the last lag", delayed(5000, 0.1, 0), 5000, true, false},
		{"silence", make([]float64, 6000), 0, false, false},
		{"noise only", noise(6000, 0.01), 0, false, false},
		{"too quiet", delayed(100, 1e-5, 0), 0, false, false}, // −100 dB: below the dead margin
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			lag, peak, ok := xcorrPeak(tc.y, burst, 0.1)
			if ok != tc.wantOK {
				t.Fatalf("ok = %v, want %v (lag %d, peak %g)", ok, tc.wantOK, lag, peak)
			}
			if !ok {
				return
			}
			if lag != tc.wantLag || (peak < 0) != tc.wantNeg {
				t.Errorf("lag %d peak %g, want lag %d (negative %v)", lag, peak, tc.wantLag, tc.wantNeg)
			}
		})
	}
}

// TestHistory checks gaps read as NaN, trimming and reads past the ends.
func TestHistory(t *testing.T) {
	h := history{ch: make([][]float64, 1)}
	src := [][]float64{{1, 2, 3, 4}}
	h.append(100, src, []int{0}, 4) // 100…103
	h.append(106, src, []int{0}, 2) // 104, 105 missing; 106, 107
	if h.start != 100 || h.end() != 108 {
		t.Fatalf("start %d end %d, want 100 and 108", h.start, h.end())
	}
	got := h.read(make([]float64, 10), 0, 99)
	want := []float64{math.NaN(), 1, 2, 3, 4, math.NaN(), math.NaN(), 1, 2, math.NaN()}
	for i := range want {
		if got[i] != want[i] && !(math.IsNaN(got[i]) && math.IsNaN(want[i])) {
			t.Errorf("read[%d] = %v, want %v", i, got[i], want[i])
		}
	}
	h.trim(103)
	if h.start != 103 || h.end() != 108 || h.read(make([]float64, 1), 0, 103)[0] != 4 {
		t.Errorf("after trim: start %d end %d", h.start, h.end())
	}
	h.trim(1000)
	if h.end() != 108 || len(h.ch[0]) != 0 {
		t.Errorf("trim past the end: start %d end %d len %d", h.start, h.end(), len(h.ch[0]))
	}
	h.append(108+maxGapFrames+1, src, []int{0}, 4) // a huge gap starts afresh
	if h.start != 108+maxGapFrames+1 || len(h.ch[0]) != 4 {
		t.Errorf("after a huge gap: start %d len %d", h.start, len(h.ch[0]))
	}
}

// TestOutbox: important events are never dropped however full the
// channel; latest-only events keep the newest.
func TestOutbox(t *testing.T) {
	o := &outbox{ch: make(chan Event, 2)}
	for i := range 5 {
		o.push(PointEvent{Index: i})
		o.latest(StatusEvent{Status: Status{Frame: int64(i)}})
		o.latest(ProgressEvent{Done: i})
		o.flush()
	}
	var got []Event
	for len(o.ch) > 0 {
		got = append(got, <-o.ch)
	}
	o.flush()
	for len(o.ch) > 0 {
		got = append(got, <-o.ch)
	}
	o.flush()
	for len(o.ch) > 0 {
		got = append(got, <-o.ch)
	}
	o.flush()
	for len(o.ch) > 0 {
		got = append(got, <-o.ch)
	}
	points, statuses := 0, 0
	var lastStatus int64 = -1
	for _, ev := range got {
		switch v := ev.(type) {
		case PointEvent:
			if v.Index != points {
				t.Errorf("point %d arrived as %d-th", v.Index, points)
			}
			points++
		case StatusEvent:
			statuses++
			lastStatus = v.Status.Frame
		}
	}
	if points != 5 {
		t.Errorf("%d points delivered, want 5", points)
	}
	if statuses >= 5 || lastStatus != 4 {
		t.Errorf("%d statuses, last %d; want some coalesced and the newest (4) kept", statuses, lastStatus)
	}
	o.push(ErrorEvent{})
	o.latest(TraceEvent{Live: true})
	done := make(chan struct{})
	var tail []Event
	go func() {
		for ev := range o.ch {
			tail = append(tail, ev)
		}
		close(done)
	}()
	o.drain(time.Second)
	<-done
	if len(tail) == 0 {
		t.Fatal("drain delivered nothing")
	}
	if _, ok := tail[len(tail)-1].(ErrorEvent); !ok {
		t.Errorf("last event %T, want the error", tail[len(tail)-1])
	}
}

// TestResidualAndGlitch: the residual of a fitted tone with harmonics is
// at the noise; a stretch of zeroed samples stands out, noise alone does
// not.
func TestResidualAndGlitch(t *testing.T) {
	const rate, f, n = 48000.0, 997.0, 4800
	rng := rand.New(rand.NewPCG(3, 4))
	x := make([]float64, n)
	for i := range x {
		ph := 2 * math.Pi * f * float64(i) / rate
		x[i] = 0.1*math.Cos(ph+0.3) + 0.002*math.Cos(3*ph) + 1e-5*rng.NormFloat64()
	}
	est := &tone.Estimator{Rate: rate}
	e, err := est.Fit(x, f)
	if err != nil {
		t.Fatal(err)
	}
	res := residual(nil, x, e, rate)
	ss := 0.0
	for _, v := range res {
		ss += v * v
	}
	// The residual is the added white noise (σ = 1e-5): within 10 %.
	if rms := math.Sqrt(ss / n); math.Abs(rms/1e-5-1) > 0.1 {
		t.Errorf("residual RMS %g, want about 1e-5 (the noise)", rms)
	}
	var m monitors
	if _, g := m.glitch(res, e.Amplitude()); g {
		t.Error("glitch found in a clean tone")
	}
	for i := 2000; i < 2050; i++ {
		x[i] = 0
	}
	e, _ = est.Fit(x, f)
	res = residual(res, x, e, rate)
	at, g := m.glitch(res, e.Amplitude())
	if !g || at < 1950 || at > 2050 {
		t.Errorf("glitch %v at %d, want one near sample 2000", g, at)
	}
}

// TestWiringRules checks the swap, inverted-band and loopback rules on
// made-up points (thresholds: common practice).
func TestWiringRules(t *testing.T) {
	mk := func(n int, fn func(f float64) levelPoint) []levelPoint {
		var p []levelPoint
		for i := range n {
			f := 20 * math.Pow(1000, float64(i)/float64(n-1))
			lp := fn(f)
			lp.f = f
			p = append(p, lp)
		}
		return p
	}
	lowpass := func(f float64) float64 { return -10 * math.Log10(1+math.Pow(f/1000, 4)) }
	tests := []struct {
		name             string
		pts              []levelPoint
		wantSwap, wantIn bool
	}{
		{"normal low-pass", mk(12, func(f float64) levelPoint { return levelPoint{respDB: lowpass(f), gainDB: lowpass(f)} }), false, false},
		{"swapped low-pass", mk(12, func(f float64) levelPoint { return levelPoint{refDB: lowpass(f), gainDB: -lowpass(f)} }), true, false},
		{"flat and flat", mk(12, func(f float64) levelPoint { return levelPoint{} }), false, false},
		{"inverted flat", mk(12, func(f float64) levelPoint { return levelPoint{hDeg: 179} }), false, true},
		{"inverted on a slope", mk(12, func(f float64) levelPoint { return levelPoint{gainDB: 20 * math.Log10(f), hDeg: 180} }), false, false},
		{"all-pass crossing 180", mk(12, func(f float64) levelPoint {
			return levelPoint{hDeg: -2 * math.Atan2(f/1000/0.7, 1-(f/1000)*(f/1000)) * 180 / math.Pi}
		}), false, false},
		{"too few points", mk(4, func(f float64) levelPoint { return levelPoint{refDB: lowpass(f)} }), false, false},
	}
	// refWire: a loopback with the interface's roll-off at the top edge is
	// still a wire; a reference behind a peaking filter is not.
	edge := mk(17, func(f float64) levelPoint { return levelPoint{refDB: -10 * math.Log10(1+math.Pow(f/20000, 4))} })
	edge[len(edge)-1].refDB = -3
	if known, flat := refWire(edge); !known || !flat {
		t.Errorf("loopback with an edge roll-off: known %v flat %v, want both", known, flat)
	}
	peak := mk(17, func(f float64) levelPoint { return levelPoint{refDB: 4 * math.Exp(-math.Pow(math.Log10(f/200), 2)*4)} })
	if known, flat := refWire(peak); !known || flat {
		t.Errorf("reference behind a +4 dB peak: known %v flat %v, want known and not flat", known, flat)
	}
	if known, _ := refWire(edge[:4]); known {
		t.Error("4 points: known, want unknown")
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, ok := swapSpread(tc.pts); ok != tc.wantSwap {
				t.Errorf("swap = %v, want %v", ok, tc.wantSwap)
			}
			if _, _, ok := invertedBand(tc.pts); ok != tc.wantIn {
				t.Errorf("inverted = %v, want %v", ok, tc.wantIn)
			}
		})
	}
}

// TestIntegrationPolicy checks the step lengths: whole cycles of at least
// the minimum, lengthened for a low SNR to reach the target gain
// uncertainty 20/ln10·√(2/(N·η)) (Cramér–Rao for two equally noisy
// inputs, REFERENCES.md §1 [M]), and capped at 8 times the minimum and at
// MaxIntegrate.
func TestIntegrationPolicy(t *testing.T) {
	r := &run{fr: 48000, cfg: Config{}}
	cfg, err := resolve(Config{}, 48000)
	if err != nil {
		t.Fatal(err)
	}
	r.cfg = cfg
	m := &stepMode{r: r, lastSNR: math.Inf(1)}
	tests := []struct {
		name   string
		f, snr float64
		want   func(n, least int) bool
	}{
		{"1 kHz high SNR: 10 ms", 1000, 100, func(n, l int) bool { return n == 480 && l == 480 }},
		{"20 Hz: 4 cycles", 20, 100, func(n, l int) bool { return n == 9600 && l == 9600 }},
		{"1 kHz at 30 dB", 1000, 30, func(n, l int) bool {
			gu := 20 / math.Ln10 * math.Sqrt(2/(float64(n)*1000))
			return l == 480 && n > 480 && gu <= 0.01 && tone.Cycles(n, 1000, 48000) == math.Round(tone.Cycles(n, 1000, 48000))
		}},
		{"1 kHz at 0 dB: capped at 8 times the minimum", 1000, 0, func(n, l int) bool { return n == 8*480 }},
		{"20 Hz at 0 dB: capped at MaxIntegrate", 20, 0, func(n, l int) bool { return n == 48000 }},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m.lastSNR = tc.snr
			n, least := m.integFrames(tc.f)
			if !tc.want(n, least) {
				t.Errorf("integFrames(%g Hz, SNR %g dB) = %d (least %d)", tc.f, tc.snr, n, least)
			}
		})
	}
	// Settling: 5 ms or 3 cycles, whichever is longer.
	if s := m.settleFrames(1000); s != 240 {
		t.Errorf("settle at 1 kHz %d frames, want 240 (5 ms)", s)
	}
	if s := m.settleFrames(20); s != 7200 {
		t.Errorf("settle at 20 Hz %d frames, want 7200 (3 cycles)", s)
	}
}

// TestNoReference measures without a reference input: the response is
// divided by the known stimulus. A wire gives 0 dB and 0°; a low-pass
// needs the latency from a calibration (FixedLatency).
func TestNoReference(t *testing.T) {
	tests := []struct {
		name  string
		q     *biquad
		fixed int
	}{
		{"wire", nil, 0},
		{"low-pass with a calibrated latency", newBiquad(bqLowpass, 1000, math.Sqrt2/2, 0, fakeRate), fakeDelay},
	}
	for _, tc := range tests {
		for _, m := range []Method{Steps, Multitone} {
			t.Run(tc.name+"/"+m.String(), func(t *testing.T) {
				d := newFake(t, tc.q, faults{})
				ns := &noRef{fakeDev: d}
				cfg := Config{Method: m, PerDecade: 5, Period: 8192, Periods: 2, FixedLatency: tc.fixed}
				e := New(ns, cfg)
				c := &collected{codes: map[string]bool{}}
				done := make(chan struct{})
				go func() {
					defer close(done)
					for ev := range e.Events() {
						c.add(ev)
					}
				}()
				err := e.Run(t.Context())
				<-done
				if err != nil {
					t.Fatal(err)
				}
				q := tc.q
				if q == nil {
					q = &biquad{b0: 1}
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
				if p := e.Result().Problems; len(p) != 0 {
					t.Errorf("problems: %v", p)
				}
			})
		}
	}
}

// noRef is the fake with its routing saying there is no reference input.
type noRef struct{ *fakeDev }

func (n *noRef) Routing() audio.Routing {
	return audio.Routing{Stimulus: audio.MaskOf(1, 2), Response: 1, Reference: audio.NoReference}
}

// TestStatusLevels checks the monitors' levels: the reference peak is the
// output level (a unity loopback), and the noise floor of white noise of
// standard deviation σ is σ in RMS (common practice).
func TestStatusLevels(t *testing.T) {
	const level, sigma = -26.0, 1e-4
	d := newFake(t, nil, faults{noise: sigma})
	e, c, err := runEngine(t, d, Config{LevelDBFS: level, PerDecade: 3}, runTimeout)
	if err != nil {
		t.Fatal(err)
	}
	if got := d.Output().Level(); got != level {
		t.Errorf("stage level %g, want %g", got, level)
	}
	peak := math.Inf(-1)
	var last Status
	for _, s := range c.statuses {
		if s.Phase == "steps" {
			peak = max(peak, s.Inputs[1].PeakDBFS)
		}
		last = s
	}
	// The peak includes the noise, whose peaks reach about 4σ:
	// 20·log10(1 + 4σ/A) = 0.07 dB; allow 0.1 dB.
	if math.Abs(peak-level) > 0.1 {
		t.Errorf("reference peak %.3f dBFS, want %.1f", peak, level)
	}
	if nf := last.Inputs[0].NoiseDBFS; math.Abs(nf-20*math.Log10(sigma)) > 0.5 {
		t.Errorf("noise floor %.2f dBFS, want %.2f", nf, 20*math.Log10(sigma))
	}
	if !last.LatencyKnown || last.Latency != fakeDelay || last.Phase != "done" {
		t.Errorf("last status: latency %d (known %v), phase %q", last.Latency, last.LatencyKnown, last.Phase)
	}
	if r := e.Result(); r.Timing.AudioFrames <= 0 || !r.Complete {
		t.Errorf("result %+v", r.Timing)
	}
}
