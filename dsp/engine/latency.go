package engine

import (
	"context"
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"

	"tonetrace/dsp/stimulus"
)

// Latency burst settings.
const (
	// burstSeconds is the length of the latency burst.
	burstSeconds = 0.05
	// burstLevelDB is the burst's peak relative to the stage level.
	burstLevelDB = -6.0
	// burstFadeSeconds is the raised-cosine fade at each end of the burst.
	burstFadeSeconds = 0.005
	// corrPeakRatio is how many times the RMS of the correlation away
	// from its peak the peak must reach for the burst to count as heard.
	corrPeakRatio = 8.0
	// corrExclude is the half-width in frames around the peak left out
	// of that RMS (the response of a filter spreads the peak).
	corrExclude = 64
)

// startup is the state of the start-up phase: the quiet window, the
// latency burst and the latency found.
type startup struct {
	burst    []float64
	burstAt  int64 // output index of the burst's first sample
	quiet    int   // frames of silence before the burst
	maxLat   int   // largest latency searched, in frames
	earliest int64 // output index from which the stimulus may play
	done     bool  // the window has been analysed
	found    bool  // a latency was found
	lat      int64 // capture index − output index
	sign     float64
	from     int // 1-based input the latency was found on
}

// windowStart returns the capture index where the quiet window starts.
func (s *startup) windowStart() int64 { return s.burstAt - int64(s.quiet) }

// windowEnd returns the capture index after the correlation window.
func (s *startup) windowEnd() int64 {
	return s.burstAt + int64(len(s.burst)) + int64(s.maxLat)
}

// startBurst queues the latency burst after the quiet window.
func (r *run) startBurst(ctx context.Context) error {
	st := &r.st
	n := max(64, int(math.Round(burstSeconds*r.fr)))
	noise, err := stimulus.NewWhiteNoise(r.cfg.Seed, burstLevelDB, 0)
	if err != nil {
		return err
	}
	st.burst = make([]float64, n)
	noise.Read(st.burst)
	stimulus.Fade(st.burst, min(n/4, int(math.Round(burstFadeSeconds*r.fr))))
	st.quiet = max(1, int(math.Round(r.cfg.QuietTime.Seconds()*r.fr)))
	st.maxLat = int(math.Round(r.cfg.MaxLatency.Seconds() * r.fr))
	stageFade := int64(r.s.Output().Fade().Seconds()*r.fr) + 1
	// After whatever an earlier run left queued (its stimulus ahead of
	// the device and its fade-out, when it was cancelled), so that the
	// quiet window hears silence and the burst lands behind it.
	from := max(r.s.PlayIndex()+2*r.lead, r.s.WriteIndex())
	st.burstAt = from + max(int64(st.quiet), stageFade+r.lead)
	st.earliest = st.windowEnd()
	if err := r.w.write(ctx, st.burstAt, st.burst); err != nil {
		return err
	}
	r.w.finish()
	return nil
}

// checkLatency analyses the quiet window and the burst once both are
// captured: the noise floor and hum of each input, and the latency.
func (r *run) checkLatency() error {
	st := &r.st
	if r.hist.end() < st.windowEnd() {
		return nil
	}
	st.done = true
	w0 := st.windowStart()
	wn := int(st.windowEnd() - w0)
	y := make([]float64, wn)
	// Candidates in order: the reference, then the response.
	order := []int{0}
	if r.ref >= 0 {
		order = []int{1, 0}
	}
	for k := range r.keep {
		r.hist.read(y, k, w0)
		r.mon.quietWindow(k, y[:st.quiet])
	}
	// The latency is the earliest arrival among the inputs that heard the
	// burst: a network delays the peak of its input's correlation by its
	// group delay, a straight loopback does not. The sign of the
	// reference's own peak tells its polarity.
	amp := r.levelAmp()
	refSign := 0.0
	for _, k := range order {
		r.hist.read(y, k, w0)
		for i, v := range y {
			if math.IsNaN(v) {
				y[i] = 0
			}
		}
		lag, peak, ok := xcorrPeak(y, st.burst, amp)
		if !ok {
			continue
		}
		if k == 1 {
			refSign = math.Copysign(1, peak)
		}
		if l := int64(lag - st.quiet); !st.found || l < st.lat {
			st.found, st.lat, st.from = true, l, r.keep[k]+1
		}
	}
	st.sign = refSign
	if n := r.cfg.FixedLatency; n > 0 {
		st.lat = int64(n)
		if !st.found {
			st.from = 0
		}
	}
	// An input whose level does not rise during the burst hears nothing
	// of the outputs, whatever network is in the way: that is the early
	// sign of a dead response lead (a stopband lowers the level at some
	// frequencies, never across the whole burst).
	if st.found {
		r.hist.read(y, 0, w0)
		for i, v := range y {
			if math.IsNaN(v) {
				y[i] = 0
			}
		}
		// Mains hum would hide a weak burst: fit it over the whole window
		// and take it out first.
		for _, h := range mainsFreqs {
			if e, err := r.estFund.Fit(y, h); err == nil {
				y = residual(y, y, e, r.fr)
			}
		}
		quiet := rms(y[:st.quiet])
		from := max(0, min(int64(st.quiet)+st.lat, int64(len(y)-len(st.burst))))
		heard := rms(y[from : from+int64(len(st.burst))])
		expect := amp * rms(st.burst)
		if !(heard > 2*quiet && heard > expect*math.Pow(10, -DeadMarginDB/20)) {
			r.mon.respSilent = true
			r.raise(r.mon.deadDUTProblem("the latency test burst"))
		}
	}
	switch {
	case !st.found:
		if r.ref >= 0 {
			r.raise(r.mon.deadRefProblem("the latency test burst"))
		}
		r.raise(r.mon.deadDUTProblem("the latency test burst"))
		return fmt.Errorf("%w: no input heard the latency test burst; check that the outputs are connected, the output level is up, and the loopback reaches input %d",
			ErrNoSignal, max(r.refIn, r.respIn))
	case r.ref >= 0 && refSign == 0:
		r.raise(r.mon.deadRefProblem("the latency test burst"))
	}
	// An inverted burst on the reference is reported once the points show
	// the reference is a straight loopback (see refWire).
	return nil
}

// xcorrPeak cross-correlates y with the burst x by FFT, r[l] = Σ y[l+n]·x[n]
// for l = 0 … len(y)−len(x), and returns the lag of the largest |r|, the
// value there, and whether it stands out: at least corrPeakRatio times the
// RMS of r away from it, and at least a gain of −60 dB relative to amp
// (the amplitude the inputs would hear through a unity loop).
func xcorrPeak(y, x []float64, amp float64) (lag int, peak float64, ok bool) {
	lags := len(y) - len(x) + 1
	if lags < 1 {
		return 0, 0, false
	}
	n := 1
	for n < len(y)+len(x) {
		n <<= 1
	}
	fft := fourier.NewFFT(n)
	yp := make([]float64, n)
	xp := make([]float64, n)
	copy(yp, y)
	copy(xp, x)
	cy := fft.Coefficients(nil, yp)
	cx := fft.Coefficients(nil, xp)
	for i := range cy {
		cy[i] *= cmplx.Conj(cx[i])
	}
	rr := fft.Sequence(yp, cy) // unnormalised: n·r
	scale := 1 / float64(n)
	best, bestAbs := 0, -1.0
	for l := 0; l < lags; l++ {
		if a := math.Abs(rr[l]); a > bestAbs {
			best, bestAbs = l, a
		}
	}
	var sum float64
	cnt := 0
	for l := 0; l < lags; l++ {
		if l < best-corrExclude || l > best+corrExclude {
			sum += rr[l] * rr[l]
			cnt++
		}
	}
	energy := 0.0
	for _, v := range x {
		energy += v * v
	}
	peak = rr[best] * scale
	rms := 0.0
	if cnt > 0 {
		rms = math.Sqrt(sum/float64(cnt)) * scale
	}
	ok = math.Abs(peak) >= corrPeakRatio*rms && math.Abs(peak) >= energy*amp*math.Pow(10, -DeadMarginDB/20) && peak != 0
	return best, peak, ok
}

// rms returns the root mean square of x, NaN samples left out.
func rms(x []float64) float64 {
	s, n := 0.0, 0
	for _, v := range x {
		if !math.IsNaN(v) {
			s += v * v
			n++
		}
	}
	if n == 0 {
		return 0
	}
	return math.Sqrt(s / float64(n))
}
