package tui

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/x/ansi"
	"github.com/charmbracelet/x/exp/teatest"
)

// waitTime bounds every wait for the screen in these tests.
const waitTime = 5 * time.Second

// startTea runs a model in a test program of w×h.
func startTea(t *testing.T, ctl Controller, w, h int, opt Options) *teatest.TestModel {
	t.Helper()
	m := New(ctl, opt)
	return teatest.NewTestModel(t, m, teatest.WithInitialTermSize(w, h))
}

// waitFor waits until the screen has shown every one of want.
func waitFor(t *testing.T, tm *teatest.TestModel, want ...string) {
	t.Helper()
	var seen []byte
	teatest.WaitFor(t, tm.Output(), func(b []byte) bool {
		seen = append(seen, b...)
		text := ansi.Strip(string(seen))
		for _, w := range want {
			if !strings.Contains(text, w) {
				return false
			}
		}
		return true
	}, teatest.WithDuration(waitTime), teatest.WithCheckInterval(10*time.Millisecond))
}

// finish quits with q and returns the final model.
func finish(t *testing.T, tm *teatest.TestModel) *Model {
	t.Helper()
	tm.Type("q")
	return tm.FinalModel(t, teatest.WithFinalTimeout(waitTime)).(*Model)
}

func TestTeaMute(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{})
	waitFor(t, tm, "stepped sweep", "stopped")
	tm.Type("x")
	waitFor(t, tm, "MUTED", "output muted")
	if _, muted, _, _, _ := ctl.snapshot(); !muted {
		t.Error("x did not mute the controller")
	}
	tm.Type("x")
	waitFor(t, tm, "output restored to −30.0 dBFS")
	m := finish(t, tm)
	if calls, muted, _, _, _ := ctl.snapshot(); muted || strings.Join(calls, " ") != "Mute(true) Mute(false)" {
		t.Errorf("calls %v, muted %v", calls, muted)
	}
	if strings.Contains(plain(m), "MUTED") {
		t.Error("MUTED still shown after unmuting")
	}
}

// TestTeaLevelCapAndCaution raises the level from its default of −30 dBFS
// to past its cap of −10 dBFS.
func TestTeaLevelCapAndCaution(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{})
	tm.Type("+")
	waitFor(t, tm, "Caution", "out −29")
	tm.Type("+")
	waitFor(t, tm, "out −28")
	for range 30 {
		tm.Type("+")
	}
	waitFor(t, tm, "at its cap of −10.0 dBFS")
	tm.Type("-")
	waitFor(t, tm, "out −11")
	m := finish(t, tm)
	calls, _, _, level, _ := ctl.snapshot()
	if level != -11 {
		t.Errorf("level %g dBFS, want −11", level)
	}
	for _, c := range calls {
		var v float64
		if _, err := fmt.Sscanf(c, "SetLevel(%f)", &v); err == nil && v > -10+levelEps {
			t.Errorf("asked for %s above the cap", c)
		}
	}
	if !m.cautioned || m.note != "" {
		t.Errorf("cautioned %v, note %q", m.cautioned, m.note)
	}
}

func TestTeaModes(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{})
	tm.Send(TraceMsg{Trace: analytic(rcLowpass, logFreqs(20, 20e3, 31)), Complete: true})
	waitFor(t, tm, "low-pass")
	tm.Type("m")
	waitFor(t, tm, "live multitone")
	tm.Type("m")
	waitFor(t, tm, "single tone", "waiting for the first reading")
	tm.Type("m")
	waitFor(t, tm, "any signal")
	tm.Type("m")
	waitFor(t, tm, "stepped sweep")
	tm.Type("M")
	waitFor(t, tm, "any signal")
	tm.Type(" ")
	waitFor(t, tm, "running")
	tm.Type(" ")
	waitFor(t, tm, "paused")
	m := finish(t, tm)
	calls, _, paused, _, mode := ctl.snapshot()
	want := []string{"SetMode(live multitone)", "SetMode(single tone)", "SetToneFreq(631)", "SetMode(any signal)",
		"SetMode(stepped sweep)", "SetMode(any signal)", "Pause(false)", "Pause(true)"}
	if strings.Join(calls, " ") != strings.Join(want, " ") {
		t.Errorf("calls\n%v\nwant\n%v", calls, want)
	}
	if mode != ModeAny || !paused || m.mode != ModeAny || m.run != StatePaused {
		t.Errorf("ended in %v/%v (controller %v)", m.mode, m.run, mode)
	}
	if !m.liveS.empty() {
		t.Error("a mode change kept the live trace")
	}
}

func TestTeaModeError(t *testing.T) {
	ctl := newFake()
	ctl.failMode = errors.New("the device cannot play multitone at 8 kHz; choose a rate of 44.1 kHz or more")
	tm := startTea(t, ctl, 80, 24, Options{})
	tm.Type("m")
	waitFor(t, tm, "choose a rate of 44.1 kHz")
	if m := finish(t, tm); m.mode != ModeStepped {
		t.Errorf("mode changed to %v on error", m.mode)
	}
}

// TestTeaCursorJumps checks the jumps to the peak and the corners of the
// series RLC band-pass of REFERENCES.md §5 (f₀ = 5032.921 Hz, f₁ =
// 4299.670 Hz, f₂ = 5891.219 Hz, checked there against ngspice-39).
func TestTeaCursorJumps(t *testing.T) {
	const tolHz = 0.5 // Hz; extract interpolates between 61 points
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{})
	tm.Send(TraceMsg{Trace: analytic(rlcBandpass, logFreqs(20, 20e3, 61)), Complete: true})
	waitFor(t, tm, "band-pass")
	tm.Type("p")
	waitFor(t, tm, "cursor at the peak, 5.033 kHz")
	tm.Type("c")
	waitFor(t, tm, "corner, 5.891 kHz")
	tm.Type("c")
	waitFor(t, tm, "corner, 4.300 kHz")
	tm.Type("n")
	waitFor(t, tm, "no notch in the live trace")
	m := finish(t, tm)
	if math.Abs(m.cursor-4299.670) > tolHz {
		t.Errorf("cursor at %.3f Hz, want f₁ = 4299.670 Hz", m.cursor)
	}
	if math.Abs(m.params.Peak.Freq-rlcF0) > tolHz {
		t.Errorf("peak at %.3f Hz, want f₀ = %.3f Hz", m.params.Peak.Freq, rlcF0)
	}
}

// TestTeaCursorMoves checks that the cursor moves one plot column per key
// and ten with the fast keys.
func TestTeaCursorMoves(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{Cursor: 1000})
	tm.Send(TraceMsg{Trace: analytic(rcLowpass, logFreqs(20, 20e3, 61)), Complete: true})
	waitFor(t, tm, "low-pass")
	tm.Type("l")
	tm.Type("l")
	tm.Type("L")
	tm.Send(tea.KeyMsg{Type: tea.KeyLeft})
	m := finish(t, tm)
	x := m.xmap
	col0, _ := x.Col(1000)
	col, _ := x.Col(m.cursor)
	if col != col0+11 {
		t.Errorf("cursor in column %d, want %d (start %d + 2 + 10 − 1)", col, col0+11, col0)
	}
	if m.cursor != x.Freq(col) {
		t.Errorf("cursor %g Hz not at the centre of its column (%g Hz)", m.cursor, x.Freq(col))
	}
}

func TestTeaReferencesAndOverlays(t *testing.T) {
	ctl := newFake()
	fr := logFreqs(20, 20e3, 41)
	tm := startTea(t, ctl, 80, 24, Options{})
	tm.Type("r")
	waitFor(t, tm, "nothing to store yet")
	tm.Send(TraceMsg{Trace: analytic(rcLowpass, fr), Complete: true})
	tm.Type("r")
	waitFor(t, tm, "stored the live trace as ref 1 (41 points)", "ref 1")
	tm.Send(TraceMsg{Trace: analytic(rcLowpassC(22e-9), fr), Complete: true})
	tm.Type("d")
	waitFor(t, tm, "live − reference shown", "live−ref")
	tm.Type("o")
	waitFor(t, tm, "references hidden")
	tm.Send(PredictionMsg{Trace: analytic(rcLowpass, fr), Fixture: "source 100 Ω"})
	waitFor(t, tm, "vs model")
	tm.Type("e")
	waitFor(t, tm, "prediction hidden")
	m := finish(t, tm)
	legend := lines(plain(m))[1]
	if strings.Contains(legend, "ref 1") || strings.Contains(legend, "model") || !strings.Contains(legend, "live−ref") {
		t.Errorf("legend %q: want live−ref only beside live", legend)
	}
	for range MaxReferences + 1 {
		m.Update(key("r"))
	}
	if len(m.refs) != MaxReferences || m.refs[0].name != "ref 3" || m.refs[MaxReferences-1].name != "ref 6" {
		t.Errorf("after storing 6: %d references, oldest %q", len(m.refs), m.refs[0].name)
	}
	m.Update(key("R"))
	if len(m.refs) != 0 || !strings.Contains(plain(m), "forgot 4 reference traces") {
		t.Errorf("R left %d references", len(m.refs))
	}
}

// TestTeaResize resizes down to the minimum, below it and up again; every
// frame must fill the terminal exactly.
func TestTeaResize(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 160, 48, Options{})
	tm.Send(TraceMsg{Trace: analytic(rcLowpass, logFreqs(20, 20e3, 41)), Complete: true})
	tm.Send(StatusMsg{demoStatus()})
	for _, sz := range [][2]int{{80, 24}, {60, 20}, {79, 30}, {120, 30}, {160, 48}} {
		tm.Send(tea.WindowSizeMsg{Width: sz[0], Height: sz[1]})
	}
	tm.Send(tea.WindowSizeMsg{Width: 80, Height: 24})
	m := finish(t, tm)
	checkFrame(t, m, 80, 24)
}

// checkFrame checks that the view is h lines of exactly w columns.
func checkFrame(t *testing.T, m *Model, w, h int) {
	t.Helper()
	ls := lines(m.View())
	if len(ls) != h {
		t.Fatalf("%d×%d: %d lines", w, h, len(ls))
	}
	for i, l := range ls {
		if got := ansi.StringWidth(l); got != w {
			t.Errorf("%d×%d: line %d is %d wide: %q", w, h, i, got, ansi.Strip(l))
		}
	}
}

func TestTeaHelp(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{})
	tm.Type("?")
	waitFor(t, tm, "Keys", "any key closes this list", "store live as a reference", "quit (also ctrl+c)")
	tm.Type("m") // closes the help only
	waitFor(t, tm, "no input levels yet")
	m := finish(t, tm)
	if calls, _, _, _, _ := ctl.snapshot(); len(calls) != 0 || m.screen != screenMain {
		t.Errorf("a key that closed the help also did %v", calls)
	}
}

func TestTeaCtrlC(t *testing.T) {
	tm := startTea(t, newFake(), 80, 24, Options{})
	tm.Send(tea.KeyMsg{Type: tea.KeyCtrlC})
	tm.WaitFinished(t, teatest.WithFinalTimeout(waitTime))
}

// TestTeaListen feeds messages through an events channel, as main does.
func TestTeaListen(t *testing.T) {
	events := make(chan tea.Msg, 8)
	tm := startTea(t, newFake(), 80, 24, Options{Events: events})
	events <- InfoMsg{Device: "virtual bench", Rate: 48000, Demo: true}
	events <- StateMsg{State: StateRunning}
	events <- ProgressMsg{Done: 7, Total: 31, Freq: 125}
	waitFor(t, tm, "running", "7/31", "virtual bench 48k")
	st := demoStatus()
	st.Inputs[0].Dead = true
	events <- StatusMsg{st}
	waitFor(t, tm, "the reference input is silent", "check the loopback lead")
	close(events)
	waitFor(t, tm, "the measurement has ended")
	m := finish(t, tm)
	if !m.closed || m.run != StateStopped {
		t.Errorf("closed %v, state %v", m.closed, m.run)
	}
}

func TestTeaFatalError(t *testing.T) {
	tm := startTea(t, newFake(), 80, 24, Options{})
	fatal := errors.New("the audio device went away; plug it back in and start again")
	tm.Send(ErrMsg{Err: errors.New("3 buffers lost"), Fatal: false})
	waitFor(t, tm, "3 buffers lost")
	tm.Send(ErrMsg{Err: fatal, Fatal: true})
	m := tm.FinalModel(t, teatest.WithFinalTimeout(waitTime)).(*Model)
	if !errors.Is(m.Err(), fatal) {
		t.Errorf("Err() = %v", m.Err())
	}
}

// TestTeaGolden compares the final screen of a short session with a
// golden file (ANSI stripped).
func TestTeaGolden(t *testing.T) {
	ctl := newFake()
	tm := startTea(t, ctl, 80, 24, Options{Info: InfoMsg{Device: "virtual bench", Rate: 48000, Demo: true}})
	tm.Send(TraceMsg{Trace: analytic(rlcBandpass, logFreqs(20, 20e3, 61)), Complete: true})
	tm.Send(StatusMsg{demoStatus()})
	tm.Type("p")
	waitFor(t, tm, "cursor at the peak")
	tm.Type("x")
	waitFor(t, tm, "MUTED")
	m := finish(t, tm)
	golden(t, "tea-rlc-peak-muted-80x24", plain(m))
	var buf bytes.Buffer
	buf.WriteString(plain(m))
	if !strings.Contains(buf.String(), "5.033 kHz") {
		t.Error("the readout does not show the peak frequency")
	}
}
