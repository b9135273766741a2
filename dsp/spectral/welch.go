// Package spectral estimates a transfer function from any broadband signal
// — noise, programme material, a sweep — by Welch-averaged cross spectra
// between a reference x (the looped-back stimulus) and a response y (the
// output of the circuit).
//
// The record is cut into segments of N samples overlapping by half, each
// segment is multiplied by a periodic Hann window and transformed, and the
// products are averaged over the K segments (Welch 1967). With U = Σw² and
// X_i, Y_i the transforms of segment i, the one-sided densities at bin k
// (frequency k·fs/N) are (Bendat & Piersol, Random Data, 4th ed., ch. 9)
//
//	Gxx = 2/(K·fs·U) · Σ|X_i|²
//	Gyy = 2/(K·fs·U) · Σ|Y_i|²
//	Gxy = 2/(K·fs·U) · Σ X_i*·Y_i
//
// except at DC and, for even N, the Nyquist bin, which are not doubled.
// From them:
//
//	H1 = Gxy/Gxx          (unbiased by noise at the response input)
//	H2 = Gyy/Gyx          (unbiased by noise at the reference input)
//	γ² = |Gxy|²/(Gxx·Gyy) (ordinary coherence, 0…1)
//	ε  = √(1−γ²)/(|γ|·√(2·n_eff))
//
// where ε is the normalised random error of |H1| and, in radians, the
// standard deviation of its phase; n_eff is the effective number of
// independent averages (see [Welch.EffectiveAverages]).
//
// A [Welch] is fed in blocks of any length with [Welch.Add]; it keeps the
// unconsumed tail, so the result equals that of the whole record given at
// once. [Welch.Spectrum] returns every bin; [Welch.Bands] and [Welch.Trace]
// return every bin or log-spaced frequency bands (several bins summed) in a
// frequency range.
//
// No mean or trend is removed from a segment: a DC offset at an input
// shows in bins 0 and 1 only (the periodic Hann window's transform of a
// constant is zero from bin 2 on). A Welch is not safe for concurrent use.
package spectral

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Limits of the segment length accepted by [NewWelch].
const (
	// MinSegLen is the shortest segment, in samples.
	MinSegLen = 16
	// MaxSegLen is the longest segment, in samples (about 87 s at 48 kHz).
	MaxSegLen = 1 << 22
)

// ErrNoSegments is returned (wrapped) by [Welch.Bands] and [Welch.Trace]
// when no complete segment has been added yet.
var ErrNoSegments = errors.New("spectral: no complete segment")

// Welch accumulates Welch-averaged auto and cross spectra of a reference x
// and a response y.
//
// Segments are N samples long (N as given to [NewWelch]), weighted by the
// periodic ("DFT-even") Hann window w[n] = ½(1 − cos(2πn/N)), n = 0…N−1
// (Harris 1978), and overlap by ⌊N/2⌋ samples: a new segment starts every
// N − ⌊N/2⌋ samples. The Hann window is computed here because gonum's
// window.Hann is the symmetric form, whose period is N−1.
//
// All buffers belong to the Welch and are allocated by [NewWelch]; [Welch.Add]
// and [Welch.Spectrum] (with a dst of enough capacity) do not allocate.
type Welch struct {
	n    int     // segment length
	hop  int     // samples between segment starts
	rate float64 // sample rate, Hz
	win  []float64
	u    float64 // Σw²
	fft  *fourier.FFT

	bx, by []float64 // pending input, fill samples valid
	fill   int
	total  int64 // samples consumed since Reset

	seg    []float64    // windowed segment
	cx, cy []complex128 // transforms of the current segment

	// Raw sums over segments, per bin.
	sxx, syy, sxyr, sxyi []float64
	k                    int // segments accumulated

	// rho2[s][j] is the squared correlation coefficient between the
	// transforms of two segments s hops apart at bins j apart, for white
	// input (see EffectiveAverages). Only lags with overlap are stored.
	rho2 [][]float64

	scratch []Bin // used by Trace
}

// NewWelch returns an estimator with segments of segLen samples at a sample
// rate of rate hertz. segLen need not be a power of two (the FFT is
// fastest for lengths with small prime factors) and must lie within
// [MinSegLen, MaxSegLen]; rate must be positive and finite. The frequency
// resolution is rate/segLen.
func NewWelch(segLen int, rate float64) (*Welch, error) {
	if segLen < MinSegLen || segLen > MaxSegLen {
		return nil, fmt.Errorf("spectral: segment length %d is out of range: use %d to %d samples (a power of two such as 4096 or 8192 is fastest)", segLen, MinSegLen, MaxSegLen)
	}
	if !(rate > 0) || math.IsInf(rate, 0) {
		return nil, fmt.Errorf("spectral: sample rate %g Hz is invalid: give the positive rate of the recording, e.g. 48000", rate)
	}
	n := segLen
	nb := n/2 + 1
	w := &Welch{
		n:    n,
		hop:  n - n/2,
		rate: rate,
		win:  make([]float64, n),
		fft:  fourier.NewFFT(n),
		bx:   make([]float64, n),
		by:   make([]float64, n),
		seg:  make([]float64, n),
		cx:   make([]complex128, nb),
		cy:   make([]complex128, nb),
		sxx:  make([]float64, nb),
		syy:  make([]float64, nb),
		sxyr: make([]float64, nb),
		sxyi: make([]float64, nb),
	}
	for i := range w.win {
		v := 0.5 * (1 - math.Cos(2*math.Pi*float64(i)/float64(n)))
		w.win[i] = v
		w.u += v * v
	}
	w.rho2 = overlapCorrelation(w.win, w.hop, w.fft, w.seg, w.cx)
	return w, nil
}

// overlapCorrelation returns ρ²(s, j) for every segment lag s whose
// segments overlap and every bin lag j = 0…N/2: the squared magnitude of
// Σ_n w[n]·w[n+s·hop]·e^{−i2πjn/N}, divided by U² = (Σw²)². For white Gaussian
// input this is the squared correlation coefficient between the
// transforms of the two segments at bins j apart, and also the correlation
// coefficient between their periodogram values (Welch 1967).
// seg and c are scratch buffers of length N and N/2+1.
func overlapCorrelation(win []float64, hop int, fft *fourier.FFT, seg []float64, c []complex128) [][]float64 {
	n := len(win)
	var rho2 [][]float64
	for s := 0; s*hop < n; s++ {
		off := s * hop
		for i := range seg {
			seg[i] = 0
			if i+off < n {
				seg[i] = win[i] * win[i+off]
			}
		}
		fft.Coefficients(c, seg)
		r := make([]float64, len(c))
		for j, v := range c {
			r[j] = real(v)*real(v) + imag(v)*imag(v)
		}
		rho2 = append(rho2, r)
	}
	// Normalise by ρ²(0, 0) = (Σw²)² so that it is exactly 1, and clear
	// the rounding noise of correlations that are exactly zero.
	norm := rho2[0][0]
	for _, r := range rho2 {
		for j := range r {
			r[j] /= norm
			if r[j] < 1e-20 {
				r[j] = 0
			}
		}
	}
	return rho2
}

// SegLen returns the segment length N in samples.
func (w *Welch) SegLen() int { return w.n }

// Rate returns the sample rate in hertz.
func (w *Welch) Rate() float64 { return w.rate }

// Resolution returns the bin spacing rate/N in hertz.
func (w *Welch) Resolution() float64 { return w.rate / float64(w.n) }

// Segments returns the number K of complete segments averaged since the
// estimator was made or last reset.
func (w *Welch) Segments() int { return w.k }

// Samples returns the number of samples per channel added since the
// estimator was made or last reset.
func (w *Welch) Samples() int64 { return w.total }

// Reset discards every accumulated segment and the pending tail, keeping
// the segment length, rate and buffers.
func (w *Welch) Reset() {
	w.fill = 0
	w.total = 0
	w.k = 0
	clear(w.sxx)
	clear(w.syy)
	clear(w.sxyr)
	clear(w.sxyi)
}

// Add feeds the next samples of the reference x and the response y, in
// the input's units (full scale 1 for audio). Blocks may have any length,
// including zero; samples that do not yet complete a segment are kept, so
// feeding a record in pieces gives the same spectra as feeding it whole.
// Add panics if x and y differ in length. It does not allocate.
func (w *Welch) Add(x, y []float64) {
	if len(x) != len(y) {
		panic(fmt.Sprintf("spectral: Add with %d reference and %d response samples", len(x), len(y)))
	}
	w.total += int64(len(x))
	for len(x) > 0 {
		m := copy(w.bx[w.fill:], x)
		copy(w.by[w.fill:], y[:m])
		x, y = x[m:], y[m:]
		w.fill += m
		if w.fill < w.n {
			return
		}
		w.segment()
		keep := w.n - w.hop
		copy(w.bx, w.bx[w.hop:])
		copy(w.by, w.by[w.hop:])
		w.fill = keep
	}
}

// segment windows and transforms the full buffers and adds the products
// to the sums.
func (w *Welch) segment() {
	for i, v := range w.win {
		w.seg[i] = v * w.bx[i]
	}
	w.fft.Coefficients(w.cx, w.seg)
	for i, v := range w.win {
		w.seg[i] = v * w.by[i]
	}
	w.fft.Coefficients(w.cy, w.seg)
	sxx := w.sxx
	syy, sxyr, sxyi := w.syy[:len(sxx)], w.sxyr[:len(sxx)], w.sxyi[:len(sxx)]
	cx, cy := w.cx[:len(sxx)], w.cy[:len(sxx)]
	for k := range sxx {
		xr, xi := real(cx[k]), imag(cx[k])
		yr, yi := real(cy[k]), imag(cy[k])
		// Written out so that x = y gives Σ X*·Y bit-identical to Σ|X|².
		sxx[k] += xr*xr + xi*xi
		syy[k] += yr*yr + yi*yi
		sxyr[k] += xr*yr + xi*yi
		sxyi[k] += xr*yi - xi*yr
	}
	w.k++
}

// Spectrum returns one [Bin] per FFT bin, k = 0…N/2 at k·rate/N hertz, with
// the one-sided densities of the segments so far (units²/Hz) and
// n_eff = EffectiveAverages(1). It returns dst[:0] when no segment is
// complete yet. dst is reused when it has the capacity (N/2+1), so a
// caller that keeps it does not allocate.
func (w *Welch) Spectrum(dst []Bin) []Bin {
	if w.k == 0 {
		return dst[:0]
	}
	nb := len(w.sxx)
	if cap(dst) < nb {
		dst = make([]Bin, nb)
	}
	dst = dst[:nb]
	c := w.scale()
	df := w.Resolution()
	neff := w.EffectiveAverages(1)
	for k := range dst {
		s := c
		if k == 0 || 2*k == w.n {
			s = c / 2 // DC and Nyquist are not folded
		}
		dst[k] = Bin{
			Freq:  float64(k) * df,
			Gxx:   s * w.sxx[k],
			Gyy:   s * w.syy[k],
			Gxy:   complex(s*w.sxyr[k], s*w.sxyi[k]),
			NEff:  neff,
			Width: 1,
		}
	}
	return dst
}

// scale returns the one-sided density factor 2/(K·fs·U).
func (w *Welch) scale() float64 {
	return 2 / (float64(w.k) * w.rate * w.u)
}

// EffectiveAverages returns n_eff, the number of independent averages
// equivalent to the K segments so far summed over `bins` adjacent bins,
// for use in the random-error formula of [Bin.MagError]. It returns 0
// before the first segment or for bins < 1.
//
// Overlapping segments and neighbouring bins of a windowed transform are
// correlated, so n_eff < K·bins. For Gaussian input with a spectrum flat
// over the band, the variance of a sum of K·M periodogram values with
// correlation coefficients ρ²(s, j) (segment lag s, bin lag j; ρ computed
// from the window itself, see Welch 1967) gives
//
//	n_eff = K·M / Σ_{|s|<K} Σ_{|j|<M} (1 − |s|/K)(1 − |j|/M)·ρ²(|s|, |j|).
//
// For one bin and Hann at 50% overlap ρ²(1, 0) = 1/36, so n_eff → 0.947·K
// for large K. Within a segment neighbouring Hann bins correlate with
// ρ = 2/3 and 1/6 at one and two bins (Σ_j ρ²(0, j) = 35/18), across
// overlapping segments Σ_j ρ²(1, j) = 1/12, so for wide bands n_eff
// tends to K·M/(35/18 + 2/12) ≈ 0.474·K·M rather than K·M. Near DC and
// Nyquist, and where the spectra change much across the band, this is
// an approximation.
func (w *Welch) EffectiveAverages(bins int) float64 {
	if w.k == 0 || bins < 1 {
		return 0
	}
	K, M := w.k, bins
	var den float64
	for s := 0; s < K && s < len(w.rho2); s++ {
		ws := 1 - float64(s)/float64(K)
		if s > 0 {
			ws *= 2 // lags ±s
		}
		r := w.rho2[s]
		for j := 0; j < M && j < len(r); j++ {
			wj := 1 - float64(j)/float64(M)
			if j > 0 {
				wj *= 2 // lags ±j
			}
			den += ws * wj * r[j]
		}
	}
	return float64(K) * float64(M) / den
}
