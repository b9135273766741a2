package engine

import (
	"fmt"
	"math"
	"sort"

	"tonetrace/audio"
)

// Problem codes: the fault each monitor names. They are stable strings;
// the virtual bench injects faults under the same names.
const (
	// CodeSwap: the designated reference input shows a frequency-dependent
	// response while the designated response input is flat — the inputs
	// are probably swapped.
	CodeSwap = "swap"
	// CodeDeadRef: the reference input hears nothing of the stimulus.
	CodeDeadRef = "dead-ref"
	// CodeDeadDUT: the response input hears nothing of the stimulus over a
	// range of frequencies (not just a notch).
	CodeDeadDUT = "dead-dut"
	// CodeClip: an input reached full scale.
	CodeClip = "clip"
	// CodeHum: mains hum (50 or 60 Hz or a harmonic) above HumLimitDBFS.
	CodeHum = "hum"
	// CodeInvert: the reference loopback is inverted, or the response is
	// at ±180° across a flat band.
	CodeInvert = "invert"
	// CodeDropout: captured frames were lost, the playout ran dry, or the
	// reference tone has a discontinuity.
	CodeDropout = "dropout"
	// CodeDrift: the inputs run on a different clock from the outputs.
	CodeDrift = "drift"
	// CodeUnplug: the device stopped delivering audio.
	CodeUnplug = "unplug"
)

// Monitor thresholds.
const (
	// ClipLevel is the sample magnitude counted as clipping, in full-scale
	// units.
	ClipLevel = 0.999
	// DeadMarginDB is how far, in dB, an input's level at the stimulus
	// frequency may fall below what the output level predicts (a unity
	// loop) before the input counts as dead.
	DeadMarginDB = 60.0
	// HumLimitDBFS is the mains-hum peak level that raises CodeHum.
	HumLimitDBFS = -60.0
	// DriftLimitPPM is the clock mismatch, in parts per million, that
	// raises CodeDrift.
	DriftLimitPPM = 20.0
	// InvertToleranceDeg is how close to ±180°, in degrees, a phase must
	// be to count as inverted.
	InvertToleranceDeg = 30.0
	// SwapVaryDB is the least spread in dB of the reference's level over
	// the frequencies where the response is flat that suggests swapped
	// inputs; and the most a straight loopback may spread.
	SwapVaryDB = 3.0
	// FlatDB is the tolerance in dB of a "flat" response: the band for
	// the swap and response-polarity checks.
	FlatDB = 1.0
	// GlitchRatio is how many times the typical residual a burst in the
	// reference fit's residual must exceed to count as a discontinuity.
	GlitchRatio = 10.0
	// GlitchFloor is the least size, relative to the reference amplitude,
	// of a residual burst that counts as a discontinuity.
	GlitchFloor = 0.05
)

// Problem is one fault the monitors found, in plain words.
type Problem struct {
	// Code names the fault: one of the Code constants.
	Code string
	// Input is the 1-based input concerned, 0 when none or both.
	Input int
	// Message says what was seen.
	Message string
	// Fix says what to do about it.
	Fix string
}

// String returns "code: message; fix".
func (p Problem) String() string { return p.Code + ": " + p.Message + "; " + p.Fix }

// InputStatus is the state of one input over the last status interval.
type InputStatus struct {
	// Input is the 1-based input number.
	Input int
	// Role is "response", "reference" or "" (not used).
	Role string
	// RMSDBFS and PeakDBFS are the RMS and the largest magnitude in
	// dBFS (−Inf for silence).
	RMSDBFS, PeakDBFS float64
	// Clipped counts samples at or beyond ClipLevel.
	Clipped int
	// NoiseDBFS is the RMS level in dBFS measured while the output was
	// silent at the start; NaN until measured.
	NoiseDBFS float64
	// HumDBFS is the largest mains component seen (peak dBFS), and
	// HumFreq its frequency in hertz; NaN until measured.
	HumDBFS, HumFreq float64
}

// Status is the monitors' view of the inputs and the stream.
type Status struct {
	// Frame is the capture index at the end of the interval.
	Frame int64
	// Seconds is the audio time since the run started.
	Seconds float64
	// Phase is what the engine is doing: "latency", "steps",
	// "multitone" or "done".
	Phase string
	// Inputs has one entry per input channel of the stream.
	Inputs []InputStatus
	// Latency is the round-trip latency in frames (capture index minus
	// output index), valid when LatencyKnown.
	Latency      int
	LatencyKnown bool
	// LatencyInput is the 1-based input the latency was found on (the
	// earliest arrival of the burst), 0 when it came from FixedLatency or
	// was not found.
	LatencyInput int
	// DriftPPM is the input clock relative to the output clock in parts
	// per million (positive: the inputs see a higher frequency), with
	// its standard uncertainty DriftU; NaN until estimated.
	DriftPPM, DriftU float64
	// LevelDBFS is the output stage's level.
	LevelDBFS float64
	// Stats are the stream's counters.
	Stats audio.Stats
	// Problems are the faults seen within the last ProblemHold, most
	// serious first.
	Problems []Problem
}

// Codes returns the distinct codes of the status's problems.
func (s Status) Codes() []string {
	var c []string
	for _, p := range s.Problems {
		if len(c) == 0 || !contains(c, p.Code) {
			c = append(c, p.Code)
		}
	}
	return c
}

func contains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// severity orders problem codes, most serious first.
var severity = map[string]int{
	CodeUnplug: 0, CodeDeadRef: 1, CodeDeadDUT: 2, CodeSwap: 3, CodeClip: 4,
	CodeDropout: 5, CodeInvert: 6, CodeDrift: 7, CodeHum: 8,
}

// problemSet tracks raised problems by code and input.
type problemSet struct {
	active map[string]*seenProblem
	order  []string // keys in order of first appearance
	fresh  bool     // a problem not active before was raised
}

type seenProblem struct {
	p    Problem
	last int64 // capture index when last raised
}

func problemKey(p Problem) string { return fmt.Sprintf("%s/%d", p.Code, p.Input) }

// raise records p as seen at capture index at.
func (ps *problemSet) raise(p Problem, at, hold int64) {
	if ps.active == nil {
		ps.active = map[string]*seenProblem{}
	}
	k := problemKey(p)
	sp, ok := ps.active[k]
	if !ok {
		ps.order = append(ps.order, k)
		ps.fresh = true
		ps.active[k] = &seenProblem{p: p, last: at}
		return
	}
	if sp.last < at-hold {
		ps.fresh = true // cleared and back again
	}
	sp.p, sp.last = p, at
}

// current returns the problems seen since now−hold, most serious first.
func (ps *problemSet) current(now, hold int64) []Problem {
	var out []Problem
	for _, k := range ps.order {
		if sp := ps.active[k]; sp.last >= now-hold {
			out = append(out, sp.p)
		}
	}
	sortProblems(out)
	return out
}

// all returns every problem ever raised (its latest message), most
// serious first.
func (ps *problemSet) all() []Problem {
	out := make([]Problem, 0, len(ps.order))
	for _, k := range ps.order {
		out = append(out, ps.active[k].p)
	}
	sortProblems(out)
	return out
}

func sortProblems(p []Problem) {
	sort.SliceStable(p, func(i, j int) bool { return severity[p[i].Code] < severity[p[j].Code] })
}

// dbfs returns 20·log10(a); −Inf for 0.
func dbfs(a float64) float64 { return 20 * math.Log10(a) }

// inputName returns "input 2 (reference)" and the like.
func inputName(in int, role string) string {
	if role == "" {
		return fmt.Sprintf("input %d", in)
	}
	return fmt.Sprintf("input %d (%s)", in, role)
}
