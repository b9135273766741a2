package spectral

import "math"

// Bin holds the averaged spectra at one frequency: a single FFT bin from
// [Welch.Spectrum], or a band of adjacent bins from [Welch.Bands].
type Bin struct {
	// Freq is the frequency in hertz: the bin frequency k·rate/N, or the
	// band centre.
	Freq float64
	// Gxx and Gyy are the one-sided auto spectral densities of the
	// reference and the response, in units²/Hz (mean over the band).
	Gxx, Gyy float64
	// Gxy is the one-sided cross spectral density E[X*·Y], in units²/Hz
	// (mean over the band).
	Gxy complex128
	// NEff is the effective number of independent averages behind the
	// densities (see [Welch.EffectiveAverages]).
	NEff float64
	// Width is the number of FFT bins summed: 1 for a single bin.
	Width int
}

// H1 returns Gxy/Gxx, the transfer function estimate that is unbiased by
// uncorrelated noise at the response input. It is NaN when Gxx is zero.
func (b Bin) H1() complex128 {
	if b.Gxx == 0 {
		return complex(math.NaN(), math.NaN())
	}
	return complex(real(b.Gxy)/b.Gxx, imag(b.Gxy)/b.Gxx)
}

// H2 returns Gyy/Gyx = Gyy·Gxy/|Gxy|², the estimate that is unbiased by
// uncorrelated noise at the reference input. It is NaN when Gxy is zero.
// H2 ≥ H1 in magnitude; they agree when the coherence is 1.
func (b Bin) H2() complex128 {
	re, im := real(b.Gxy), imag(b.Gxy)
	m := re*re + im*im
	if m == 0 {
		return complex(math.NaN(), math.NaN())
	}
	return complex(b.Gyy*re/m, b.Gyy*im/m)
}

// Coherence returns the ordinary coherence γ² = |Gxy|²/(Gxx·Gyy), from 0
// to 1: the fraction of the response power that is linearly explained by
// the reference. It is 0 when either input is silent. With few averages
// the estimate is biased upwards by about (1−γ²)²/n_eff (Carter, Knapp &
// Nuttall 1973); a single segment always gives 1.
func (b Bin) Coherence() float64 {
	d := b.Gxx * b.Gyy
	if d == 0 {
		return 0
	}
	re, im := real(b.Gxy), imag(b.Gxy)
	g := (re*re + im*im) / d
	return math.Min(g, 1) // rounding can exceed 1 by an ulp
}

// MagError returns ε, the normalised random error (relative standard
// deviation) of |H1| by Bendat & Piersol's formula
// ε = √(1−γ²)/(|γ|·√(2·n_eff)); see [RandomError].
func (b Bin) MagError() float64 { return RandomError(b.Coherence(), b.NEff) }

// PhaseError returns the standard deviation of the phase of H1 in
// radians, ≈ ε (Bendat & Piersol).
func (b Bin) PhaseError() float64 { return RandomError(b.Coherence(), b.NEff) }

// SNR returns the ratio of the response power explained by the reference
// to the rest, γ²/(1−γ²), in dB: +Inf when the coherence is 1, −Inf when
// it is 0. It assumes all incoherent power is noise at the response input.
func (b Bin) SNR() float64 { return CoherentSNR(b.Coherence()) }

// RandomError returns Bendat & Piersol's normalised random error of a
// transfer-function magnitude estimated from coherence coh (γ², 0…1) and
// nEff independent averages: √(1−γ²)/(|γ|·√(2·nEff)). The same number is
// the standard deviation of the phase in radians. It is a first-order
// result, good for small errors (ε ≲ 0.2). It is 0 for coherence 1 and
// +Inf when coh or nEff is not positive.
func RandomError(coh, nEff float64) float64 {
	if !(coh > 0) || !(nEff > 0) {
		return math.Inf(1)
	}
	if coh >= 1 {
		return 0
	}
	return math.Sqrt(1-coh) / (math.Sqrt(coh) * math.Sqrt(2*nEff))
}

// CoherentSNR converts a coherence γ² into γ²/(1−γ²) in dB, the
// coherent-to-incoherent power ratio at the response.
func CoherentSNR(coh float64) float64 {
	return 10 * math.Log10(coh/(1-coh))
}
