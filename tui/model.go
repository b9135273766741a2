package tui

import (
	"fmt"
	"io"
	"log/slog"
	"math"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/muesli/termenv"

	"tonetrace/dsp/eseries"
	"tonetrace/dsp/extract"
	"tonetrace/dsp/trace"
	"tonetrace/tui/plot"
)

// Limits and defaults of the screen.
const (
	// MinWidth and MinHeight are the smallest terminal the screen draws
	// in, in columns and rows; below it a one-line request for a bigger
	// terminal is shown.
	MinWidth, MinHeight = 80, 24
	// MaxReferences is how many reference traces are kept; storing one
	// more forgets the oldest.
	MaxReferences = 4
	// DefaultFPS is the default frame-rate cap in frames per second.
	DefaultFPS = 30
	// DefaultLevelStep is the default output level step in dB.
	DefaultLevelStep = 1.0
	// DefaultToneHistory is the default number of single-tone readings
	// kept for the history strip.
	DefaultToneHistory = 240
)

// Thresholds of the problems the model words itself.
const (
	// LowSNRdB is the SNR below which the status says the signal is
	// barely above the noise (common practice: a 20 dB SNR leaves
	// about ±1 dB of scatter in a single reading).
	LowSNRdB = 20.0
)

// Options configure the screen. The zero value of every field selects its
// default.
type Options struct {
	// Events delivers the measuring side's messages (see [Listen]); nil
	// when the caller sends them with tea.Program.Send instead.
	Events <-chan tea.Msg
	// Logger receives what the screen does and every error, never the
	// terminal. Default: discard (see [LogTo]).
	Logger *slog.Logger
	// Profile is the colour profile (see [ProfileFor]); the zero value is
	// termenv.TrueColor. Only the 16 ANSI colours are used whatever the
	// profile; termenv.Ascii draws without any colour or attribute.
	Profile termenv.Profile
	// Keys are the key bindings; default DefaultKeyMap().
	Keys *KeyMap

	// Mode and State are what the screen shows until the measuring side
	// says otherwise. Default: stepped sweep, stopped.
	Mode  Mode
	State RunState
	// Info is the initial device description.
	Info InfoMsg

	// From and To are the plot's frequency range in hertz. Default
	// 20 Hz–20 kHz; an InfoMsg with a band replaces them.
	From, To float64
	// GainMin and GainMax are the fixed gain scale in dB, default −50 to
	// +10 dB; PhaseMin and PhaseMax the fixed phase scale in degrees,
	// default −180 to +180°. The scale key switches between these and
	// automatic ranges.
	GainMin, GainMax, PhaseMin, PhaseMax float64
	// Cursor is the cursor's first frequency in hertz; default the
	// geometric middle of the range (632 Hz for 20 Hz–20 kHz).
	Cursor float64

	// LevelStep is the output level step in dB, default 1 dB.
	LevelStep float64
	// LevelMin is the lowest output level the down key goes to, in dBFS;
	// default −90 dBFS.
	LevelMin float64

	// FPS caps the frame rate; default 30, at most 120.
	FPS int
	// Clock gives the time for frame pacing and file names; default
	// time.Now. Tests inject a clock for reproducible screens.
	Clock func() time.Time
	// SaveDir is the directory for saved traces and pictures; default
	// the current directory.
	SaveDir string
	// ToneHistory is the number of single-tone readings kept; default
	// 240.
	ToneHistory int
}

func (o *Options) defaults() {
	if o.Logger == nil {
		o.Logger = slog.New(slog.NewTextHandler(io.Discard, nil))
	}
	if o.Keys == nil {
		k := DefaultKeyMap()
		o.Keys = &k
	}
	if !(o.From > 0 && o.To > o.From && !math.IsInf(o.To, 0)) {
		o.From, o.To = plot.DefaultFrom, plot.DefaultTo
	}
	if !(o.GainMax > o.GainMin) {
		o.GainMin, o.GainMax = -50, 10
	}
	if !(o.PhaseMax > o.PhaseMin) {
		o.PhaseMin, o.PhaseMax = -180, 180
	}
	if !(o.Cursor >= o.From && o.Cursor <= o.To) {
		o.Cursor = math.Sqrt(o.From * o.To)
	}
	if !(o.LevelStep > 0) {
		o.LevelStep = DefaultLevelStep
	}
	if o.LevelMin == 0 || math.IsNaN(o.LevelMin) {
		o.LevelMin = -90
	}
	if o.FPS <= 0 {
		o.FPS = DefaultFPS
	}
	o.FPS = min(o.FPS, 120)
	if o.Clock == nil {
		o.Clock = time.Now
	}
	if o.SaveDir == "" {
		o.SaveDir = "."
	}
	if o.ToneHistory <= 0 {
		o.ToneHistory = DefaultToneHistory
	}
	if !o.Mode.Valid() {
		o.Mode = ModeStepped
	}
}

// screen is what the body of the screen shows.
type screen int

const (
	screenMain  screen = iota // plot (or tone readout) and panes
	screenHelp                // the key list
	screenSmall               // a request for a bigger terminal
)

// String returns the screen's name, for the log.
func (s screen) String() string {
	switch s {
	case screenMain:
		return "main"
	case screenHelp:
		return "help"
	case screenSmall:
		return "too small"
	}
	return fmt.Sprintf("screen(%d)", int(s))
}

// noteLevel is how a message line is shown.
type noteLevel int

const (
	noteInfo noteLevel = iota
	noteWarn
	noteAlarm
)

// frameMsg asks for a pending frame to be drawn.
type frameMsg struct{}

// Model is the live monitor screen, a tea.Model. Create it with [New];
// its methods must be called from the Bubble Tea program only.
type Model struct {
	ctl  Controller
	opt  Options
	log  *slog.Logger
	keys KeyMap
	st   *styles

	width, height int
	screen        screen // what the body shows (help, main)

	// What the measuring side said.
	mode     Mode
	run      RunState
	muted    bool
	level    float64
	levelCap float64
	levelDef float64
	info     InfoMsg
	status   Status
	progress ProgressMsg
	closed   bool
	quit     bool  // the user asked to quit
	err      error // fatal error

	// Data.
	live      liveTrace
	liveS     series
	refs      []*series
	refCount  int
	pred      series
	fixture   string
	diff      series
	tone      []trace.Point
	tunables  []Tunable
	part      int
	dataVer   int // bumped when any trace changes
	cautioned bool

	// View settings.
	showRefs, showPred, showDiff bool
	fixedScale                   bool
	wrapped                      bool
	from, to                     float64
	cursor                       float64

	// Derived.
	analyzer  extract.Analyzer
	params    extract.Params
	paramsErr error
	paramsOf  *series
	paramsVer int

	// Message line.
	note      string
	noteLevel noteLevel

	// Rendering.
	lay         layout
	canvas      plot.Canvas
	xmap        plot.XMap
	panels      []plot.Panel
	seriesBuf   [3][]plot.Series
	lineBuf     []byte
	view        string
	dirty       bool
	tickPending bool
	lastFrame   time.Time
	frameEvery  time.Duration
	usedNames   []string // file names given out this session
}

// New returns the screen's model. ctl carries out the user's requests; it
// must not be nil.
func New(ctl Controller, opt Options) *Model {
	if ctl == nil {
		panic("tui: New needs a Controller")
	}
	opt.defaults()
	m := &Model{
		ctl:        ctl,
		opt:        opt,
		log:        opt.Logger,
		keys:       *opt.Keys,
		st:         newStyles(opt.Profile),
		mode:       opt.Mode,
		run:        opt.State,
		info:       opt.Info,
		from:       opt.From,
		to:         opt.To,
		cursor:     opt.Cursor,
		showRefs:   true,
		showPred:   true,
		frameEvery: time.Second / time.Duration(opt.FPS),
		status:     Status{LatencyMs: math.NaN(), SNRdB: math.NaN(), DriftPPM: math.NaN()},
	}
	m.liveS.name, m.liveS.style = "live", styleLive
	m.pred.name, m.pred.style = "model", stylePrediction
	m.diff.name, m.diff.style = "live−ref", styleDifference
	m.level, m.levelCap, m.levelDef = ctl.Level()
	m.tunables = ctl.Tunables()
	m.applyInfo(opt.Info)
	m.dirty = true
	return m
}

// Err returns the fatal error that ended the screen, or nil.
func (m *Model) Err() error { return m.err }

// Init starts listening for events.
func (m *Model) Init() tea.Cmd {
	return Listen(m.opt.Events)
}

// Update handles a message and returns the next command.
func (m *Model) Update(msg tea.Msg) (tea.Model, tea.Cmd) {
	var cmds []tea.Cmd
	if ev, ok := msg.(eventMsg); ok {
		cmds = append(cmds, Listen(ev.ch))
		msg = ev.msg
	}
	switch msg := msg.(type) {
	case frameMsg:
		m.tickPending = false
		if m.dirty {
			m.render()
		}
		return m, tea.Batch(cmds...)
	case tea.WindowSizeMsg:
		m.width, m.height = msg.Width, msg.Height
		m.log.Debug("resize", "width", msg.Width, "height", msg.Height)
		m.dirty = true
		m.render() // draw a new size at once: the old frame no longer fits
		return m, tea.Batch(cmds...)
	case tea.KeyMsg:
		cmd := m.handleKey(msg)
		if m.quit {
			m.render()
			return m, tea.Quit
		}
		cmds = append(cmds, cmd)
	case savedMsg:
		m.handleSaved(msg)
	default:
		if !m.handleEvent(msg) {
			return m, tea.Batch(cmds...)
		}
	}
	m.dirty = true
	if m.err != nil {
		m.render()
		return m, tea.Quit
	}
	cmds = append(cmds, m.frame())
	return m, tea.Batch(cmds...)
}

// frame draws now when the last frame is at least one frame interval old,
// and otherwise schedules a frame for when it will be.
func (m *Model) frame() tea.Cmd {
	if !m.dirty {
		return nil
	}
	now := m.opt.Clock()
	wait := m.lastFrame.Add(m.frameEvery).Sub(now)
	if wait <= 0 || wait > m.frameEvery {
		m.render()
		return nil
	}
	if m.tickPending {
		return nil
	}
	m.tickPending = true
	return tea.Tick(wait, func(time.Time) tea.Msg { return frameMsg{} })
}

// View returns the last drawn frame.
func (m *Model) View() string { return m.view }

// handleEvent applies a message from the measuring side and reports
// whether it was one.
func (m *Model) handleEvent(msg tea.Msg) bool {
	switch msg := msg.(type) {
	case TraceMsg:
		if msg.Trace == nil {
			m.live.clear()
		} else {
			m.live.setTrace(msg.Trace.Points, msg.Complete)
		}
		m.liveChanged()
	case PointMsg:
		f := msg.Point.Freq
		if !(f > 0) || math.IsInf(f, 0) {
			m.log.Warn("point ignored: frequency not positive and finite", "freq", f)
			return false
		}
		m.live.add(msg.Point, msg.Restart)
		m.liveChanged()
	case StatusMsg:
		m.status = msg.Status
	case ProgressMsg:
		m.progress = msg
	case PredictionMsg:
		if msg.Trace == nil {
			m.pred.set(nil)
		} else {
			m.pred.set(msg.Trace.Points)
		}
		m.fixture = msg.Fixture
		m.dataVer++
	case ToneMsg:
		m.tone = append(m.tone, msg.Point)
		if over := len(m.tone) - m.opt.ToneHistory; over > 0 {
			m.tone = append(m.tone[:0], m.tone[over:]...)
		}
	case StateMsg:
		m.run, m.muted = msg.State, msg.Muted
	case InfoMsg:
		m.applyInfo(msg)
	case ProfileMsg:
		m.st = newStyles(msg.Profile)
	case ErrMsg:
		if msg.Err == nil {
			return false
		}
		m.log.Error("measurement", "err", msg.Err, "fatal", msg.Fatal)
		if msg.Fatal {
			m.err = msg.Err
		}
		m.setNote(msg.Err.Error(), noteAlarm)
	case EventsClosedMsg:
		m.closed = true
		m.run = StateStopped
		m.log.Info("events closed")
		m.setNote("the measurement has ended; q quits", noteWarn)
	default:
		return false
	}
	return true
}

func (m *Model) applyInfo(in InfoMsg) {
	if in.Device != "" {
		m.info.Device = in.Device
	}
	if in.Backend != "" {
		m.info.Backend = in.Backend
	}
	if in.Rate > 0 {
		m.info.Rate = in.Rate
	}
	if in.Demo {
		m.info.Demo = true
	}
	if in.From > 0 && in.To > in.From && !math.IsInf(in.To, 0) {
		m.from, m.to = in.From, in.To
		m.info.From, m.info.To = in.From, in.To
		if !(m.cursor >= m.from && m.cursor <= m.to) {
			m.cursor = math.Sqrt(m.from * m.to)
		}
	}
}

// liveChanged rebuilds the live series after its points changed.
func (m *Model) liveChanged() {
	m.liveS.points = m.live.merged(m.liveS.points[:0])
	m.liveS.set(m.liveS.points)
	m.dataVer++
}

func (m *Model) setNote(text string, lvl noteLevel) {
	m.note, m.noteLevel = text, lvl
}

// primary returns the series the readout and the jump keys use: live when
// it has points, else the newest reference, else the prediction; nil when
// there is none.
func (m *Model) primary() *series {
	switch {
	case !m.liveS.empty():
		return &m.liveS
	case len(m.refs) > 0:
		return m.refs[len(m.refs)-1]
	case !m.pred.empty():
		return &m.pred
	}
	return nil
}

// analyse brings the parameters of the primary series up to date.
func (m *Model) analyse() {
	p := m.primary()
	if p == m.paramsOf && m.paramsVer == m.dataVer {
		return
	}
	m.paramsOf, m.paramsVer = p, m.dataVer
	if p == nil {
		m.paramsErr = extract.ErrTooFewPoints
		return
	}
	m.paramsErr = m.analyzer.AnalyzeInto(&m.params, p.points)
}

// newestRef returns the newest reference or nil.
func (m *Model) newestRef() *series {
	if len(m.refs) == 0 {
		return nil
	}
	return m.refs[len(m.refs)-1]
}

// toneStep returns the tone frequency n steps (0: the nearest) from f on
// the grid
// 1 kHz·10^(k/d): d = 100 for fine steps, d = 10 for the exact base-10
// third-octave midbands (IEC 61260-1, REFERENCES.md §9).
func toneStep(f float64, n, d int) float64 {
	x := math.Log10(f/1000) * float64(d)
	k := math.Round(x)
	if math.Abs(x-k) > 1e-6 {
		// Off the grid: n = 0 gives the nearest grid frequency, and the
		// first step either way lands on the grid.
		switch {
		case n > 0:
			k = math.Floor(x)
		case n < 0:
			k = math.Ceil(x)
		}
	}
	return 1000 * math.Pow(10, (k+float64(n))/float64(d))
}

// stepValue returns the preferred value of series s next to v: up (dir
// > 0) or down.
func stepValue(v float64, s eseries.Series, dir int) float64 {
	if !s.Valid() {
		s = eseries.E12
	}
	if dir > 0 {
		_, above := eseries.Neighbours(v*(1+1e-6), s)
		return above
	}
	below, _ := eseries.Neighbours(v*(1-1e-6), s)
	return below
}
