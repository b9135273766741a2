package spectral

import (
	"fmt"
	"math"
	"strconv"

	"tonetrace/dsp/trace"
)

// Bands returns the spectra between from and to hertz, appended to dst[:0]
// (dst is reused when it has the capacity).
//
// With perDecade = 0 it returns every FFT bin with from ≤ f ≤ to, as
// [Welch.Spectrum] gives them.
//
// With perDecade = P > 0 it returns log-spaced bands: centres 10^(m/P) Hz
// for integer m (every decade holds P centres, the powers of ten among
// them), edges at the geometric midpoints 10^((m±½)/P);
// P = 10 gives the base-10 one-third-octave bands of IEC 61260-1.
// A band is returned when its centre lies in [from, to]; it sums every
// bin k ≥ 1 with lo ≤ k·rate/N < hi (bins beyond [from, to] inside such a
// band included), and bands holding no bin are skipped. The band's Gxx,
// Gyy and Gxy are the means of the bins' densities, so H1 and γ² come from
// the sums (frequency-band averaging, Bendat & Piersol), Freq is the band
// centre, Width the number of bins and NEff = EffectiveAverages(Width).
//
// For a reference spectrum flat across the band, the band's H1 is the mean
// of H over its bins, not H at the centre: it agrees with H(centre) to
// within the variation of H across the band. Where H changes across the
// band the summed coherence falls below that of the single bins and the
// random error from it rises, so it then also reflects part of that
// variation; choose bands narrower than the response's features.
//
// Errors: from < 0, from ≥ to, to above rate/2, perDecade < 0, and no
// complete segment yet (wrapping [ErrNoSegments]).
func (w *Welch) Bands(dst []Bin, from, to float64, perDecade int) ([]Bin, error) {
	dst = dst[:0]
	if err := w.checkRange(from, to, perDecade); err != nil {
		return dst, err
	}
	df := w.Resolution()
	nb := len(w.sxx)
	c := w.scale()
	if perDecade == 0 {
		k0 := max(0, int(math.Ceil(from/df)))
		k1 := min(nb-1, int(math.Floor(to/df)))
		neff := w.EffectiveAverages(1)
		for k := k0; k <= k1; k++ {
			s := c
			if k == 0 || 2*k == w.n {
				s = c / 2
			}
			dst = append(dst, Bin{
				Freq: float64(k) * df, Gxx: s * w.sxx[k], Gyy: s * w.syy[k],
				Gxy: complex(s*w.sxyr[k], s*w.sxyi[k]), NEff: neff, Width: 1,
			})
		}
		return dst, nil
	}
	p := float64(perDecade)
	// Start a little below the first centre: log10 is not exact at
	// powers of ten, so the centres are tested against from and to.
	lower := math.Max(from, df/2)
	m := int(math.Floor(p*math.Log10(lower))) - 1
	const slack = 1e-12
	for ; ; m++ {
		fc := math.Pow(10, float64(m)/p)
		if fc < from*(1-slack) || fc < lower*(1-slack) {
			continue
		}
		if fc > to*(1+slack) {
			break
		}
		lo := math.Pow(10, (float64(m)-0.5)/p)
		hi := math.Pow(10, (float64(m)+0.5)/p)
		// Neighbouring bands compute a shared edge identically, so
		// ceil(edge/df) assigns each bin to exactly one band.
		k0 := max(1, int(math.Ceil(lo/df)))
		k1 := min(nb-1, int(math.Ceil(hi/df))-1)
		if k1 < k0 {
			continue
		}
		var gxx, gyy, gxr, gxi float64
		for k := k0; k <= k1; k++ {
			s := c
			if 2*k == w.n {
				s = c / 2
			}
			gxx += s * w.sxx[k]
			gyy += s * w.syy[k]
			gxr += s * w.sxyr[k]
			gxi += s * w.sxyi[k]
		}
		width := k1 - k0 + 1
		inv := 1 / float64(width)
		dst = append(dst, Bin{
			Freq: fc, Gxx: gxx * inv, Gyy: gyy * inv, Gxy: complex(gxr*inv, gxi*inv),
			NEff: w.EffectiveAverages(width), Width: width,
		})
	}
	return dst, nil
}

func (w *Welch) checkRange(from, to float64, perDecade int) error {
	nyq := w.rate / 2
	switch {
	case !(from >= 0):
		return fmt.Errorf("spectral: start frequency %g Hz is invalid: give 0 Hz or more", from)
	case !(to > from):
		return fmt.Errorf("spectral: frequency range %g to %g Hz is empty: the start must be below the stop", from, to)
	case to > nyq:
		return fmt.Errorf("spectral: stop frequency %g Hz is above the Nyquist frequency %g Hz: lower it or record at a higher sample rate", to, nyq)
	case perDecade < 0:
		return fmt.Errorf("spectral: %d bands per decade is invalid: give 0 for every bin or a positive count such as 10 or 30", perDecade)
	case w.k == 0:
		return fmt.Errorf("%w: the record so far (%d samples, %.3g s) is shorter than one segment of %d samples (%.3g s): record longer or use a shorter segment",
			ErrNoSegments, w.total, float64(w.total)/w.rate, w.n, float64(w.n)/w.rate)
	}
	return nil
}

// Trace returns the transfer function between from and to hertz as a
// trace, one point per bin (perDecade = 0) or per log-spaced band
// (perDecade > 0), as chosen by [Welch.Bands]. Each point has
//
//   - H = H1 = Gxy/Gxx;
//   - Coherence = γ²;
//   - GainU = (20/ln 10)·ε dB, the first-order standard uncertainty of
//     20·log10|H| from ε = [RandomError](γ², n_eff);
//   - PhaseU = ε·180/π degrees;
//   - SNR = 10·log10(γ²/(1−γ²)) dB (see [CoherentSNR]): the coherent to
//     incoherent power ratio at the response, +Inf at coherence 1;
//   - THD unknown (NaN).
//
// Bins or bands where the reference is silent (Gxx = 0) are left out.
// The trace's metadata names the estimator, segment length, window,
// segment count and band spacing. Errors are those of [Welch.Bands], and
// an error when no point remains (the range holds no bin: widen it or use
// a longer segment).
func (w *Welch) Trace(from, to float64, perDecade int) (trace.Trace, error) {
	var err error
	w.scratch, err = w.Bands(w.scratch, from, to, perDecade)
	if err != nil {
		return trace.Trace{}, err
	}
	const dbPerNeper = 20 / math.Ln10
	pts := make([]trace.Point, 0, len(w.scratch))
	for _, b := range w.scratch {
		if b.Gxx == 0 {
			continue
		}
		p := trace.NewPoint(b.Freq, b.H1())
		coh := b.Coherence()
		eps := RandomError(coh, b.NEff)
		p.Coherence = coh
		p.GainU = dbPerNeper * eps
		p.PhaseU = eps * 180 / math.Pi
		p.SNR = CoherentSNR(coh)
		pts = append(pts, p)
	}
	if len(pts) == 0 {
		return trace.Trace{}, fmt.Errorf("spectral: no frequency point between %g and %g Hz with signal at the reference (bins are %g Hz apart): widen the range, use a longer segment, or check the reference input", from, to, w.Resolution())
	}
	t := trace.Trace{Points: pts}
	t.SetMeta("estimator", "welch H1")
	t.SetMeta("window", "hann, 50% overlap")
	t.SetMeta("segment", strconv.Itoa(w.n))
	t.SetMeta("segments", strconv.Itoa(w.k))
	t.SetMeta("sample_rate", strconv.FormatFloat(w.rate, 'g', -1, 64))
	if perDecade > 0 {
		t.SetMeta("bands_per_decade", strconv.Itoa(perDecade))
	}
	return t, nil
}
