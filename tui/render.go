package tui

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/charmbracelet/x/ansi"

	"tonetrace/tui/plot"
)

// Layout constants, in columns and rows.
const (
	wideFrom   = 120 // from this width the panes stand beside the plot
	sideMin    = 40  // narrowest side pane
	sideMax    = 56  // widest side pane
	bottomMin  = 8   // lowest row of bottom panes (title included)
	bottomMax  = 12  // highest
	helpColumn = 40  // width of one column of the help
)

// layout is where the parts of the screen go.
type layout struct {
	w, h         int
	bodyH        int  // rows between the header and the bottom line
	wide         bool // panes beside the plot
	plotW, plotH int
	paneW        int // width of the side pane (wide) or of the inputs pane (narrow)
	readW        int // width of the readout pane (narrow)
	paneH        int // height of the bottom panes (narrow)
}

// setSize lays the screen out for a terminal of w×h; w and h must be at
// least MinWidth and MinHeight.
func (l *layout) setSize(w, h int) {
	*l = layout{w: w, h: h, bodyH: h - 2}
	if w >= wideFrom {
		l.wide = true
		l.paneW = min(max(w*3/10, sideMin), sideMax)
		l.plotW = w - l.paneW - 1
		l.plotH = l.bodyH
		return
	}
	l.paneH = min(max(l.bodyH/3, bottomMin), bottomMax)
	l.plotW, l.plotH = w, l.bodyH-l.paneH
	l.paneW = w / 2
	l.readW = w - l.paneW
}

// render draws the whole screen into m.view.
func (m *Model) render() {
	m.lastFrame = m.opt.Clock()
	m.dirty = false
	w, h := m.width, m.height
	if w <= 0 || h <= 0 {
		m.view = ""
		return
	}
	if w < MinWidth || h < MinHeight {
		m.view = padRight(fmt.Sprintf("tonetrace needs at least %d×%d; this terminal is %d×%d: enlarge it (x mutes, q quits)",
			MinWidth, MinHeight, w, h), w)
		return
	}
	m.analyse()
	m.lay.setSize(w, h)
	l := &m.lay

	var b strings.Builder
	b.Grow(w * h * 4)
	b.WriteString(m.headerLine(w))
	b.WriteByte('\n')

	switch {
	case m.screen == screenHelp:
		for _, line := range m.helpLines(w, l.bodyH) {
			b.WriteString(line)
			b.WriteByte('\n')
		}
	case l.wide:
		left := m.bodyLines(l.plotW, l.plotH)
		inH := min(m.inputsHeight(l.paneW), l.bodyH/2)
		side := append(m.inputsLines(l.paneW, inH), m.readoutLines(l.paneW, l.bodyH-inH)...)
		for i := 0; i < l.bodyH; i++ {
			b.WriteString(left[i])
			b.WriteByte(' ')
			b.WriteString(side[i])
			b.WriteByte('\n')
		}
	default:
		for _, line := range m.bodyLines(l.plotW, l.plotH) {
			b.WriteString(line)
			b.WriteByte('\n')
		}
		in := m.inputsLines(l.paneW, l.paneH)
		rd := m.readoutLines(l.readW, l.paneH)
		for i := 0; i < l.paneH; i++ {
			b.WriteString(in[i])
			b.WriteString(rd[i])
			b.WriteByte('\n')
		}
	}
	b.WriteString(m.footerLine(w))
	m.view = b.String()
}

// bodyLines returns the plot, or the single-tone readout, as h lines of w
// columns.
func (m *Model) bodyLines(w, h int) []string {
	if m.mode == ModeTone {
		return m.toneLines(w, h)
	}
	return m.plotLines(w, h)
}

// headerLine returns the top line: mode, state, level, progress, device.
func (m *Model) headerLine(w int) string {
	state := m.run.String()
	if m.closed {
		state = "ended"
	}
	lvl := "out " + fixed(m.level, 1, false) + " dBFS, cap " + fixed(m.levelCap, 1, false)
	short := "out " + dbShort(m.level) + " dBFS, cap " + dbShort(m.levelCap)
	var prog, progShort string
	if p := m.progress; p.Total > 0 {
		progShort = strconv.Itoa(p.Done) + "/" + strconv.Itoa(p.Total)
		prog = progShort
		if p.Freq > 0 {
			prog += " at " + hz(p.Freq)
		}
		if p.Sweeps > 0 {
			prog += ", sweep " + strconv.Itoa(p.Sweeps+1)
		}
	}
	dev := m.info.Device
	if m.info.Demo && dev == "" {
		dev = "demo"
	}
	devShort := dev
	if b := m.info.Backend; b != "" && b != dev {
		dev = strings.TrimSpace(dev + " (" + b + ")")
	}
	if m.info.Rate > 0 {
		rate := float64(m.info.Rate)
		dev = strings.TrimSpace(dev + " " + hz(rate))
		devShort = strings.TrimSpace(devShort + " " + trimZeros(rate/1000) + "k")
	}
	build := func(lvl, prog, dev string) string {
		parts := []string{m.mode.String(), state}
		if m.muted {
			parts = append(parts, "MUTED")
		}
		parts = append(parts, lvl)
		if prog != "" {
			parts = append(parts, prog)
		}
		if dev != "" {
			parts = append(parts, dev)
		}
		return " " + strings.Join(parts, " · ")
	}
	text := build(lvl, prog, dev)
	if ansi.StringWidth(text) > w {
		text = build(short, progShort, devShort)
	}
	text = padRight(text, w)
	if m.muted {
		// The word MUTED stands out in the alarm colour.
		i := strings.Index(text, "MUTED")
		return m.st.header.Render(text[:i]) + m.st.alarm.Reverse(true).Render("MUTED") + m.st.header.Render(text[i+len("MUTED"):])
	}
	return m.st.header.Render(text)
}

// dbShort formats a level with one decimal, or none when it is whole.
func dbShort(v float64) string {
	if v == math.Trunc(v) {
		return fixed(v, 0, false)
	}
	return fixed(v, 1, false)
}

// trimZeros formats v with up to three decimals and no trailing zeros.
func trimZeros(v float64) string {
	s := strconv.FormatFloat(v, 'f', 3, 64)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	return s
}

// footerLine returns the bottom line: the message, or the main keys.
func (m *Model) footerLine(w int) string {
	if m.note == "" {
		return m.st.dim.Render(padRight(" "+m.keys.shortHelpText(), w))
	}
	text := padRight(" "+m.note, w)
	switch m.noteLevel {
	case noteAlarm:
		return m.st.alarm.Render(text)
	case noteWarn:
		return m.st.warn.Render(text)
	}
	return text
}

// plotLines renders the Bode plot as h lines of w columns.
func (m *Model) plotLines(w, h int) []string {
	panels := m.buildPanels()
	opt := plot.Options{From: m.from, To: m.to, Cursor: m.cursor, MarkClip: true}
	g := m.canvas.Render(w, h, opt, panels...)
	m.xmap = g.X
	lines := make([]string, h)
	for r := 0; r < h; r++ {
		m.lineBuf = m.appendRow(m.lineBuf[:0], g, r)
		lines[r] = string(m.lineBuf)
	}
	return lines
}

// buildPanels assembles the plot's panels from the visible traces, reusing
// the model's series buffers.
func (m *Model) buildPanels() []plot.Panel {
	gs, ps, cs := m.seriesBuf[0][:0], m.seriesBuf[1][:0], m.seriesBuf[2][:0]
	add := func(s *series) {
		if s.empty() {
			return
		}
		gs = append(gs, plot.Series{Name: s.name, Freq: s.curve.Freq, Value: s.curve.Gain, Style: s.style})
		if m.wrapped {
			ps = append(ps, plot.Series{Freq: s.wrapF, Value: s.wrapP, Style: s.style})
		} else {
			ps = append(ps, plot.Series{Freq: s.curve.Freq, Value: s.curve.Phase, Style: s.style})
		}
	}
	if m.showRefs {
		for _, r := range m.refs {
			add(r)
		}
	}
	if m.showPred {
		add(&m.pred)
	}
	if m.showDiff {
		if ref := m.newestRef(); ref != nil && !m.liveS.empty() {
			m.diff.setDifference(&m.liveS, ref)
			add(&m.diff)
		}
	}
	add(&m.liveS)
	if m.mode == ModeAny && !m.liveS.empty() {
		cs = append(cs, plot.Series{Name: "coherence", Freq: m.liveS.curve.Freq, Value: m.liveS.coh, Style: styleCoherence})
	}
	m.seriesBuf[0], m.seriesBuf[1], m.seriesBuf[2] = gs, ps, cs

	gain := plot.Axis{Auto: true, MinSpan: 6, Unit: "dB"}
	phase := plot.Axis{Auto: true, MinSpan: 90, Step: 45, Unit: "deg"}
	if m.fixedScale {
		gain = plot.Axis{Min: m.opt.GainMin, Max: m.opt.GainMax, Unit: "dB"}
		phase = plot.Axis{Min: m.opt.PhaseMin, Max: m.opt.PhaseMax, Step: 45, Unit: "deg"}
	}
	if m.wrapped {
		phase = plot.Axis{Min: -180, Max: 180, Step: 90, Unit: "deg"}
	}
	m.panels = append(m.panels[:0],
		plot.Panel{Title: "Gain", Y: gain, Series: gs},
		plot.Panel{Title: "Phase", Y: phase, Series: ps})
	if m.mode == ModeAny {
		m.panels = append(m.panels, plot.Panel{Title: "Coherence", Y: plot.Axis{Min: 0, Max: 1, Step: 0.5, Unit: "γ²"}, Series: cs,
			Rows: max(m.lay.plotH/5, 4)})
	}
	return m.panels
}

// appendRow appends row r of the grid with colour escape sequences.
func (m *Model) appendRow(dst []byte, g *plot.Grid, r int) []byte {
	st := m.st
	if st.sgrReset == "" {
		return g.AppendRow(dst, r)
	}
	cur, curCursor := "", false
	open := false
	for _, c := range g.Row(r) {
		sgr := st.cellSGR(c)
		if sgr != cur || c.Cursor != curCursor {
			if open {
				dst = append(dst, st.sgrReset...)
				open = false
			}
			if sgr != "" {
				dst = append(dst, sgr...)
				open = true
			}
			if c.Cursor {
				dst = append(dst, st.sgrCursor...)
				open = true
			}
			cur, curCursor = sgr, c.Cursor
		}
		dst = appendRune(dst, c.Rune)
	}
	if open {
		dst = append(dst, st.sgrReset...)
	}
	return dst
}

func appendRune(dst []byte, r rune) []byte {
	if r < utf8.RuneSelf {
		return append(dst, byte(r))
	}
	return utf8.AppendRune(dst, r)
}

// readingLine formats gain and phase with their uncertainties.
func readingLine(r reading) string {
	s := fixed(r.Gain, 2, false) + " dB"
	if !math.IsNaN(r.GainU) {
		s += " ±" + fixed(r.GainU, 2, false)
	}
	s += "  " + fixed(r.Phase, 1, false) + "°"
	if !math.IsNaN(r.PhaseU) {
		s += " ±" + fixed(r.PhaseU, 1, false)
	}
	return s
}
