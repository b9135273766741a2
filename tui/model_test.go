package tui

import (
	"bytes"
	"context"
	"encoding/xml"
	"errors"
	"image/png"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/muesli/termenv"

	"tonetrace/dsp/trace"
	"tonetrace/tui/picture"
)

// TestCaution checks that only the first raise above the default level
// shows the caution, and that the level never passes the cap.
func TestCaution(t *testing.T) {
	ctl := newFake()
	ctl.level, ctl.def, ctl.cap = -32, -30, -28.5
	m := testModel(ctl, 80, 24, Options{})
	steps := []struct {
		key       string
		level     float64
		noteHas   string
		cautioned bool
	}{
		{"+", -31, "", false},               // still below the default
		{"+", -30, "", false},               // at the default: no caution
		{"+", -29, "Caution", true},         // first raise above it
		{"-", -30, "", true},                // back down
		{"+", -29, "", true},                // above again: no second caution
		{"+", -28.5, "", true},              // up to the cap, not past it
		{"+", -28.5, "at its cap of", true}, // at the cap
		{"esc", -28.5, "", true},
	}
	for i, s := range steps {
		m.Update(key(s.key))
		if m.level != s.level || m.cautioned != s.cautioned {
			t.Fatalf("step %d (%s): level %g cautioned %v, want %g %v", i, s.key, m.level, m.cautioned, s.level, s.cautioned)
		}
		if s.noteHas == "" && strings.Contains(m.note, "Caution") {
			t.Errorf("step %d: caution shown again: %q", i, m.note)
		}
		if s.noteHas != "" && !strings.Contains(plain(m), s.noteHas) {
			t.Errorf("step %d: screen lacks %q; note %q", i, s.noteHas, m.note)
		}
	}
	for _, c := range ctl.calls {
		if v, err := strconv.ParseFloat(strings.TrimSuffix(strings.TrimPrefix(c, "SetLevel("), ")"), 64); err == nil && v > ctl.cap {
			t.Errorf("asked for %s above the cap of %g", c, ctl.cap)
		}
	}
	// Down to the floor.
	ctl.level = -89.5
	m.Update(key("-"))
	m.Update(key("-"))
	if m.level != -90 || !strings.Contains(m.note, "lowest level") {
		t.Errorf("floor: level %g, note %q", m.level, m.note)
	}
}

// TestMuteEverywhere checks that the mute key works in the help and on a
// terminal too small to draw in.
func TestMuteEverywhere(t *testing.T) {
	ctl := newFake()
	m := testModel(ctl, 60, 20, Options{})
	if got := plain(m); !strings.Contains(got, "needs at least 80×24") || strings.Contains(got, "\n") {
		t.Fatalf("small terminal: %q", got)
	}
	m.Update(key("x"))
	if !ctl.muted {
		t.Error("mute ignored on a small terminal")
	}
	m.Update(tea.WindowSizeMsg{Width: 80, Height: 24})
	m.Update(key("?"))
	m.Update(key("x"))
	if ctl.muted || m.screen != screenHelp {
		t.Errorf("mute in help: muted %v, screen %v", ctl.muted, m.screen)
	}
}

// TestToneMode checks the tone steps, on the exact third-octave grid of
// IEC 61260-1 (REFERENCES.md §9), and the large readout of the RC
// low-pass at its corner (REFERENCES.md §5: −3.0103 dB, −45°).
func TestToneMode(t *testing.T) {
	ctl := newFake()
	m := testModel(ctl, 80, 24, Options{Cursor: 1000})
	send(m, key("m"), key("m"))
	if m.mode != ModeTone || ctl.tone != 1000 {
		t.Fatalf("mode %v tone %g", m.mode, ctl.tone)
	}
	send(m, key("L"))
	if math.Abs(ctl.tone-1258.925) > 1e-3 {
		t.Errorf("third octave up: %g Hz, want 1258.925 Hz", ctl.tone)
	}
	send(m, key("h"), key("H"), key("H"))
	// 1258.925 → fine down 1230.269 → coarse down to the band below,
	// 1000 → 794.328.
	want := 1000 * math.Pow(10, -0.1)
	if math.Abs(ctl.tone-want) > 1e-6 {
		t.Errorf("after fine and coarse steps down: %g Hz, want %g Hz", ctl.tone, want)
	}
	fc := 1 / (2 * math.Pi * rcR * rcC)
	p := trace.NewPoint(fc, rcLowpass(fc))
	p.GainU, p.PhaseU = 0.002, 0.02
	send(m, ToneMsg{Point: p})
	screen := plain(m)
	// "−3.01" and "−45.0" in the three-row font.
	for _, want := range []string{bigText("−3.01")[1], bigText("−45.0")[1], "±0.002 dB", "±0.02°"} {
		if !strings.Contains(screen, want) {
			t.Errorf("tone screen lacks %q:\n%s", want, screen)
		}
	}
	// The reading came at fc, not at the requested tone (the measurement
	// may move a tone clear of a mains hum line): the readout says where.
	if !strings.Contains(screen, "measured at "+hz(fc)) {
		t.Errorf("tone screen does not say the reading is at %s:\n%s", hz(fc), screen)
	}
	at := trace.NewPoint(ctl.tone, rcLowpass(ctl.tone))
	send(m, ToneMsg{Point: at})
	if strings.Contains(plain(m), "measured at") {
		t.Errorf("a reading at the requested tone still says 'measured at':\n%s", plain(m))
	}
	// The history keeps at most ToneHistory readings.
	m2 := testModel(newFake(), 80, 24, Options{ToneHistory: 5})
	for range 12 {
		send(m2, ToneMsg{Point: p})
	}
	if len(m2.tone) != 5 {
		t.Errorf("history holds %d readings, want 5", len(m2.tone))
	}
}

// TestTuning steps C1 through the E12 series (IEC 60063) and checks the
// demo's prediction following it.
func TestTuning(t *testing.T) {
	ctl := newFake()
	ctl.parts = demoParts()
	fr := logFreqs(20, 20e3, 41)
	var m *Model
	ctl.onSet = func(name string, v float64) {
		// The demo bench would send the new prediction as an event.
		m.Update(PredictionMsg{Trace: analytic(rcLowpassC(v), fr)})
	}
	m = testModel(ctl, 80, 24, Options{})
	send(m, key("tab"), key("]"), key("]"), key("["))
	if got := ctl.parts[1].Value; math.Abs(got/18e-9-1) > 1e-12 {
		t.Errorf("C1 = %g F, want 18 nF (15 → 18 → 22 → 18)", got)
	}
	want := []string{"SetValue(C1, 1.8e-08)", "SetValue(C1, 2.2e-08)", "SetValue(C1, 1.8e-08)"}
	if strings.Join(ctl.calls, " ") != strings.Join(want, " ") {
		t.Errorf("calls %v, want %v", ctl.calls, want)
	}
	if !strings.Contains(plain(m), "tune C1 = 18.00 nF") {
		t.Errorf("screen does not show the tuned value:\n%s", plain(m))
	}
	// The prediction's corner follows C1: 1/(2π·10 kΩ·18 nF) = 884.19 Hz.
	m.analyse()
	if c := m.params.Corners; len(c) != 1 || math.Abs(c[0].Freq-884.19) > 0.5 {
		t.Errorf("prediction corners %+v, want 884.19 Hz", c)
	}
	send(m, key("shift+tab"))
	if m.part != 0 {
		t.Errorf("shift+tab selected part %d", m.part)
	}
	// Without tunables the keys say why nothing happens.
	m2 := testModel(newFake(), 80, 24, Options{})
	send(m2, key("]"))
	if !strings.Contains(m2.note, "simulated bench") {
		t.Errorf("note %q", m2.note)
	}
}

// TestSave saves the live trace and a picture and reads them back.
func TestSave(t *testing.T) {
	dir := t.TempDir()
	ctl := newFake()
	m := testModel(ctl, 80, 24, Options{SaveDir: dir, Info: InfoMsg{Device: "virtual bench", Rate: 48000}})
	if cmd := m.handleKey(key("s")); cmd != nil || !strings.Contains(m.note, "nothing to save") {
		t.Fatalf("saving an empty trace: %q", m.note)
	}
	fr := logFreqs(20, 20e3, 31)
	send(m, TraceMsg{Trace: analytic(rcLowpass, fr), Complete: true})

	msg := m.handleKey(key("s"))()
	m.Update(msg)
	saved := msg.(savedMsg)
	if saved.err != nil || len(saved.paths) != 1 || !strings.Contains(plain(m), "saved the trace to") {
		t.Fatalf("save: %+v, note %q", saved, m.note)
	}
	back, err := trace.LoadFile(saved.paths[0])
	if err != nil {
		t.Fatal(err)
	}
	if len(back.Points) != len(fr) {
		t.Fatalf("read back %d points, want %d", len(back.Points), len(fr))
	}
	for i, p := range back.Points {
		want := trace.NewPoint(fr[i], rcLowpass(fr[i]))
		// The CSV keeps enough digits for 1e-6 dB and degrees (trace
		// package contract).
		if math.Abs(p.GainDB()-want.GainDB()) > 1e-4 || math.Abs(p.PhaseDeg()-want.PhaseDeg()) > 1e-3 {
			t.Errorf("point %d: %g dB %g°, want %g dB %g°", i, p.GainDB(), p.PhaseDeg(), want.GainDB(), want.PhaseDeg())
		}
	}
	if v, _ := back.MetaValue("device"); v != "virtual bench" {
		t.Errorf("device %q in the file", v)
	}
	// A second save in the same session gets a new name.
	msg2 := m.handleKey(key("s"))().(savedMsg)
	if msg2.paths[0] == saved.paths[0] {
		t.Error("second save overwrote the first")
	}

	send(m, key("r"))
	pic := m.handleKey(key("S"))().(savedMsg)
	if pic.err != nil || len(pic.paths) != 3 {
		t.Fatalf("picture: %+v", pic)
	}
	txt, err := os.ReadFile(pic.paths[0])
	if err != nil {
		t.Fatal(err)
	}
	if ls := lines(strings.TrimRight(string(txt), "\n")); len(ls) != pictureRows+2 || !strings.Contains(ls[len(ls)-1], "ref 1, live") {
		t.Errorf("text picture: %d lines, last %q", len(ls), ls[len(ls)-1])
	}
	svg, err := os.ReadFile(pic.paths[1])
	if err != nil {
		t.Fatal(err)
	}
	checkSVG(t, svg)
	f, err := os.Open(pic.paths[2])
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("PNG: %v", err)
	}
	if b := img.Bounds(); b.Dx() != picture.DefaultWidth || b.Dy() != picture.DefaultHeight {
		t.Errorf("PNG is %v", b)
	}

	// An unwritable directory gives an error on the message line.
	m.opt.SaveDir = filepath.Join(dir, "missing", "deeper")
	bad := m.handleKey(key("s"))().(savedMsg)
	m.Update(bad)
	if bad.err == nil || !strings.Contains(m.note, "could not save the trace") {
		t.Errorf("save into a missing directory: %v, note %q", bad.err, m.note)
	}
}

// checkSVG checks that the picture is well-formed XML naming the traces.
func checkSVG(t *testing.T, svg []byte) {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(svg))
	var text strings.Builder
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed: %v", err)
		}
		if cd, ok := tok.(xml.CharData); ok {
			text.Write(cd)
		}
	}
	for _, want := range []string{"live", "ref 1", "tonetrace"} {
		if !strings.Contains(text.String(), want) {
			t.Errorf("SVG text lacks %q", want)
		}
	}
}

// TestFramePacing checks that frames are drawn at most once per frame
// interval, and a pending change is drawn by the frame tick.
func TestFramePacing(t *testing.T) {
	now := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
	clock := func() time.Time { return now }
	m := testModel(newFake(), 80, 24, Options{Clock: clock, FPS: 30})
	first := m.View()
	_, cmd := m.Update(StateMsg{State: StateRunning})
	if m.View() != first || cmd == nil {
		t.Fatal("a change within the frame interval was drawn at once, or no frame was scheduled")
	}
	_, cmd2 := m.Update(ProgressMsg{Done: 1, Total: 10})
	if cmd2 != nil && m.tickPending && m.View() != first {
		t.Fatal("second change drawn at once")
	}
	now = now.Add(time.Second / 60)
	m.Update(frameMsg{})
	if got := plain(m); !strings.Contains(got, "running") || !strings.Contains(got, "1/10") {
		t.Errorf("frame tick did not draw the pending changes:\n%s", got)
	}
	// After the interval a change draws at once.
	now = now.Add(time.Second)
	m.Update(StateMsg{State: StatePaused})
	if !strings.Contains(plain(m), "paused") {
		t.Error("change after the interval not drawn")
	}
	// A view is cached: with nothing new, View returns the same string.
	if first, again := m.View(), m.View(); first != again {
		t.Error("view not cached")
	}
}

// TestColours checks NO_COLOR (no escape sequence at all) and the
// 16-colour palette (only SGR 30–37, 90–97, bold and reverse).
func TestColours(t *testing.T) {
	build := func(p termenv.Profile) string {
		m := testModel(newFake(), 160, 48, Options{Profile: p})
		fr := logFreqs(20, 20e3, 41)
		send(m, TraceMsg{Trace: analytic(rcLowpass, fr), Complete: true}, key("r"),
			PredictionMsg{Trace: analytic(rlcBandpass, fr)}, StatusMsg{demoStatus()}, key("x"))
		return m.View()
	}
	if v := build(termenv.Ascii); strings.Contains(v, "\x1b") {
		t.Error("NO_COLOR view holds escape sequences")
	}
	for _, p := range []termenv.Profile{termenv.ANSI, termenv.ANSI256, termenv.TrueColor} {
		v := build(p)
		seqs := regexp.MustCompile("\x1b\\[([0-9;]*)m").FindAllStringSubmatch(v, -1)
		if len(seqs) == 0 {
			t.Fatalf("%v: no colour", p)
		}
		for _, s := range seqs {
			for _, code := range strings.Split(s[1], ";") {
				n, err := strconv.Atoi(code)
				ok := err == nil && (n == 0 || n == 1 || n == 7 || (n >= 30 && n <= 37) || (n >= 90 && n <= 97))
				if !ok {
					t.Fatalf("%v: escape %q outside the 16-colour set", p, s[0])
				}
			}
		}
	}
	if ProfileFor(io.Discard, true) != termenv.Ascii {
		t.Error("noColor ignored")
	}
	t.Setenv("NO_COLOR", "1")
	if ProfileFor(os.Stdout, false) != termenv.Ascii {
		t.Error("NO_COLOR ignored")
	}
}

// TestKeyMap checks that the help lists every key and that no key does
// two things.
func TestKeyMap(t *testing.T) {
	k := DefaultKeyMap()
	listed := map[string]bool{}
	for _, g := range k.FullHelp() {
		for _, b := range g {
			listed[b.Desc] = true
		}
	}
	v := reflect.ValueOf(k)
	owner := map[string]string{}
	for i := 0; i < v.NumField(); i++ {
		b := v.Field(i).Interface().(Binding)
		name := v.Type().Field(i).Name
		if !listed[b.Desc] {
			t.Errorf("%s (%q) missing from FullHelp", name, b.Desc)
		}
		if len(b.Keys) == 0 || b.Help == "" || b.Desc == "" {
			t.Errorf("%s incomplete: %+v", name, b)
		}
		for _, key := range b.Keys {
			if o, dup := owner[key]; dup {
				t.Errorf("key %q bound to %s and %s", key, o, name)
			}
			owner[key] = name
		}
	}
	m := testModel(newFake(), 80, 24, Options{})
	send(m, key("?"))
	help := plain(m)
	for i := 0; i < v.NumField(); i++ {
		b := v.Field(i).Interface().(Binding)
		if !strings.Contains(help, b.Desc) {
			t.Errorf("help at 80×24 lacks %q", b.Desc)
		}
	}
}

// TestDerivedProblems checks the plain words for flags the sender left
// unexplained, and that the sender's own wording wins.
func TestDerivedProblems(t *testing.T) {
	st := demoStatus()
	st.Inputs[0].Dead = true
	st.Inputs[1].Clipping = true
	st.Dropouts = 1
	st.SNRdB = 12
	st.Problems = []Problem{{Code: CodeDead + "reference", Text: "no loopback signal", Fix: "plug the loopback lead into input 2", Severe: true}}
	m := testModel(newFake(), 160, 48, Options{})
	send(m, StatusMsg{st})
	got := m.problems()
	codes := make([]string, len(got))
	for i, p := range got {
		codes[i] = p.Code
	}
	want := []string{"dead:reference", "clip:response", "dropouts", "snr"}
	if strings.Join(codes, " ") != strings.Join(want, " ") {
		t.Errorf("problems %v, want %v", codes, want)
	}
	screen := plain(m)
	for _, s := range []string{"no loopback signal", "plug the loopback lead", "the response input clips",
		"1 dropout:", "barely above the noise (SNR 12"} {
		if !strings.Contains(screen, s) {
			t.Errorf("screen lacks %q", s)
		}
	}
	if strings.Contains(screen, "the reference input is silent") {
		t.Error("derived wording shown beside the sender's")
	}
}

// TestListen checks the command that waits on the events channel.
func TestListen(t *testing.T) {
	if Listen(nil) != nil {
		t.Error("nil channel gave a command")
	}
	ch := make(chan tea.Msg, 2)
	ch <- ProgressMsg{Done: 1}
	close(ch)
	cmd := Listen(ch)
	ev := cmd().(eventMsg)
	if ev.msg != (ProgressMsg{Done: 1}) || ev.ch == nil {
		t.Errorf("first message %+v", ev)
	}
	ev = cmd().(eventMsg)
	if _, ok := ev.msg.(EventsClosedMsg); !ok || ev.ch != nil {
		t.Errorf("closed channel gave %+v", ev)
	}
	// The model listens again after each event, and stops after the
	// channel closed.
	m := testModel(newFake(), 80, 24, Options{})
	if _, next := m.Update(eventMsg{ch: ch, msg: StateMsg{State: StateRunning}}); next == nil {
		t.Error("no command to listen again")
	}
	if _, next := m.Update(eventMsg{msg: EventsClosedMsg{}}); next != nil {
		if _, ok := next().(eventMsg); ok {
			t.Error("listened again on a closed channel")
		}
	}
}

// TestRun runs the program with keys from a reader and the screen into a
// buffer, and checks that quitting restores the terminal.
func TestRun(t *testing.T) {
	var out bytes.Buffer
	m := New(newFake(), Options{Profile: termenv.Ascii})
	// One key per read: a chunk of several letters arrives as one key
	// message of several runes.
	in := strings.NewReader("q")
	if err := Run(context.Background(), m, RunOptions{In: in, Out: &out}); err != nil {
		t.Fatalf("Run: %v", err)
	}
	s := out.String()
	// Alternate screen entered and left, cursor shown again (DEC private
	// modes 1049 and 25, common practice of xterm-compatible terminals).
	if !strings.Contains(s, "\x1b[?1049h") || !strings.Contains(s, "\x1b[?1049l") || !strings.Contains(s, "\x1b[?25h") {
		t.Errorf("terminal not restored: %q", s[max(len(s)-80, 0):])
	}
	if !m.quit {
		t.Error("the q key did not reach the model")
	}

	// A cancelled context ends the screen with the context's error.
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	pr, pw := io.Pipe()
	defer pw.Close()
	err := Run(ctx, New(newFake(), Options{}), RunOptions{In: pr, Out: io.Discard, Inline: true})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v", err)
	}
}

// TestLogTo checks that the model logs to the file and not the screen.
func TestLogTo(t *testing.T) {
	path := filepath.Join(t.TempDir(), "tui.log")
	logger, closer, err := LogTo(path, slog.LevelInfo)
	if err != nil {
		t.Fatal(err)
	}
	m := testModel(newFake(), 80, 24, Options{Logger: logger})
	send(m, key("m"), ErrMsg{Err: errors.New("device hiccup")})
	if err := closer.Close(); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"mode=\"live multitone\"", "device hiccup"} {
		if !strings.Contains(string(b), want) {
			t.Errorf("log lacks %q:\n%s", want, b)
		}
	}
	if _, _, err := LogTo(filepath.Join(t.TempDir(), "no", "such", "dir", "x.log"), slog.LevelInfo); err == nil ||
		!strings.Contains(err.Error(), "choose a writable path") {
		t.Errorf("bad path: %v", err)
	}
}

// TestEmptyAndOddInput feeds the model odd messages; none may panic and
// the frame must keep its size.
func TestEmptyAndOddInput(t *testing.T) {
	m := testModel(newFake(), 80, 24, Options{From: -5, To: math.NaN(), FPS: 1000})
	nanPt := trace.NewPoint(1000, complex(math.NaN(), 0))
	send(m,
		TraceMsg{Trace: &trace.Trace{}}, TraceMsg{Trace: nil, Complete: true},
		TraceMsg{Trace: &trace.Trace{Points: []trace.Point{nanPt, trace.NewPoint(2000, 0)}}},
		PointMsg{Point: trace.NewPoint(math.NaN(), 1)}, PointMsg{Point: trace.NewPoint(100, 1), Restart: true},
		PredictionMsg{Trace: nil}, ToneMsg{Point: nanPt}, ErrMsg{}, StatusMsg{Status{Inputs: []InputStatus{{Name: "x", RMSdBFS: math.NaN(), PeakdBFS: 5}}}},
		InfoMsg{From: 1000, To: 10}, key("p"), key("n"), key("c"), key("d"), key("w"), key("a"), key("m"), key("m"),
		tea.WindowSizeMsg{Width: 0, Height: 0}, tea.WindowSizeMsg{Width: 80, Height: 24})
	checkFrame(t, m, 80, 24)
	if m.opt.FPS != 120 || m.from != 20 || m.to != 20000 {
		t.Errorf("defaults: fps %d range %g–%g", m.opt.FPS, m.from, m.to)
	}
}
