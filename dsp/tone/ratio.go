package tone

import (
	"math"

	"tonetrace/dsp/trace"
)

// Ratio returns the transfer ratio H = response.Phasor/reference.Phasor of
// two estimates of the same frequency from the same block, as a point at
// response.Freq. Its uncertainties combine the two channels' standard
// uncertainties, taken as independent:
//
//   - GainU (dB) = 20/ln 10 · sqrt(u_r,resp² + u_r,ref²), with the relative
//     amplitude uncertainty u_r = AmplitudeU/Amplitude of each channel;
//   - PhaseU (degrees) = sqrt(PhaseU_resp² + PhaseU_ref²)·180/π.
//
// SNR is the worse (lower) of the two channels' SNR, THD is the response
// channel's, and Coherence is NaN (not measured by a single tone). A zero
// reference amplitude (a dead reference input) gives an infinite or NaN H.
func Ratio(response, reference Estimate) trace.Point {
	p := trace.NewPoint(response.Freq, response.Phasor/reference.Phasor)
	rr := response.AmplitudeU() / response.Amplitude()
	rf := reference.AmplitudeU() / reference.Amplitude()
	p.GainU = 20 / math.Ln10 * math.Hypot(rr, rf)
	p.PhaseU = math.Hypot(response.PhaseU(), reference.PhaseU()) * 180 / math.Pi
	p.SNR = math.Min(response.SNR, reference.SNR)
	p.THD = response.THD
	return p
}
