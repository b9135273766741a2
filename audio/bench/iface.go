package bench

import (
	"fmt"
	"math"
)

// Interface models the simulated audio interface's own imperfections: the
// parts both inputs share (latency, converter filters) and the small
// differences between the two inputs that a loopback calibration removes.
// Every value is "common practice" for a decent USB interface, not the
// data of any product.
//
// The zero Interface stands for [DefaultInterface] wherever one is embedded
// in a [Config]; to switch a part off, start from DefaultInterface and set
// that field (a corner of 0 removes the filter, NoiseDBFS −Inf the noise).
type Interface struct {
	// ConverterMS is the delay of the converters themselves, DAC and ADC
	// filters together, in milliseconds; 0…50. Default 4. It is rounded
	// to whole frames, with a floor of 17 frames (the reach of the drift
	// resampler).
	ConverterMS float64
	// BufferPeriods is the number of periods the round trip spends in the
	// interface's buffers; 1…16. Default 2. The round-trip latency is
	// ConverterMS + BufferPeriods periods + the network simulator's kernel
	// delay (see [Bench.Latency]).
	BufferPeriods int
	// CouplingHz holds the corners, in Hz, of the one-pole AC-coupling
	// high-pass of input 1 and input 2 (their coupling capacitors); 0
	// removes it; otherwise at most 1 % of the rate. Default 2.40 and
	// 2.45 Hz: the mismatch is 0.14° of phase at 20 Hz and falls as 1/f.
	CouplingHz [2]float64
	// AntiAlias holds the corners of the anti-alias low-pass of input 1
	// and input 2, a second-order Butterworth filter of the converter run
	// at the capture rate, as a fraction of the rate; 0 removes it;
	// otherwise 0.05…0.49. Default 0.4500 and 0.4501: −0.5 dB at 20 kHz
	// (48 kHz rate), the mismatch 0.004 dB and 0.12° there.
	AntiAlias [2]float64
	// GainDB holds the gains of input 1 and input 2 in dB; −20…+20.
	// Default 0 and −0.02 dB: the inputs' level mismatch.
	GainDB [2]float64
	// NoiseDBFS is the RMS level of each input's white noise floor, in
	// dBFS (0 dBFS RMS is a constant ±1); −Inf for none; at most −20.
	// Default −100. Each input has its own seeded source.
	NoiseDBFS float64
}

// DefaultInterface returns the defaults stated on each field of
// [Interface]. The two inputs differ by at most 0.025 dB and 0.15° from
// 20 Hz to 20 kHz at 48 kHz, well inside what a loopback calibration
// removes.
func DefaultInterface() Interface {
	return Interface{
		ConverterMS:   4,
		BufferPeriods: 2,
		CouplingHz:    [2]float64{2.40, 2.45},
		AntiAlias:     [2]float64{0.4500, 0.4501},
		GainDB:        [2]float64{0, -0.02},
		NoiseDBFS:     -100,
	}
}

// validate checks every field against rate.
func (f Interface) validate(rate int) error {
	switch {
	case !(f.ConverterMS >= 0 && f.ConverterMS <= 50):
		return fmt.Errorf("bench: Interface.ConverterMS %g is out of range; use 0…50 ms (default 4)", f.ConverterMS)
	case f.BufferPeriods < 1 || f.BufferPeriods > 16:
		return fmt.Errorf("bench: Interface.BufferPeriods %d is out of range; use 1…16 (default 2)", f.BufferPeriods)
	case !(f.NoiseDBFS <= -20):
		return fmt.Errorf("bench: Interface.NoiseDBFS %g is out of range; use −Inf…−20 dBFS (default −100)", f.NoiseDBFS)
	}
	for c := range 2 {
		if hz := f.CouplingHz[c]; !(hz >= 0 && hz <= 0.01*float64(rate)) {
			return fmt.Errorf("bench: Interface.CouplingHz[%d] %g Hz is out of range; use 0 (none) or up to %g Hz (1%% of the rate); default 2.4 Hz", c, hz, 0.01*float64(rate))
		}
		if aa := f.AntiAlias[c]; aa != 0 && !(aa >= 0.05 && aa <= 0.49) {
			return fmt.Errorf("bench: Interface.AntiAlias[%d] %g is out of range; use 0 (none) or 0.05…0.49 of the rate (default 0.45)", c, aa)
		}
		if g := f.GainDB[c]; !(g >= -20 && g <= 20) {
			return fmt.Errorf("bench: Interface.GainDB[%d] %g dB is out of range; use −20…+20 dB (default 0)", c, g)
		}
	}
	return nil
}

// highPass is a one-pole high-pass, the bilinear transform of s/(s + ωc)
// with the corner prewarped: y[n] = (x[n] − x[n−1] + (1 − K)·y[n−1])/(1 + K),
// K = tan(π·fc/rate). A corner of 0 passes the signal unchanged.
type highPass struct {
	on     bool
	g, a   float64 // 1/(1+K), (1−K)/(1+K)
	x1, y1 float64
}

func newHighPass(fc, rate float64) highPass {
	if fc == 0 {
		return highPass{}
	}
	k := math.Tan(math.Pi * fc / rate)
	return highPass{on: true, g: 1 / (1 + k), a: (1 - k) / (1 + k)}
}

func (h *highPass) step(x float64) float64 {
	if !h.on {
		return x
	}
	y := h.g*(x-h.x1) + h.a*h.y1
	h.x1, h.y1 = x, y
	return y
}

// lowPass2 is a second-order Butterworth low-pass, the bilinear transform of
// ωc²/(s² + √2·ωc·s + ωc²) with the corner prewarped (RBJ cookbook LPF with
// Q = 1/√2), in transposed direct form II. A corner of 0 passes the signal.
type lowPass2 struct {
	on                 bool
	b0, b1, b2, a1, a2 float64
	s1, s2             float64
}

func newLowPass2(frac float64) lowPass2 {
	if frac == 0 {
		return lowPass2{}
	}
	k := math.Tan(math.Pi * frac)
	n := 1 / (1 + math.Sqrt2*k + k*k)
	b0 := k * k * n
	return lowPass2{on: true, b0: b0, b1: 2 * b0, b2: b0, a1: 2 * (k*k - 1) * n, a2: (1 - math.Sqrt2*k + k*k) * n}
}

func (l *lowPass2) step(x float64) float64 {
	if !l.on {
		return x
	}
	y := l.b0*x + l.s1
	l.s1 = l.b1*x - l.a1*y + l.s2
	l.s2 = l.b2*x - l.a2*y
	return y
}

// Resampler of FaultDrift: a Kaiser-windowed sinc interpolator of half-length
// interpHalf, evaluating the band-limited signal between its samples.
const (
	interpHalf  = 16
	interpBeta  = 8.0  // Kaiser β: side lobes near −80 dB
	windowSteps = 2048 // table intervals over |x| ∈ [0, 1]
)

// interpolator evaluates x(u) = Σ_m x[i0+m]·h(f − m), m = −interpHalf+1 …
// interpHalf, for u = i0 + f, with h(t) = sinc(t)·w(t/interpHalf), w a
// Kaiser window read from a table, and the weights normalised to sum 1 (unit
// gain at DC). Both inputs share one set of weights per capture sample, so
// whatever the interpolator does to the signal it does to both and the
// ratio of the inputs does not see it.
type interpolator struct {
	window [windowSteps + 2]float64
	w      [2 * interpHalf]float64 // weights of the current position
}

func newInterpolator() *interpolator {
	ip := &interpolator{}
	i0b := besselI0(interpBeta)
	for i := range ip.window {
		x := min(float64(i)/windowSteps, 1)
		ip.window[i] = besselI0(interpBeta*math.Sqrt(1-x*x)) / i0b
	}
	return ip
}

// weights sets the weights for fraction f ∈ (0, 1).
func (ip *interpolator) weights(f float64) {
	s := math.Sin(math.Pi*f) / math.Pi
	var sum float64
	for j := range ip.w {
		m := j - interpHalf + 1
		t := f - float64(m)
		// sinc(f − m) = (−1)^m·sin(πf)/(π(f − m))
		v := s / t
		if m&1 != 0 {
			v = -v
		}
		x := math.Abs(t) / interpHalf * windowSteps
		k := int(x)
		v *= ip.window[k] + (x-float64(k))*(ip.window[k+1]-ip.window[k])
		ip.w[j] = v
		sum += v
	}
	for j := range ip.w {
		ip.w[j] /= sum
	}
}

// at returns the interpolated value of the history hist (a power-of-two ring
// with mask) at i0 + f, with the weights of f already set.
func (ip *interpolator) at(hist []float64, mask, i0 int64) float64 {
	var v float64
	base := i0 - interpHalf + 1
	for j, w := range ip.w {
		v += w * hist[(base+int64(j))&mask]
	}
	return v
}

// besselI0 is the modified Bessel function of the first kind of order 0, by
// its power series Σ ((x/2)^k / k!)².
func besselI0(x float64) float64 {
	sum, term := 1.0, 1.0
	q := x * x / 4
	for k := 1; k < 200; k++ {
		term *= q / float64(k*k)
		sum += term
		if term < sum*1e-17 {
			break
		}
	}
	return sum
}
