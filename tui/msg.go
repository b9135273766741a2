package tui

import (
	tea "github.com/charmbracelet/bubbletea"
	"github.com/muesli/termenv"

	"tonetrace/dsp/trace"
)

// TraceMsg carries the live measurement so far and replaces the live
// trace.
//
// In the stepped sweep a sweep that is not Complete shows its points up to
// its highest frequency and the previous complete sweep above it, so the
// new sweep replaces the old one from left to right. A Complete trace
// becomes the whole live trace (the live multitone and any-signal modes
// send only complete traces, several times a second).
//
// The model keeps Trace and reads it while drawing: the sender must not
// change it after sending. A nil Trace clears the live trace.
type TraceMsg struct {
	// Trace holds the points in ascending frequency.
	Trace *trace.Trace
	// Complete is true when the sweep or refresh is finished.
	Complete bool
}

// PointMsg adds one measured point to the current sweep, an incremental
// alternative to [TraceMsg]. A point at a frequency already in the sweep
// replaces it.
type PointMsg struct {
	// Point is the new point; its frequency must be positive and finite,
	// otherwise the message is ignored (and logged).
	Point trace.Point
	// Restart marks the first point of a new sweep: the current sweep
	// becomes the previous one, which stays visible above the new sweep's
	// highest frequency.
	Restart bool
}

// InputStatus is the state of one audio input.
type InputStatus struct {
	// Name says which input it is: "reference" or "response" (any other
	// name is shown as given).
	Name string
	// RMSdBFS and PeakdBFS are the RMS and peak level in dB relative to
	// full scale (a full-scale sine has RMS −3.01 dBFS and peak 0 dBFS).
	// −Inf for silence; NaN when unknown.
	RMSdBFS, PeakdBFS float64
	// Clipping is true when samples reached full scale recently.
	Clipping bool
	// Dead is true when the input carries no signal at all.
	Dead bool
}

// Problem is something wrong with the measurement, in plain words.
type Problem struct {
	// Code identifies the problem for code, e.g. "clip:response",
	// "dead:reference", "dropouts", "snr", "swapped", "hum". The model
	// adds its own problems for clipping (CodeClip+name), dead inputs
	// (CodeDead+name), dropouts (CodeDropouts) and low SNR (CodeSNR)
	// only when the sender gives none with the same code.
	Code string
	// Text says what is wrong, e.g. "the reference input is silent".
	Text string
	// Fix says what to do, e.g. "check the loopback lead".
	Fix string
	// Severe marks problems that make the measurement wrong rather than
	// just noisy; they are shown first and in the alarm colour.
	Severe bool
}

// Codes of the problems the model derives from a [Status] itself.
const (
	CodeClip     = "clip:"    // followed by the input's name
	CodeDead     = "dead:"    // followed by the input's name
	CodeDropouts = "dropouts" // audio frames were lost
	CodeSNR      = "snr"      // the signal-to-noise ratio is low
)

// Status is the health of the measurement: the inputs and the link.
type Status struct {
	// Inputs lists the inputs in display order.
	Inputs []InputStatus
	// LatencyMs is the round-trip latency from output to input in
	// milliseconds; NaN when unknown (zero counts as known).
	LatencyMs float64
	// Dropouts counts the audio buffers lost since the start.
	Dropouts int64
	// SNRdB is the signal-to-noise ratio of the measurement in dB; NaN
	// when unknown.
	SNRdB float64
	// DriftPPM is the clock drift between output and input in parts per
	// million; NaN when unknown or not applicable (one device).
	DriftPPM float64
	// Problems are what the sender found wrong, most important first.
	Problems []Problem
}

// StatusMsg replaces the status shown in the Inputs pane. The model keeps
// the slices of Status: the sender must not change them after sending.
type StatusMsg struct {
	Status Status
}

// ProgressMsg reports how far the current sweep has come.
type ProgressMsg struct {
	// Done and Total count the frequencies of the current sweep; Total 0
	// hides the progress (the live modes refresh the whole band at once).
	Done, Total int
	// Freq is the frequency in hertz being measured now; 0 when none.
	Freq float64
	// Sweeps counts the sweeps completed since the start.
	Sweeps int
}

// PredictionMsg carries the response predicted from a netlist, with the
// fixture (the driving source and the measuring load) included. A nil
// Trace removes the prediction. The sender must not change the trace
// after sending.
type PredictionMsg struct {
	// Trace holds the points in ascending frequency.
	Trace *trace.Trace
	// Fixture describes the fixture included in the prediction, e.g.
	// "source 100 Ω, load 47 kΩ"; shown with the model's deviation.
	Fixture string
}

// ToneMsg is one reading of the single-tone mode: the point's Freq, H,
// GainU, PhaseU, SNR and THD (any may be NaN). Readings are kept in a
// short history shown as a strip under the large readout.
type ToneMsg struct {
	Point trace.Point
}

// StateMsg reports the state of the measurement when it changes on the
// measuring side (a device stopped, an automatic mute on clipping).
type StateMsg struct {
	// State is running, paused or stopped.
	State RunState
	// Muted is true when the output is muted.
	Muted bool
}

// InfoMsg describes the device and the measurement setup; fields left
// empty or zero keep what was shown before.
type InfoMsg struct {
	// Device is the audio device's name, e.g. "virtual bench" in the demo.
	Device string
	// Backend is the audio backend, e.g. "alsa", "pulseaudio", "bench".
	Backend string
	// Rate is the sample rate in hertz.
	Rate int
	// Demo is true when the bench is simulated.
	Demo bool
	// From and To are the measured band in hertz; they set the plot's
	// frequency range when both are positive and From < To.
	From, To float64
}

// ErrMsg reports an error from the measuring side. A non-fatal error is
// shown on the message line; a fatal one ends the screen, and
// [Model.Err] returns it so the caller can print it after the terminal
// is restored.
type ErrMsg struct {
	Err   error
	Fatal bool
}

// ProfileMsg changes the colour profile the screen draws with (see
// [ProfileFor]); the styles are rebuilt for it.
type ProfileMsg struct {
	Profile termenv.Profile
}

// EventsClosedMsg is delivered by [Listen] when its channel is closed: the
// measuring side has ended. The model shows it and keeps the screen until
// the user quits.
type EventsClosedMsg struct{}

// eventMsg wraps a message received by Listen, so the model knows to
// listen again.
type eventMsg struct {
	ch  <-chan tea.Msg
	msg tea.Msg
}

// Listen returns a command that waits for the next message on ch and
// delivers it to the model, which then issues Listen again: one message at
// a time, in order. A closed channel delivers [EventsClosedMsg]. The
// sender may use a buffered channel and a non-blocking send, so that a
// busy screen never stalls it. A nil channel gives a nil command.
func Listen(ch <-chan tea.Msg) tea.Cmd {
	if ch == nil {
		return nil
	}
	return func() tea.Msg {
		msg, ok := <-ch
		if !ok {
			return eventMsg{ch: nil, msg: EventsClosedMsg{}}
		}
		return eventMsg{ch: ch, msg: msg}
	}
}
