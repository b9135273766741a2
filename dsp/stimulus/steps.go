package stimulus

import (
	"fmt"
	"math"
)

// Step is one frequency of a stepped-sine sequence. Durations are in
// samples; the caller chooses them (settle from latency and the network's
// own settling, integration from the estimator's needs).
type Step struct {
	// Freq is the frequency in Hz, 0 < Freq < rate/2.
	Freq float64
	// Settle is the number of samples played before the integration block
	// begins, at least 0; the analyser ignores them.
	Settle int
	// Integrate is the number of samples of the integration block, at
	// least 1.
	Integrate int
}

// Block locates one step of a stepped-sine sequence by sample index, so
// the analyser can find each integration block in the recorded stream.
// Sample indices count from 0 at the first sample of the sequence.
type Block struct {
	// Freq is the step's frequency in Hz.
	Freq float64
	// Start is the first sample of the step (its settling part).
	Start int64
	// IntegrateStart is the first sample of the integration block.
	IntegrateStart int64
	// Length is the number of samples in the integration block.
	Length int
	// Phase is the stimulus phase in radians at IntegrateStart, in [0, 2π):
	// within the step, sample n is A·sin(2π·Freq·(n − IntegrateStart)/rate
	// + Phase), A the amplitude of the level.
	Phase float64
}

// SteppedSine plays a sequence of sine steps with continuous phase.
//
// The sequence is: a raised-cosine fade-in over the first fade samples
// (inside the first step's settling time), then each step in turn —
// settle samples, then integrate samples — and after the last step a tail
// of fade samples that continues the last frequency while fading out. No
// fade ever overlaps an integration block. The frequency changes exactly
// at step boundaries with no phase jump: the phase is carried from step to
// step like a phase accumulator, but is evaluated in closed form within
// each step (phase at the step start plus f·k/rate cycles), so rounding
// does not drift over long steps and the output does not depend on how
// reads are chunked.
//
// A SteppedSine is not safe for concurrent use.
type SteppedSine struct {
	rate     float64
	amp, cap float64
	fade     int64
	total    int64
	blocks   []Block
	ends     []int64   // end (exclusive) of each step; the last includes the tail
	phase0   []float64 // phase in cycles at each step's start, in [0, 1)
	pos      int64
	cur      int
}

// NewSteppedSine returns a stepped-sine sequence at sample rate rate (Hz)
// over steps, with raised-cosine fades of fade samples at the start and
// end, at levelDBFS under capDBFS (peak dBFS, see the package doc).
//
// Errors: a level or cap error wrapping [ErrLevel]; rate not positive and
// finite; no steps; a frequency not in (0, rate/2); a negative Settle or
// an Integrate below 1; a negative fade, or a fade longer than the first
// step's Settle (the fade-in must end before the first integration block).
func NewSteppedSine(rate float64, steps []Step, fade int, levelDBFS, capDBFS float64) (*SteppedSine, error) {
	amp, capAmp, err := CheckLevel(levelDBFS, capDBFS)
	if err != nil {
		return nil, err
	}
	if !(rate > 0) || math.IsInf(rate, 1) {
		return nil, fmt.Errorf("stimulus: sample rate %v Hz must be positive and finite", rate)
	}
	if len(steps) == 0 {
		return nil, fmt.Errorf("stimulus: stepped sine needs at least one step")
	}
	if fade < 0 {
		return nil, fmt.Errorf("stimulus: fade of %d samples is negative; use 0 for no fade", fade)
	}
	if fade > steps[0].Settle {
		return nil, fmt.Errorf("stimulus: fade of %d samples is longer than the first step's settling time of %d samples; lengthen the settle or shorten the fade so the fade-in ends before the first integration block",
			fade, steps[0].Settle)
	}
	s := &SteppedSine{
		rate: rate, amp: amp, cap: capAmp, fade: int64(fade),
		blocks: make([]Block, len(steps)),
		ends:   make([]int64, len(steps)),
		phase0: make([]float64, len(steps)),
	}
	var start int64
	cycles := 0.0 // phase in cycles at start, in [0, 1)
	for i, st := range steps {
		if !(st.Freq > 0 && st.Freq < rate/2) {
			return nil, fmt.Errorf("stimulus: step %d frequency %v Hz must be above 0 and below half the sample rate (%g Hz)", i, st.Freq, rate/2)
		}
		if st.Settle < 0 || st.Integrate < 1 {
			return nil, fmt.Errorf("stimulus: step %d at %g Hz has settle %d and integrate %d samples; settle must be ≥ 0 and integrate ≥ 1",
				i, st.Freq, st.Settle, st.Integrate)
		}
		inc := st.Freq / rate
		s.phase0[i] = cycles
		atBlock := frac(cycles + inc*float64(st.Settle))
		s.blocks[i] = Block{
			Freq:           st.Freq,
			Start:          start,
			IntegrateStart: start + int64(st.Settle),
			Length:         st.Integrate,
			Phase:          2 * math.Pi * atBlock,
		}
		n := int64(st.Settle) + int64(st.Integrate)
		start += n
		s.ends[i] = start
		cycles = frac(cycles + inc*float64(n))
	}
	s.total = start + int64(fade)
	s.ends[len(steps)-1] = s.total
	return s, nil
}

// frac returns x − ⌊x⌋.
func frac(x float64) float64 { return x - math.Floor(x) }

// Len returns the total number of samples of the sequence, tail included.
func (s *SteppedSine) Len() int64 { return s.total }

// Pos returns the index of the next sample Read will produce.
func (s *SteppedSine) Pos() int64 { return s.pos }

// Reset rewinds the sequence to its first sample.
func (s *SteppedSine) Reset() { s.pos, s.cur = 0, 0 }

// Schedule returns the block of every step in order, reusing dst when it
// has the capacity.
func (s *SteppedSine) Schedule(dst []Block) []Block {
	if cap(dst) < len(s.blocks) {
		dst = make([]Block, len(s.blocks))
	}
	dst = dst[:len(s.blocks)]
	copy(dst, s.blocks)
	return dst
}

// Read fills dst with the next samples of the sequence and returns how
// many it wrote: len(dst) until the end is near, fewer at the end, 0 once
// the sequence is over. It never allocates.
func (s *SteppedSine) Read(dst []float64) int {
	n := 0
	for n < len(dst) && s.pos < s.total {
		for s.pos >= s.ends[s.cur] {
			s.cur++
		}
		b := &s.blocks[s.cur]
		end := min(s.ends[s.cur], s.pos+int64(len(dst)-n))
		inc := b.Freq / s.rate
		p0 := s.phase0[s.cur]
		k0 := s.pos - b.Start
		seg := dst[n : n+int(end-s.pos)]
		for j := range seg {
			t := p0 + float64(k0+int64(j))*inc
			seg[j] = s.amp * math.Sin(2*math.Pi*(t-math.Floor(t)))
		}
		// Fades: only the first and last fade samples are touched.
		for i := s.pos; i < min(end, s.fade); i++ {
			seg[i-s.pos] *= FadeGain(int(i), int(s.fade))
		}
		for i := max(s.pos, s.total-s.fade); i < end; i++ {
			seg[i-s.pos] *= FadeGain(int(s.total-1-i), int(s.fade))
		}
		limit(seg, s.cap)
		n += len(seg)
		s.pos = end
	}
	return n
}
