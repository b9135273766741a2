package tui

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/x/ansi"

	"tonetrace/dsp/eseries"
	"tonetrace/dsp/trace"
)

// Network values of REFERENCES.md §5 (checked there against ngspice-39).
const (
	rcR   = 10e3   // Ω, first-order RC
	rcC   = 15e-9  // F
	rcFc  = 1061.0 // Hz, 1/(2πRC) = 1061.0330 Hz
	rlcL  = 10e-3  // H, series RLC band-pass, output across R
	rlcC  = 100e-9 // F
	rlcR  = 100.0  // Ω
	rlcF0 = 5032.921
)

// FakeController is the Controller of the tests: it keeps the state the
// model asks for, enforces the level cap like a real one, and records
// every call.
type FakeController struct {
	mu       sync.Mutex
	mode     Mode
	paused   bool
	muted    bool
	level    float64
	cap, def float64
	tone     float64
	parts    []Tunable
	calls    []string
	// failMode, when set, is returned by SetMode.
	failMode error
	// onSet is called with the new value after SetValue (the demo bench
	// would send a new prediction).
	onSet func(name string, v float64)
}

func newFake() *FakeController {
	return &FakeController{level: -30, cap: -10, def: -30, paused: true}
}

func (f *FakeController) record(format string, args ...any) {
	f.calls = append(f.calls, fmt.Sprintf(format, args...))
}

func (f *FakeController) SetMode(m Mode) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.record("SetMode(%v)", m)
	if f.failMode != nil {
		return f.failMode
	}
	f.mode = m
	return nil
}

func (f *FakeController) Pause(p bool) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.record("Pause(%v)", p)
	f.paused = p
	return nil
}

func (f *FakeController) Mute(m bool) {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.record("Mute(%v)", m)
	f.muted = m
}

func (f *FakeController) SetLevel(v float64) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.record("SetLevel(%.1f)", v)
	if v > f.cap+1e-9 {
		return errors.New("fake: level above the cap")
	}
	f.level = v
	return nil
}

func (f *FakeController) Level() (float64, float64, float64) {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.level, f.cap, f.def
}

func (f *FakeController) SetToneFreq(hz float64) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.record("SetToneFreq(%.4g)", hz)
	f.tone = hz
	return nil
}

func (f *FakeController) Tunables() []Tunable {
	f.mu.Lock()
	defer f.mu.Unlock()
	return append([]Tunable(nil), f.parts...)
}

func (f *FakeController) SetValue(name string, v float64) error {
	f.mu.Lock()
	f.record("SetValue(%s, %.4g)", name, v)
	found := false
	for i := range f.parts {
		if f.parts[i].Name == name {
			f.parts[i].Value = v
			found = true
		}
	}
	cb := f.onSet
	f.mu.Unlock()
	if !found {
		return fmt.Errorf("fake: no component %q", name)
	}
	if cb != nil {
		cb(name, v)
	}
	return nil
}

func (f *FakeController) snapshot() (calls []string, muted, paused bool, level float64, mode Mode) {
	f.mu.Lock()
	defer f.mu.Unlock()
	return append([]string(nil), f.calls...), f.muted, f.paused, f.level, f.mode
}

// logFreqs returns n frequencies spaced evenly in log frequency from lo to
// hi.
func logFreqs(lo, hi float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	return out
}

// rcLowpass is the first-order RC low-pass of REFERENCES.md §5:
// H = 1/(1 + jωRC).
func rcLowpass(f float64) complex128 {
	return 1 / (1 + complex(0, 2*math.Pi*f*rcR*rcC))
}

// rcLowpassC is the same network with another capacitor.
func rcLowpassC(c float64) func(float64) complex128 {
	return func(f float64) complex128 { return 1 / (1 + complex(0, 2*math.Pi*f*rcR*c)) }
}

// rlcBandpass is the series RLC band-pass of REFERENCES.md §5, output
// across R: H = R/(R + jωL + 1/(jωC)).
func rlcBandpass(f float64) complex128 {
	s := complex(0, 2*math.Pi*f)
	return rlcR / (rlcR + s*rlcL + 1/(s*rlcC))
}

// analytic returns a trace of h over freqs with small known uncertainties
// (uncertainties of a clean measurement, for the readout).
func analytic(h func(float64) complex128, freqs []float64) *trace.Trace {
	t := &trace.Trace{}
	for _, f := range freqs {
		p := trace.NewPoint(f, h(f))
		p.GainU, p.PhaseU, p.Coherence, p.SNR = 0.01, 0.1, 0.999, 60
		t.Points = append(t.Points, p)
	}
	return t
}

// stepClock is a clock that moves one second on every reading, so that
// every change draws a frame at once and file names differ.
type stepClock struct {
	mu sync.Mutex
	t  time.Time
}

func newStepClock() *stepClock {
	return &stepClock{t: time.Date(2025, 3, 14, 15, 9, 26, 0, time.UTC)}
}

func (c *stepClock) Now() time.Time {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.t = c.t.Add(time.Second)
	return c.t
}

// testModel returns a model for direct tests with a stepping clock and
// the given size.
func testModel(ctl Controller, w, h int, opt Options) *Model {
	if opt.Clock == nil {
		opt.Clock = newStepClock().Now
	}
	m := New(ctl, opt)
	m.Update(tea.WindowSizeMsg{Width: w, Height: h})
	return m
}

// send passes messages to the model directly, running none of the
// commands.
func send(m *Model, msgs ...tea.Msg) {
	for _, msg := range msgs {
		m.Update(msg)
	}
}

// key returns the key message of a key name as Bubble Tea spells it.
func key(name string) tea.KeyMsg {
	switch name {
	case "left":
		return tea.KeyMsg{Type: tea.KeyLeft}
	case "right":
		return tea.KeyMsg{Type: tea.KeyRight}
	case "shift+left":
		return tea.KeyMsg{Type: tea.KeyShiftLeft}
	case "tab":
		return tea.KeyMsg{Type: tea.KeyTab}
	case "esc":
		return tea.KeyMsg{Type: tea.KeyEsc}
	case "ctrl+c":
		return tea.KeyMsg{Type: tea.KeyCtrlC}
	case "space":
		return tea.KeyMsg{Type: tea.KeySpace, Runes: []rune{' '}}
	}
	return tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune(name)}
}

// plain returns the view without escape sequences.
func plain(m *Model) string { return ansi.Strip(m.View()) }

// demoStatus is a healthy status of two inputs.
func demoStatus() Status {
	return Status{
		Inputs: []InputStatus{
			{Name: "reference", RMSdBFS: -33.0, PeakdBFS: -30.0},
			{Name: "response", RMSdBFS: -36.0, PeakdBFS: -33.0},
		},
		LatencyMs: 12.3, SNRdB: 62, DriftPPM: math.NaN(),
	}
}

// demoParts are the tunables of a demo RC bench.
func demoParts() []Tunable {
	return []Tunable{{Name: "R1", Value: rcR, Unit: "Ω"}, {Name: "C1", Value: rcC, Unit: "F", Series: eseries.E12}}
}

// lines splits a view into its lines.
func lines(s string) []string { return strings.Split(s, "\n") }
