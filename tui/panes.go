package tui

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/charmbracelet/x/ansi"

	"tonetrace/dsp/eseries"
	"tonetrace/dsp/extract"
)

// Level bars span this range in dBFS.
const (
	barFloor = -90.0
	barTop   = 0.0
)

// paneTitle returns a pane's title row: "── Name ─────" over w columns.
func (m *Model) paneTitle(name string, w int) string {
	head := "── " + name + " "
	rest := w - ansi.StringWidth(head)
	if rest < 0 {
		return m.st.title.Render(padRight(head, w))
	}
	return m.st.title.Render(head) + m.st.dim.Render(strings.Repeat("─", rest))
}

// fit returns exactly h lines of w columns: the title, then lines cut or
// padded; when lines are cut the last row says how many more there were.
func (m *Model) fit(title string, lines []string, w, h int) []string {
	out := make([]string, 0, h)
	if h <= 0 {
		return out
	}
	out = append(out, m.paneTitle(title, w))
	room := h - 1
	if len(lines) > room && room > 0 {
		more := len(lines) - room + 1
		lines = append(lines[:room-1:room-1], m.st.dim.Render(fmt.Sprintf("… %d more line%s", more, plural(more))))
	}
	for i := 0; i < room; i++ {
		if i < len(lines) {
			// The last column stays blank to part this pane from the next.
			out = append(out, padRight(lines[i], w-1)+" ")
		} else {
			out = append(out, strings.Repeat(" ", w))
		}
	}
	return out
}

// problems returns the sender's problems and those the model words from
// the status flags, severe ones first.
func (m *Model) problems() []Problem {
	st := &m.status
	have := func(code string) bool {
		for _, p := range st.Problems {
			if p.Code == code {
				return true
			}
		}
		return false
	}
	all := append([]Problem(nil), st.Problems...)
	add := func(p Problem) {
		if !have(p.Code) {
			all = append(all, p)
		}
	}
	for _, in := range st.Inputs {
		switch {
		case in.Dead:
			add(Problem{Code: CodeDead + in.Name, Text: "the " + in.Name + " input is silent", Fix: deadFix(in.Name), Severe: true})
		case in.Clipping:
			add(Problem{Code: CodeClip + in.Name, Text: "the " + in.Name + " input clips",
				Fix: "lower the output level (" + m.keys.LevelDown.Help + ") or the input gain, or add an attenuator", Severe: true})
		}
	}
	if st.Dropouts > 0 {
		add(Problem{Code: CodeDropouts, Text: fmt.Sprintf("%d dropout%s: audio was lost and points near them may be wrong", st.Dropouts, plural(int(min(st.Dropouts, 2)))),
			Fix: "close other audio programs or choose a larger buffer"})
	}
	if st.SNRdB < LowSNRdB {
		add(Problem{Code: CodeSNR, Text: "the signal is barely above the noise (SNR " + fixed(st.SNRdB, 0, false) + " dB)",
			Fix: "raise the output level (" + m.keys.LevelUp.Help + ") or find the source of hum or noise"})
	}
	// Severe first, keeping the order otherwise.
	out := make([]Problem, 0, len(all))
	for _, severe := range []bool{true, false} {
		for _, p := range all {
			if p.Severe == severe {
				out = append(out, p)
			}
		}
	}
	return out
}

// deadFix is the likely fix for a silent input.
func deadFix(name string) string {
	switch name {
	case "reference":
		return "check the loopback lead from the output to the reference input"
	case "response":
		return "check the leads through the circuit to the response input, and that the circuit is powered"
	}
	return "check the lead to this input and that its source plays"
}

// inputsContent returns the Inputs pane's lines for width w. full is how
// many problems are worded in full (text and fix, wrapped); the others
// get one line each, cut on screen.
func (m *Model) inputsContent(w int, full int) []string {
	st := &m.status
	var lines []string
	if len(st.Inputs) == 0 {
		lines = append(lines, m.st.dim.Render("no input levels yet"))
	}
	for _, in := range st.Inputs {
		lines = append(lines, m.levelLine(in, w))
	}

	var parts []string
	if !math.IsNaN(st.LatencyMs) {
		parts = append(parts, "latency "+fixed(st.LatencyMs, 1, false)+" ms")
	}
	if !math.IsNaN(st.SNRdB) {
		parts = append(parts, "SNR "+fixed(st.SNRdB, 0, false)+" dB")
	}
	if !math.IsNaN(st.DriftPPM) {
		parts = append(parts, "drift "+fixed(st.DriftPPM, 1, true)+" ppm")
	}
	if len(st.Inputs) > 0 {
		parts = append(parts, fmt.Sprintf("%d dropout%s", st.Dropouts, plural(int(min(st.Dropouts, 2)))))
	}
	line := ""
	for _, p := range parts {
		switch {
		case line == "":
			line = p
		case ansi.StringWidth(line)+2+ansi.StringWidth(p) <= w:
			line += "  " + p
		default:
			lines = append(lines, line)
			line = p
		}
	}
	if line != "" {
		lines = append(lines, line)
	}

	probs := m.problems()
	if len(probs) == 0 && len(st.Inputs) > 0 {
		lines = append(lines, m.st.good.Render("✓ the inputs look right"))
	}
	for i, p := range probs {
		style := m.st.warn
		mark := "! "
		if p.Severe {
			style, mark = m.st.alarm, "✗ "
		}
		if i >= full {
			line := style.Render(mark + p.Text)
			if p.Fix != "" {
				line += " → " + p.Fix
			}
			lines = append(lines, line)
			continue
		}
		for _, l := range wrapWords(p.Text, w, mark, "  ") {
			lines = append(lines, style.Render(l))
		}
		if p.Fix != "" {
			lines = append(lines, wrapWords(p.Fix, w, "  → ", "    ")...)
		}
	}
	return lines
}

// inputsHeight is the height the Inputs pane wants at width w.
func (m *Model) inputsHeight(w int) int { return 1 + len(m.inputsContent(w-1, math.MaxInt)) }

// inputsLines returns the Inputs pane as h lines of w columns. When the
// problems do not fit in full, all but the first are worded on one line,
// and if that does not fit either, all of them.
func (m *Model) inputsLines(w, h int) []string {
	var lines []string
	for _, full := range []int{math.MaxInt, 1, 0} {
		lines = m.inputsContent(w-1, full)
		if len(lines) <= h-1 {
			break
		}
	}
	return m.fit("Inputs · RMS, peak dBFS", lines, w, h)
}

// levelLine draws one input: name, bar, RMS and peak, flag.
func (m *Model) levelLine(in InputStatus, w int) string {
	const nameW, numW, flagW = 10, 6, 5
	bw := max(w-nameW-2*(numW+1)-flagW-1, 4)
	name := padRight(in.Name, nameW-1) + " "
	bar := levelBar(in.RMSdBFS, in.PeakdBFS, bw)
	style, flag := m.st.good, ""
	switch {
	case in.Dead:
		style, flag = m.st.dim, "dead"
	case in.Clipping:
		style, flag = m.st.alarm, "CLIP"
	case in.PeakdBFS > -6:
		style = m.st.warn
	}
	num := func(v float64) string {
		s := fixed(v, 1, false)
		return strings.Repeat(" ", max(numW-ansi.StringWidth(s), 0)) + s
	}
	return name + style.Render(bar) + " " + num(in.RMSdBFS) + " " + num(in.PeakdBFS) + " " + style.Render(flag)
}

// levelBar draws the RMS level as a bar of eighth blocks over w columns
// from barFloor to barTop dBFS, with the peak as a thin mark.
func levelBar(rms, peak float64, w int) string {
	eighths := func(v float64) int {
		if math.IsNaN(v) || math.IsInf(v, -1) {
			return 0
		}
		x := (v - barFloor) / (barTop - barFloor) * float64(8*w)
		return int(math.Min(math.Max(math.Round(x), 0), float64(8*w)))
	}
	fill := eighths(rms)
	pk := -1
	if !math.IsNaN(peak) && !math.IsInf(peak, -1) {
		pk = min(eighths(peak)/8, w-1)
	}
	const parts = " ▏▎▍▌▋▊▉"
	var b strings.Builder
	for i := 0; i < w; i++ {
		n := fill - 8*i
		switch {
		case n >= 8:
			b.WriteString("█")
		case n > 0:
			b.WriteString(string([]rune(parts)[n]))
		case i == pk:
			b.WriteString("│")
		default:
			b.WriteString("·")
		}
	}
	return b.String()
}

// readoutContent returns the Cursor pane's title and lines.
func (m *Model) readoutContent(w int) (string, []string) {
	var lines []string
	if len(m.tunables) > 0 {
		t := m.tunables[min(m.part, len(m.tunables)-1)]
		s := t.Series
		if !s.Valid() {
			s = eseries.E12
		}
		lines = append(lines, m.st.key.Render("tune "+t.Name+" = "+siValue(t.Value, t.Unit))+
			m.st.dim.Render(" ("+s.String()+") "+m.keys.ValueDown.Help+" "+m.keys.ValueUp.Help+" step, "+m.keys.NextPart.Help+" next"))
	}
	p := m.primary()
	title := "Cursor"
	if p == nil {
		lines = append(lines, hz(m.cursor)+"  no trace yet")
		return title, lines
	}
	title += " · " + p.name
	r := p.at(m.cursor)
	lines = append(lines, m.st.seriesStyle(p.style).Render(hz(m.cursor))+"  "+readingLine(r))
	extra := "delay " + seconds(r.Delay)
	if m.mode == ModeAny && !math.IsNaN(r.Coherence) {
		extra += " · γ² " + fixed(r.Coherence, 3, false)
	}
	lines = append(lines, extra)
	if p != &m.pred && !m.pred.empty() {
		mr := m.pred.at(m.cursor)
		dev := "vs model " + fixed(r.Gain-mr.Gain, 2, true) + " dB " + fixed(wrapDiff(r.Phase, mr.Phase), 1, true) + "°"
		if m.fixture != "" {
			dev += " (" + m.fixture + ")"
		}
		lines = append(lines, m.st.prediction.Render(dev))
	}
	switch {
	case errors.Is(m.paramsErr, extract.ErrTooFewPoints):
		lines = append(lines, m.st.dim.Render("parameters need 3 points or more"))
	case m.paramsErr != nil:
		for _, l := range wrapWords("parameters: "+m.paramsErr.Error(), w, "", "  ") {
			lines = append(lines, m.st.dim.Render(l))
		}
	default:
		for _, pl := range m.params.Lines() {
			lines = append(lines, wrapWords(pl, w, "", "  ")...)
		}
	}
	return title, lines
}

// wrapDiff returns a − b wrapped to (−180, 180] degrees; NaN if either is.
func wrapDiff(a, b float64) float64 {
	d := math.Remainder(a-b, 360)
	if d <= -180 {
		d += 360
	}
	return d
}

// readoutLines returns the Cursor pane as h lines of w columns.
func (m *Model) readoutLines(w, h int) []string {
	title, lines := m.readoutContent(w - 1)
	return m.fit(title, lines, w, h)
}

// helpLines lists every key as h lines of w columns: groups kept whole in
// columns of helpColumn when they fit, else flowed down the columns.
func (m *Model) helpLines(w, h int) []string {
	var groups [][]string
	total := 0
	for gi, group := range m.keys.FullHelp() {
		g := []string{m.st.title.Render(helpGroupTitle(gi))}
		for _, b := range group {
			g = append(g, m.st.key.Render(padRight(b.Help, 10))+b.Desc)
		}
		groups = append(groups, g)
		total += len(g) + 1
	}
	rows := max(h-2, 1)
	cols := max(w/helpColumn, 1)
	colW := w / cols

	// Pack whole groups, a blank line between two in a column, into the
	// fewest rows that need no more than cols columns.
	var columns [][]string
	for target := (total + cols - 1) / cols; target <= rows && columns == nil; target++ {
		var cs [][]string
		var cur []string
		for _, g := range groups {
			need := len(g)
			if len(cur) > 0 {
				need++
			}
			if len(cur) > 0 && len(cur)+need > target {
				cs, cur = append(cs, cur), nil
			}
			if len(cur) > 0 {
				cur = append(cur, "")
			}
			cur = append(cur, g...)
		}
		cs = append(cs, cur)
		fits := len(cs) <= cols
		for _, c := range cs {
			fits = fits && len(c) <= target
		}
		if fits {
			columns = cs
		}
	}
	if columns == nil {
		// Flow all items down the columns, splitting groups.
		var items []string
		for i, g := range groups {
			if i > 0 {
				items = append(items, "")
			}
			items = append(items, g...)
		}
		for i := 0; i < len(items); i += rows {
			columns = append(columns, items[i:min(i+rows, len(items))])
		}
	}

	out := []string{padRight(m.st.title.Render(" Keys")+m.st.dim.Render(" · any key closes this list"), w), strings.Repeat(" ", w)}
	for r := 0; r < rows; r++ {
		var b strings.Builder
		for c := 0; c < cols; c++ {
			cell := ""
			if c < len(columns) && r < len(columns[c]) {
				cell = " " + columns[c][r]
			}
			b.WriteString(padRight(cell, colW))
		}
		out = append(out, padRight(b.String(), w))
	}
	if len(columns) > cols {
		out[len(out)-1] = padRight(m.st.dim.Render(" … enlarge the terminal to see every key"), w)
	}
	return out[:h]
}

// bigGlyphs is a three-row font for the single-tone readout.
func bigGlyph(r rune) [3]string {
	switch r {
	case '0':
		return [3]string{"█▀█", "█ █", "▀▀▀"}
	case '1':
		return [3]string{"▀█ ", " █ ", "▀▀▀"}
	case '2':
		return [3]string{"▀▀█", "█▀▀", "▀▀▀"}
	case '3':
		return [3]string{"▀▀█", " ▀█", "▀▀▀"}
	case '4':
		return [3]string{"█ █", "▀▀█", "  ▀"}
	case '5':
		return [3]string{"█▀▀", "▀▀█", "▀▀▀"}
	case '6':
		return [3]string{"█▀▀", "█▀█", "▀▀▀"}
	case '7':
		return [3]string{"▀▀█", "  █", "  ▀"}
	case '8':
		return [3]string{"█▀█", "█▀█", "▀▀▀"}
	case '9':
		return [3]string{"█▀█", "▀▀█", "▀▀▀"}
	case '.':
		return [3]string{" ", " ", "▀"}
	case '−', '-':
		return [3]string{"   ", "▀▀▀", "   "}
	case '+':
		return [3]string{" ▄ ", "▀█▀", "   "}
	}
	return [3]string{" ", " ", " "}
}

// bigText renders s in the three-row font, glyphs one column apart.
func bigText(s string) [3]string {
	var out [3]string
	first := true
	for _, r := range s {
		g := bigGlyph(r)
		for i := range out {
			if !first {
				out[i] += " "
			}
			out[i] += g[i]
		}
		first = false
	}
	return out
}

// toneLines renders the single-tone readout: large gain and phase, then
// history strips, as h lines of w columns.
func (m *Model) toneLines(w, h int) []string {
	var lines []string
	lines = append(lines, m.paneTitle("Single tone at "+hz(m.cursor), w))
	if len(m.tone) == 0 {
		lines = append(lines, "", m.st.dim.Render(" waiting for the first reading; "+m.keys.Left.Help+" "+m.keys.Right.Help+
			" move the tone, "+m.keys.FastLeft.Help+" "+m.keys.FastRight.Help+" by a third octave"))
		return m.fitPlain(lines, w, h)
	}
	last := m.tone[len(m.tone)-1]
	g, ph := last.GainDB(), last.PhaseDeg()
	bg := bigText(fixed(g, 2, false))
	bp := bigText(fixed(ph, 1, false))
	gw := ansi.StringWidth(bg[0])
	for i := 0; i < 3; i++ {
		unitG, unitP := "   ", "  "
		if i == 2 {
			unitG, unitP = " dB", " °"
		}
		row := " " + m.st.live.Render(bg[i]) + unitG + strings.Repeat(" ", max(24-gw, 2)) + m.st.live.Render(bp[i]) + unitP
		lines = append(lines, row)
	}
	info := []string{"±" + fixed(last.GainU, 3, false) + " dB", "±" + fixed(last.PhaseU, 2, false) + "°"}
	if !math.IsNaN(last.SNR) {
		info = append(info, "SNR "+fixed(last.SNR, 0, false)+" dB")
	}
	if !math.IsNaN(last.THD) {
		info = append(info, "THD "+fixed(last.THD, 3, false)+" %")
	}
	info = append(info, fmt.Sprintf("%d readings", len(m.tone)))
	if f := last.Freq; math.Abs(f-m.cursor) > 1e-3*m.cursor {
		// The measurement moved the tone (clear of a mains hum line).
		info = append(info, "measured at "+hz(f))
	}
	lines = append(lines, " "+strings.Join(info, " · "))

	room := h - len(lines)
	stripH := min(max((room-2)/2, 1), 8)
	if room >= 4 {
		gains := make([]float64, len(m.tone))
		phases := make([]float64, len(m.tone))
		for i, p := range m.tone {
			gains[i], phases[i] = p.GainDB(), p.PhaseDeg()
		}
		lines = append(lines, m.st.dim.Render(" gain history, dB (newest right)"))
		lines = append(lines, m.strip(gains, w, stripH, 1, 2)...)
		lines = append(lines, m.st.dim.Render(" phase history, degrees"))
		lines = append(lines, m.strip(phases, w, stripH, 5, 1)...)
	}
	return m.fitPlain(lines, w, h)
}

// fitPlain pads or cuts lines to exactly h lines of w columns.
func (m *Model) fitPlain(lines []string, w, h int) []string {
	out := make([]string, h)
	for i := range out {
		if i < len(lines) {
			out[i] = padRight(lines[i], w)
		} else {
			out[i] = strings.Repeat(" ", w)
		}
	}
	return out
}

// strip draws the newest values as a braille line of h rows over w
// columns, two readings per column, with the range in a left gutter:
// minSpan is the smallest range shown, prec the decimals of the labels.
func (m *Model) strip(vals []float64, w, h int, minSpan float64, prec int) []string {
	const gutter = 9
	cols := w - gutter
	n := min(len(vals), 2*cols)
	vals = vals[len(vals)-n:]
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range vals {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if lo > hi {
		lo, hi = 0, 1
	}
	if hi-lo < minSpan {
		mid := (hi + lo) / 2
		lo, hi = mid-minSpan/2, mid+minSpan/2
	}
	dots := brailleLine(vals, cols, h, lo, hi)
	out := make([]string, h)
	for row := 0; row < h; row++ {
		label := ""
		switch row {
		case 0:
			label = fixed(hi, prec, false)
		case h - 1:
			label = fixed(lo, prec, false)
		}
		gut := strings.Repeat(" ", max(gutter-1-ansi.StringWidth(label), 0)) + label + "┤"
		out[row] = m.st.label.Render(gut) + m.st.live.Render(dots[row])
	}
	return out
}

// brailleLine draws vals as a line of braille dots over cols columns (two
// values per column) and h rows (four dots per row), lo at the bottom
// dot row and hi at the top, joining neighbours with vertical runs. NaN
// leaves a gap.
func brailleLine(vals []float64, cols, h int, lo, hi float64) []string {
	// Dot bits of a braille cell by column and dot row (Unicode Braille
	// Patterns block).
	bits := [2][4]rune{{0x01, 0x02, 0x04, 0x40}, {0x08, 0x10, 0x20, 0x80}}
	cells := make([]rune, cols*h)
	dotRows := 4 * h
	y := func(v float64) int {
		// Quantise first, so rounding noise far below a dot does not
		// make a steady reading flicker between two dot rows.
		v = math.Round(v*1e9) / 1e9
		r := int(math.Round((hi - v) / (hi - lo) * float64(dotRows-1)))
		return min(max(r, 0), dotRows-1)
	}
	prev := -1
	for x, v := range vals {
		if x >= 2*cols {
			break
		}
		if math.IsNaN(v) {
			prev = -1
			continue
		}
		cur := y(v)
		a, b := cur, cur
		if prev >= 0 {
			// Join to the previous reading: fill the dots between.
			if prev < cur {
				a = prev + 1
			} else if prev > cur {
				b = prev - 1
			}
		}
		for d := a; d <= b; d++ {
			cells[(d/4)*cols+x/2] |= bits[x%2][d%4]
		}
		prev = cur
	}
	out := make([]string, h)
	for r := 0; r < h; r++ {
		row := make([]rune, cols)
		for c := range row {
			if cells[r*cols+c] == 0 {
				row[c] = ' '
			} else {
				row[c] = 0x2800 + cells[r*cols+c]
			}
		}
		out[r] = string(row)
	}
	return out
}
