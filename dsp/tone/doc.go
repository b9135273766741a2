// Package tone estimates a single stimulus tone in a block of samples: the
// measurement behind a stepped-sine sweep, where one frequency is played at
// a time and both inputs are analysed over the same block.
//
// Conventions used throughout:
//
//   - Samples are full-scale units (±1 is full scale); n counts from 0 at the
//     first sample of the block.
//   - A tone of peak amplitude A and phase φ is A·cos(2π·f·n/rate + φ); its
//     phasor is A·e^{jφ}. Phases refer to the first sample of the block.
//   - The transform is unnormalised: X(ω) = Σ x[n]·e^{−jωn}, ω = 2π·f/rate.
//     For a block holding a whole number of cycles, the phasor is 2·X/N.
//
// The estimators:
//
//   - [Goertzel] evaluates X(ω) at any single frequency in one pass.
//   - [Estimator.Fit] is the IEEE Std 1057 three-parameter least-squares
//     sine fit (cosine, sine and DC at a known frequency), extended with the
//     2nd to 5th harmonics fitted jointly so that THD comes from the same
//     fit. Blocks holding a whole number of cycles take a fast path of
//     Goertzel projections; other blocks solve the small normal equations.
//     Neither path allocates.
//   - [Estimator.FitFreq] is the IEEE Std 1057 four-parameter fit, which
//     also estimates the frequency (to detect a clock mismatch between
//     separate devices).
//   - [Ratio] divides a response estimate by a reference estimate into a
//     [trace.Point] with propagated uncertainties.
//   - [CycleLength], [Cycles] and [WholeCycles] choose and inspect block
//     lengths.
//
// Uncertainties are standard uncertainties in the Cramér–Rao form for a tone
// in white Gaussian noise, with the noise level taken from the fit residual.
package tone
