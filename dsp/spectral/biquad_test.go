package spectral

import iir "tonetrace/dsp/biquad"

// biquad is a second-order section normalised so that a0 = 1, with
// coefficients from the W3C "Audio EQ Cookbook" (2021, after
// R. Bristow-Johnson; REFERENCES §7 [S]), designed by package dsp/biquad.
type biquad struct{ iir.Coeffs }

type biquadKind = iir.Kind

const (
	lowPass  = iir.LowPass
	highPass = iir.HighPass
	bandPass = iir.BandPass // constant 0 dB peak gain
	notch    = iir.Notch
	peaking  = iir.Peaking
)

// cookbook returns the cookbook filter of the given kind at f0 Hz, quality
// q and (peaking only) gain in dB, for sample rate fs.
func cookbook(kind biquadKind, f0, q, gainDB, fs float64) biquad {
	return biquad{iir.Design(kind, f0, q, gainDB, fs)}
}

// response returns the digital response H(e^{jω}) at f Hz:
// Σb_k e^{−jkω} / Σa_k e^{−jkω} (REFERENCES §7).
func (b biquad) response(f, fs float64) complex128 { return b.Response(f, fs) }

// biquadState is the memory of a direct-form I section.
type biquadState = iir.Filter

// filter runs src through the section (direct form I), writing dst and
// keeping the state for the next block.
func (b biquad) filter(st *biquadState, dst, src []float64) {
	st.Coeffs = b.Coeffs
	st.Process(dst, src)
}
