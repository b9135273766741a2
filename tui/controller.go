package tui

import (
	"fmt"
	"strings"

	"tonetrace/dsp/eseries"
)

// Mode is a way of measuring.
type Mode int

// Ways of measuring, in the order the mode key steps through them.
const (
	// ModeStepped measures one frequency at a time, sweep after sweep;
	// the trace builds point by point and each new sweep replaces the
	// previous one from left to right.
	ModeStepped Mode = iota
	// ModeMultitone plays many tones at once and refreshes the whole band
	// several times a second: the view for tuning.
	ModeMultitone
	// ModeTone plays one frequency, shown as a large gain and phase
	// readout with a short history strip; the cursor keys move the tone.
	ModeTone
	// ModeAny estimates the response from whatever signal plays (H1 from
	// averaged cross spectra) and shows the coherence as a third panel.
	ModeAny
	numModes
)

// String returns the mode's name as shown in the header.
func (m Mode) String() string {
	switch m {
	case ModeStepped:
		return "stepped sweep"
	case ModeMultitone:
		return "live multitone"
	case ModeTone:
		return "single tone"
	case ModeAny:
		return "any signal"
	}
	return fmt.Sprintf("Mode(%d)", int(m))
}

// Valid reports whether m is one of the defined modes.
func (m Mode) Valid() bool { return m >= 0 && m < numModes }

// ParseMode returns the mode with the given name (as from String, or its
// first word: "stepped", "multitone", "tone", "any"), ignoring case.
func ParseMode(name string) (Mode, error) {
	n := strings.ToLower(strings.TrimSpace(name))
	for m := Mode(0); m < numModes; m++ {
		full := m.String()
		first, _, _ := strings.Cut(full, " ")
		if n == full || n == first || (m == ModeMultitone && n == "multitone") || (m == ModeTone && n == "tone") {
			return m, nil
		}
	}
	return 0, fmt.Errorf("tui: unknown mode %q; use stepped, multitone, tone or any", name)
}

// RunState is the state of the measurement.
type RunState int

// States of the measurement.
const (
	// StateStopped: nothing is playing or being measured (before the
	// first start, or after the measuring side ended).
	StateStopped RunState = iota
	// StateRunning: the stimulus plays and points arrive.
	StateRunning
	// StatePaused: the measurement holds; the traces stay as they are.
	StatePaused
)

// String returns the state's name as shown in the header.
func (s RunState) String() string {
	switch s {
	case StateStopped:
		return "stopped"
	case StateRunning:
		return "running"
	case StatePaused:
		return "paused"
	}
	return fmt.Sprintf("RunState(%d)", int(s))
}

// Tunable is a component of the simulated network that the user may
// change while watching the response (only in the demo).
type Tunable struct {
	// Name is the component's netlist name, e.g. "C1".
	Name string
	// Value is its value in the base unit (farad, ohm, henry).
	Value float64
	// Unit is the base unit's symbol, e.g. "F", "Ω", "H".
	Unit string
	// Series is the preferred-number series the step keys walk through;
	// the zero value means E12.
	Series eseries.Series
}

// Controller carries out what the user asks for. The model calls it from
// its update loop, so every method must return quickly: hand the request
// to the measuring side and return. Errors are shown on the message line
// and should say what is wrong and how to fix it.
type Controller interface {
	// SetMode switches the way of measuring; the model clears the live
	// trace when it succeeds.
	SetMode(m Mode) error
	// Pause holds the measurement (true) or starts or resumes it (false).
	Pause(paused bool) error
	// Mute silences the output at once (true) or restores the level
	// (false). It cannot fail: a mute must always take effect.
	Mute(muted bool)
	// SetLevel sets the output level in dBFS. The model never asks for
	// more than the cap from Level; the implementation enforces the cap
	// as well.
	SetLevel(dBFS float64) error
	// Level returns the output level, its cap and its default, all in
	// dBFS.
	Level() (level, cap, def float64)
	// SetToneFreq sets the frequency of the single-tone mode in hertz.
	SetToneFreq(hz float64) error
	// Tunables lists the components the user may change; empty when the
	// bench is not simulated.
	Tunables() []Tunable
	// SetValue sets the value of the named component in its base unit.
	SetValue(name string, v float64) error
}
