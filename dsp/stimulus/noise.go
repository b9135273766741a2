package stimulus

import (
	"math"
	"math/rand/v2"
)

// Noise scaling constants.
const (
	// WhitePeakSigmas is where streamed white noise is truncated, in
	// standard deviations: draws beyond ±4σ are redrawn, so the samples
	// are independent (the spectrum stays white), the peak is exactly
	// bounded by the level, and the crest factor is at most 12.04 dB.
	// About 6.3e−5 of draws are redrawn.
	WhitePeakSigmas = 4.0
	// PinkPeakSigmas is the headroom of streamed pink noise: its standard
	// deviation is the level's amplitude divided by 5, so a sample reaches
	// the hard limit with the Gaussian probability beyond 5σ, about 5.7e−7
	// (once in 36 s at 48 kHz); see [PinkNoise.Limited].
	PinkPeakSigmas = 5.0
	// pinkWarmup is the number of samples the pink filter runs before its
	// first output: five time constants of its slowest section (pole
	// 0.99886, 877 samples), so the output starts stationary.
	pinkWarmup = 4400
	// pcgStream is the second PCG seed word; the caller's seed is the
	// first.
	pcgStream = 0x746f6e6574726163
)

// newRand returns the package's seeded PCG generator.
func newRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, pcgStream)) }

// truncNorm returns a standard normal draw truncated to ±WhitePeakSigmas
// by redrawing.
func truncNorm(r *rand.Rand) float64 {
	for {
		z := r.NormFloat64()
		if math.Abs(z) <= WhitePeakSigmas {
			return z
		}
	}
}

// WhiteNoise streams Gaussian white noise: independent standard normal
// draws from a seeded PCG generator, truncated at ±4σ (see
// [WhitePeakSigmas]) and scaled so ±4σ is the level's amplitude. Its RMS
// is thus about level − 12.04 dB. Not safe for concurrent use.
type WhiteNoise struct {
	rng   *rand.Rand
	scale float64
}

// NewWhiteNoise returns a white-noise stream seeded by seed at levelDBFS
// (peak) under capDBFS. Errors as for [CheckLevel].
func NewWhiteNoise(seed uint64, levelDBFS, capDBFS float64) (*WhiteNoise, error) {
	amp, _, err := CheckLevel(levelDBFS, capDBFS)
	if err != nil {
		return nil, err
	}
	return &WhiteNoise{rng: newRand(seed), scale: amp / WhitePeakSigmas}, nil
}

// Read fills all of dst and returns len(dst). It never allocates.
func (w *WhiteNoise) Read(dst []float64) int {
	for i := range dst {
		dst[i] = w.scale * truncNorm(w.rng)
	}
	return len(dst)
}

// kellet is Paul Kellet's "refined" pink-noise filter (from memory; posted
// to the music-dsp mailing list, about 1999): a weighted sum of six
// first-order low-pass sections and a one-sample-delayed direct term that
// approximates −10 dB/decade (−3 dB/octave), stated to be within ±0.05 dB
// above 9.2 Hz at a 44.1 kHz sample rate. Its poles are fixed in z, so at
// another rate fs the valid range scales by fs/44100 (above about 10 Hz
// at 48 kHz, 20 Hz at 96 kHz).
type kellet struct {
	b [7]float64
}

// kelletCoefficients returns the filter's six section poles and gains and
// its direct and one-sample-delayed white-noise weights, as used by
// kellet.next.
func kelletCoefficients() (poles, gains [6]float64, direct, delayed float64) {
	return [6]float64{0.99886, 0.99332, 0.96900, 0.86650, 0.55000, -0.7616},
		[6]float64{0.0555179, 0.0750759, 0.1538520, 0.3104856, 0.5329522, -0.0168980},
		0.5362, 0.115926
}

func (k *kellet) next(w float64) float64 {
	b := &k.b
	b[0] = 0.99886*b[0] + w*0.0555179
	b[1] = 0.99332*b[1] + w*0.0750759
	b[2] = 0.96900*b[2] + w*0.1538520
	b[3] = 0.86650*b[3] + w*0.3104856
	b[4] = 0.55000*b[4] + w*0.5329522
	b[5] = -0.7616*b[5] - w*0.0168980
	out := b[0] + b[1] + b[2] + b[3] + b[4] + b[5] + b[6] + w*0.5362
	b[6] = w * 0.115926
	return out
}

// kelletPowerGain returns Σh[n]², the output variance of the filter for
// unit-variance white input, from its impulse response
// h[n] = Σₖ gₖ·pₖⁿ + d₀·δ[n] + d₁·δ[n−1].
func kelletPowerGain() float64 {
	p, g, d0, d1 := kelletCoefficients()
	sum := d0*d0 + d1*d1
	for i := range p {
		sum += 2 * g[i] * (d0 + d1*p[i])
		for j := range p {
			sum += g[i] * g[j] / (1 - p[i]*p[j])
		}
	}
	return sum
}

// PinkNoise streams pink noise (−3 dB/octave, −10 dB/decade power
// spectral density): truncated Gaussian white noise from a seeded PCG
// generator (as [WhiteNoise]) through Paul Kellet's refined filter (from
// memory; a sum of first-order sections, accurate to ±0.05 dB above
// 9.2 Hz at 44.1 kHz, the range scaling with the sample rate). The filter
// is run for 4400 samples before the first output so the stream starts
// stationary.
//
// Its standard deviation is the level's amplitude over [PinkPeakSigmas];
// a sample beyond the amplitude is clamped to it (and to the cap) and
// counted by [PinkNoise.Limited]. Not safe for concurrent use.
type PinkNoise struct {
	rng     *rand.Rand
	f       kellet
	scale   float64
	amp     float64
	limited int64
}

// NewPinkNoise returns a pink-noise stream seeded by seed at levelDBFS
// (peak) under capDBFS. Errors as for [CheckLevel].
func NewPinkNoise(seed uint64, levelDBFS, capDBFS float64) (*PinkNoise, error) {
	amp, _, err := CheckLevel(levelDBFS, capDBFS)
	if err != nil {
		return nil, err
	}
	p := &PinkNoise{rng: newRand(seed), amp: amp}
	p.scale = amp / (PinkPeakSigmas * math.Sqrt(kelletPowerGain()))
	for range pinkWarmup {
		p.f.next(truncNorm(p.rng))
	}
	return p, nil
}

// Read fills all of dst and returns len(dst). It never allocates.
func (p *PinkNoise) Read(dst []float64) int {
	for i := range dst {
		v := p.scale * p.f.next(truncNorm(p.rng))
		if math.Abs(v) > p.amp {
			v = math.Copysign(p.amp, v)
			p.limited++
		}
		dst[i] = v
	}
	return len(dst)
}

// Limited returns how many samples so far were clamped to the level's
// amplitude.
func (p *PinkNoise) Limited() int64 { return p.limited }

// pinkUnit fills dst with pink noise of unit nominal variance (before any
// level scaling), warmed up like [PinkNoise].
func pinkUnit(dst []float64, seed uint64) {
	r := newRand(seed)
	var f kellet
	for range pinkWarmup {
		f.next(truncNorm(r))
	}
	g := 1 / math.Sqrt(kelletPowerGain())
	for i := range dst {
		dst[i] = g * f.next(truncNorm(r))
	}
}

// whiteUnit fills dst with truncated standard normal draws.
func whiteUnit(dst []float64, seed uint64) {
	r := newRand(seed)
	for i := range dst {
		dst[i] = truncNorm(r)
	}
}
