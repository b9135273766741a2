package multitone

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// ErrNoReference is wrapped by the error AnalyzeInto returns when the
// reference input carries nothing at some tone, so H cannot be formed
// there.
var ErrNoReference = errors.New("multitone: reference input has no signal at a tone")

// ErrNotFinite is wrapped by the error AnalyzeInto returns when an input
// sample is NaN or infinite.
var ErrNotFinite = errors.New("multitone: input sample is not finite")

// ToneResult is the analysis of one tone in one period.
//
// Spectra are complex amplitudes in full-scale units: a tone
// A·cos(2πf·i/rate + φ) gives A·e^{jφ}, so |Ref| is the peak amplitude of
// the tone at the reference input (1 = 0 dBFS) and arg Ref its phase at
// the first sample of the period.
type ToneResult struct {
	// Freq is the tone frequency in hertz.
	Freq float64
	// Ref and Resp are the complex amplitudes at the reference and
	// response inputs.
	Ref, Resp complex128
	// H is Resp/Ref; NaN when Ref is zero.
	H complex128
	// RefNoise and RespNoise estimate the noise power at the tone bin of
	// each input, in full-scale amplitude squared (the expected |N|² of
	// the noise N added to Ref or Resp): the mean of |amplitude|² over
	// Options.NoiseBins empty bins nearest the tone (bins without a tone
	// or a 2nd or 3rd harmonic of one). White noise of variance σ² gives
	// 4σ²/Period. Intermodulation products of a nonlinear circuit that fall
	// in those bins count as noise, so distortion shows as a lower SNR and
	// a larger uncertainty; hum off the bin grid leaks into them likewise.
	RefNoise, RespNoise float64
	// SNR is min(|Ref|²/RefNoise, |Resp|²/RespNoise) in dB: the tone power
	// over the noise power in one bin (Rate/Period Hz), the worse input.
	SNR float64
	// GainU and PhaseU are the standard uncertainties of 20·log10|H| in dB
	// and of arg H in degrees, to first order in the noise:
	// the relative error of H is e = N_y/Resp − N_x/Ref, of variance
	// v = RefNoise/|Ref|² + RespNoise/|Resp|²; circular noise splits v
	// equally between ln|H| and arg H, so σ = √(v/2), GainU = 20/ln10·σ,
	// PhaseU = 180/π·σ. Valid while v ≪ 1 (SNR above about 10 dB).
	GainU, PhaseU float64
	// Distortion is a distortion indicator of the response input in
	// percent: √(|Resp(2f)|² + |Resp(3f)|² − k·RespNoise)/|Resp| over the
	// k harmonic bins below Nyquist, floored at 0; NaN when both harmonics
	// are above Nyquist. Intermodulation products of other tones that
	// land on those bins count too, so it is an indicator, not a THD.
	Distortion float64

	harmPower float64 // noise-corrected harmonic power behind Distortion; NaN when none
}

// Frame is the analysis of one period of both inputs.
type Frame struct {
	// Tones holds one result per stimulus tone, in ascending frequency.
	Tones []ToneResult
}

// Analyzer analyses whole periods of a [Multitone] on both inputs with a
// rectangular window synchronous with the period: each tone falls exactly
// on one FFT bin, so there is no leakage between tones. It owns its FFT
// plan and buffers; it is not safe for concurrent use (make one per
// goroutine).
//
// The engine must hand it periods of the steady state: after the stimulus
// starts or changes, and after any discontinuity of the stream, the first
// whole period at the inputs still holds the circuit's transient and must
// be discarded. A period may start at any sample of the stimulus loop:
// a shift rotates the phases of Ref and Resp alike and leaves H unchanged.
type Analyzer struct {
	m    *Multitone
	fft  *fourier.FFT
	x, y []complex128
	hum  *interferers // nil: none set
}

// NewAnalyzer returns an analyzer for periods of m.
func NewAnalyzer(m *Multitone) *Analyzer {
	n := m.Len()
	return &Analyzer{
		m:   m,
		fft: fourier.NewFFT(n),
		x:   make([]complex128, n/2+1),
		y:   make([]complex128, n/2+1),
	}
}

// Analyze returns the analysis of one period of each input; see
// [Analyzer.AnalyzeInto].
func (a *Analyzer) Analyze(ref, resp []float64) (Frame, error) {
	var f Frame
	err := a.AnalyzeInto(&f, ref, resp)
	return f, err
}

// AnalyzeInto analyses one period of the reference input ref and the
// response input resp into dst, reusing dst.Tones when it has the
// capacity; with a reused dst it does not allocate. Interferers set with
// [Analyzer.SetInterferers] are fitted out of both inputs first.
//
// ref and resp must each hold exactly Len() samples, in full-scale units;
// otherwise AnalyzeInto panics. It returns an error wrapping ErrNotFinite
// when a sample is NaN or infinite (dst is then left unfilled), and one
// wrapping ErrNoReference when the reference is exactly zero at some tone
// (dst is filled; H and its uncertainty are NaN at those tones).
func (a *Analyzer) AnalyzeInto(dst *Frame, ref, resp []float64) error {
	n := a.m.Len()
	if len(ref) != n || len(resp) != n {
		panic(fmt.Sprintf("multitone: AnalyzeInto got %d reference and %d response samples; want one period of %d", len(ref), len(resp), n))
	}
	if !allFinite(ref) || !allFinite(resp) {
		return fmt.Errorf("%w: check the input stream for dropouts or a broken converter", ErrNotFinite)
	}
	a.fft.Coefficients(a.x, ref)
	a.fft.Coefficients(a.y, resp)
	if a.hum != nil {
		a.hum.remove(a.x, ref)
		a.hum.remove(a.y, resp)
	}

	tones := a.m.tones
	if cap(dst.Tones) < len(tones) {
		dst.Tones = make([]ToneResult, len(tones))
	}
	dst.Tones = dst.Tones[:len(tones)]

	// 2X/n turns an unnormalised FFT bin into a complex amplitude; power
	// scales by its square.
	sc := 2 / float64(n)
	sc2 := sc * sc
	missing := 0
	for k, t := range tones {
		r := &dst.Tones[k]
		r.Freq = t.Freq
		r.Ref = a.x[t.Bin] * complex(sc, 0)
		r.Resp = a.y[t.Bin] * complex(sc, 0)

		idx := a.m.noiseIdx[a.m.noiseOff[k]:a.m.noiseOff[k+1]]
		nx, ny := math.NaN(), math.NaN()
		if len(idx) > 0 {
			nx, ny = 0, 0
			for _, b := range idx {
				nx += abs2(a.x[b])
				ny += abs2(a.y[b])
			}
			nx *= sc2 / float64(len(idx))
			ny *= sc2 / float64(len(idx))
		}
		r.RefNoise, r.RespNoise = nx, ny
		r.ratio()
		if r.Ref == 0 {
			missing++
		}

		hp, nh := 0.0, 0
		for _, b := range a.m.harm[k] {
			if b > 0 {
				hp += abs2(a.y[b]) * sc2
				nh++
			}
		}
		if nh == 0 {
			r.harmPower = math.NaN()
			r.Distortion = math.NaN()
		} else {
			if !math.IsNaN(ny) {
				hp -= float64(nh) * ny
			}
			r.harmPower = max(hp, 0)
			r.Distortion = 100 * math.Sqrt(r.harmPower/abs2(r.Resp))
		}
	}
	if missing > 0 {
		return fmt.Errorf("%w: %d of %d tones are exactly zero at the reference input; check the loopback from the output to the reference input",
			ErrNoReference, missing, len(tones))
	}
	return nil
}

// SetReference replaces the tone's reference by ref with noise power
// noise (see RefNoise) and derives H, SNR and the uncertainties anew — for
// a caller that knows the reference better than the input did, e.g. the
// stimulus itself when the reference input is dead.
func (r *ToneResult) SetReference(ref complex128, noise float64) {
	r.Ref, r.RefNoise = ref, noise
	r.ratio()
}

// ratio derives SNR, H, GainU and PhaseU from Ref, Resp and their noise;
// H and the uncertainties are NaN for a zero Ref.
func (r *ToneResult) ratio() {
	px, py := abs2(r.Ref), abs2(r.Resp)
	r.SNR = 10 * math.Log10(min(px/r.RefNoise, py/r.RespNoise))
	if r.Ref == 0 {
		nan := math.NaN()
		r.H = complex(nan, nan)
		r.GainU, r.PhaseU = nan, nan
		return
	}
	r.H = r.Resp / r.Ref
	sigma := math.Sqrt((r.RefNoise/px + r.RespNoise/py) / 2)
	r.GainU = 20 / math.Ln10 * sigma
	r.PhaseU = 180 / math.Pi * sigma
}

func abs2(c complex128) float64 { return real(c)*real(c) + imag(c)*imag(c) }

func allFinite(x []float64) bool {
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
