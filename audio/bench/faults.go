package bench

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
)

// Fault is a wiring or device fault the bench can inject. Its value is its
// name, as typed on the command line ("swap", "dead-ref", …). Faults combine
// freely; each acts as described on its constant.
type Fault string

// The faults. The response lead is the cable from the network's output to
// the response input, the reference lead the loopback cable from output 2
// to the reference input.
const (
	// FaultSwap swaps the two leads at the inputs: input 1 receives the
	// reference loopback and input 2 the network's output (with whatever
	// the response lead carries: hum, inversion, extra gain).
	FaultSwap Fault = "swap"
	// FaultDeadRef disconnects the reference lead: input 2 carries its
	// noise floor only.
	FaultDeadRef Fault = "dead-ref"
	// FaultDeadDUT disconnects the response lead: input 1 carries its
	// noise floor only (no network output, no hum).
	FaultDeadDUT Fault = "dead-dut"
	// FaultClip raises the response lead's level by ClipGainDB before the
	// converter, so a normal stimulus drives input 1 hard into its full
	// scale: samples sit at exactly ±1.
	FaultClip Fault = "clip"
	// FaultHum adds mains hum to the response lead: HumHz at HumDBFS peak
	// with its 2nd, 3rd and 5th harmonics at −12, −8 and −16 dB relative
	// (a ground loop through the network's supply). It follows the lead:
	// with FaultSwap it appears on input 2.
	FaultHum Fault = "hum"
	// FaultInvert swaps hot and cold in the response lead: the response
	// arrives with its polarity inverted (180° off the network's phase).
	FaultInvert Fault = "invert"
	// FaultDropout makes the interface lose blocks of captured frames now
	// and then, as a real overrun (xrun) does: every DropoutGapMin to
	// DropoutGapMax seconds (uniformly, seeded) DropoutMinMS to
	// DropoutMaxMS of frames are never delivered. The capture index runs
	// on as if they had been, so Read shows a jump in its first index and
	// the frames after the jump sit at their true positions in time; the
	// playout is not affected. Stats.CaptureFrames counts the lost frames
	// (it is the index of the next captured frame); Stats.Dropped and
	// Overruns do not — they count frames the engine did not read in
	// time. [Bench.Dropouts] counts them.
	FaultDropout Fault = "dropout"
	// FaultDrift runs the capture clock DriftPPM fast relative to the
	// playout clock, as with separate playback and capture devices: both
	// inputs are resampled (windowed-sinc interpolation) to the capture
	// clock, the capture index advances DriftPPM faster than the output
	// index, and a tone of f Hz reads f/(1 + DriftPPM·10⁻⁶) Hz at the
	// nominal rate.
	FaultDrift Fault = "drift"
	// FaultUnplug loses the device after UnplugSeconds of audio: the bench
	// stops delivering and playing frames and tells the core the device is
	// gone, so Read returns audio.ErrDeviceLost once the frames already
	// captured are read, and Write returns it at once, as when a USB
	// interface is pulled. Close still works.
	FaultUnplug Fault = "unplug"
)

// Parameters of the faults.
const (
	// ClipGainDB is the extra gain of the response lead under FaultClip.
	ClipGainDB = 20.0
	// HumHz is the mains frequency of FaultHum.
	HumHz = 50.0
	// HumDBFS is the peak level of the hum's fundamental on the response
	// lead, in dBFS.
	HumDBFS = -30.0
	// DropoutGapMin and DropoutGapMax bound the time between the end of
	// one dropout and the start of the next, in seconds of capture.
	DropoutGapMin, DropoutGapMax = 1.2, 1.8
	// DropoutMinMS and DropoutMaxMS bound the length of a dropout in ms.
	DropoutMinMS, DropoutMaxMS = 5.0, 20.0
	// DriftPPM is how much faster the capture clock runs under FaultDrift,
	// in parts per million. It is 1/5000, so the resampling positions are
	// exact fractions.
	DriftPPM = 200.0
	// UnplugSeconds is the audio played, in seconds of output frames,
	// before FaultUnplug loses the device.
	UnplugSeconds = 1.5
)

// driftDen is 10⁶/DriftPPM: under FaultDrift the capture clock delivers
// driftDen+1 frames while the playout clock plays driftDen.
const driftDen = 5000

// humCount is the number of hum components: the fundamental and three
// harmonics.
const humCount = 4

// AllFaults returns every fault in the order of the documentation.
func AllFaults() []Fault {
	return []Fault{FaultSwap, FaultDeadRef, FaultDeadDUT, FaultClip, FaultHum, FaultInvert, FaultDropout, FaultDrift, FaultUnplug}
}

// Description returns a one-line description of the fault for help texts,
// or "" for an unknown fault.
func (f Fault) Description() string {
	switch f {
	case FaultSwap:
		return "response and reference inputs swapped"
	case FaultDeadRef:
		return "reference input silent (lead disconnected)"
	case FaultDeadDUT:
		return "response input silent (lead disconnected)"
	case FaultClip:
		return fmt.Sprintf("response input driven %g dB too hot: clips at full scale", ClipGainDB)
	case FaultHum:
		return fmt.Sprintf("%g Hz mains hum with harmonics at %g dBFS on the response lead", HumHz, HumDBFS)
	case FaultInvert:
		return "response lead polarity inverted (hot and cold swapped)"
	case FaultDropout:
		return fmt.Sprintf("%g–%g ms of captured frames lost every %g–%g s (index jumps)", DropoutMinMS, DropoutMaxMS, DropoutGapMin, DropoutGapMax)
	case FaultDrift:
		return fmt.Sprintf("capture clock %+g ppm off the playout clock", DriftPPM)
	case FaultUnplug:
		return fmt.Sprintf("device lost after %g s of audio", UnplugSeconds)
	}
	return ""
}

// Valid reports whether f is one of the known faults.
func (f Fault) Valid() bool { return f.Description() != "" }

// knownFaults returns the fault names joined for messages.
func knownFaults() string {
	all := AllFaults()
	names := make([]string, len(all))
	for i, f := range all {
		names[i] = string(f)
	}
	return strings.Join(names, ", ")
}

// ParseFaults reads a comma-separated list of fault names, such as
// "swap,hum". Space around names is ignored; an empty or all-space string
// is no fault (nil). A name may appear once. Unknown, empty and repeated
// names are errors that list the known names.
func ParseFaults(s string) ([]Fault, error) {
	if strings.TrimSpace(s) == "" {
		return nil, nil
	}
	var out []Fault
	for i, part := range strings.Split(s, ",") {
		f := Fault(strings.TrimSpace(part))
		switch {
		case f == "":
			return nil, fmt.Errorf("bench: fault %d of %q is empty; separate fault names with single commas (known faults: %s)", i+1, s, knownFaults())
		case !f.Valid():
			return nil, fmt.Errorf("bench: unknown fault %q; known faults: %s", string(f), knownFaults())
		}
		for _, g := range out {
			if g == f {
				return nil, fmt.Errorf("bench: fault %q is listed twice in %q; name each fault once", string(f), s)
			}
		}
		out = append(out, f)
	}
	return out, nil
}

// FormatFaults returns the faults as ParseFaults reads them: names joined
// by commas.
func FormatFaults(fs []Fault) string {
	names := make([]string, len(fs))
	for i, f := range fs {
		names[i] = string(f)
	}
	return strings.Join(names, ",")
}

// faultSet is the resolved set of faults.
type faultSet struct {
	swap, deadRef, deadDUT, clip, hum, invert, dropout, drift, unplug bool
}

// resolveFaults checks fs and returns them as a set.
func resolveFaults(fs []Fault) (faultSet, error) {
	var s faultSet
	seen := map[Fault]bool{}
	for _, f := range fs {
		if !f.Valid() {
			return s, fmt.Errorf("bench: unknown fault %q in Config.Faults; known faults: %s", string(f), knownFaults())
		}
		if seen[f] {
			return s, fmt.Errorf("bench: fault %q is given twice in Config.Faults; give each fault once", string(f))
		}
		seen[f] = true
		switch f {
		case FaultSwap:
			s.swap = true
		case FaultDeadRef:
			s.deadRef = true
		case FaultDeadDUT:
			s.deadDUT = true
		case FaultClip:
			s.clip = true
		case FaultHum:
			s.hum = true
		case FaultInvert:
			s.invert = true
		case FaultDropout:
			s.dropout = true
		case FaultDrift:
			s.drift = true
		case FaultUnplug:
			s.unplug = true
		}
	}
	return s, nil
}

// holeSchedule generates the dropouts of FaultDropout: holes [Start,
// Start+Length) in the capture index, one after another. Two schedules
// made with the same seed and rate produce the same holes, so the bench's
// goroutine (which leaves them out) and the reader (which maps core indices
// back to capture indices) each keep their own and never talk.
type holeSchedule struct {
	rng           *rand.Rand
	rate          float64
	start, length int64 // the current hole
}

// newHoles returns the schedule positioned at its first hole.
func newHoles(seed uint64, rate int) holeSchedule {
	h := holeSchedule{rng: rand.New(rand.NewPCG(seed, 0x64726f70)), rate: float64(rate)}
	h.advance()
	return h
}

// noHoles is a schedule whose first hole never comes.
func noHoles() holeSchedule { return holeSchedule{start: math.MaxInt64} }

// advance moves to the next hole.
func (h *holeSchedule) advance() {
	if h.rng == nil {
		return
	}
	gap := int64(math.Round(h.rate * (DropoutGapMin + (DropoutGapMax-DropoutGapMin)*h.rng.Float64())))
	length := int64(math.Round(h.rate * (DropoutMinMS + (DropoutMaxMS-DropoutMinMS)*h.rng.Float64()) / 1000))
	h.start += h.length + gap
	h.length = max(length, 1)
}

// humOsc generates the hum of FaultHum with one rotating phasor per
// harmonic, renormalised every period so rounding cannot make it grow.
type humOsc struct {
	re, im   [humCount]float64 // phasor of each component
	cos, sin [humCount]float64 // rotation per sample
	amp      [humCount]float64 // peak amplitude
}

// newHum returns the hum at rate with a seeded starting phase.
func newHum(seed uint64, rate int) *humOsc {
	r := rand.New(rand.NewPCG(seed, 0x68756d))
	phase := 2 * math.Pi * r.Float64()
	// Harmonic numbers and levels relative to the fundamental in dB.
	harmonics := [humCount]struct {
		k     int
		relDB float64
	}{{1, 0}, {2, -12}, {3, -8}, {5, -16}}
	h := &humOsc{}
	for i, hh := range harmonics {
		w := 2 * math.Pi * HumHz * float64(hh.k) / float64(rate)
		h.cos[i], h.sin[i] = math.Cos(w), math.Sin(w)
		h.re[i], h.im[i] = math.Cos(float64(hh.k)*phase), math.Sin(float64(hh.k)*phase)
		h.amp[i] = math.Pow(10, (HumDBFS+hh.relDB)/20)
	}
	return h
}

// next returns the next hum sample.
func (h *humOsc) next() float64 {
	var v float64
	for i := range h.re {
		v += h.amp[i] * h.re[i]
		h.re[i], h.im[i] = h.re[i]*h.cos[i]-h.im[i]*h.sin[i], h.re[i]*h.sin[i]+h.im[i]*h.cos[i]
	}
	return v
}

// renormalise puts every phasor back on the unit circle.
func (h *humOsc) renormalise() {
	for i := range h.re {
		m := math.Hypot(h.re[i], h.im[i])
		h.re[i] /= m
		h.im[i] /= m
	}
}
