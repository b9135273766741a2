package tui

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	tea "github.com/charmbracelet/bubbletea"

	"tonetrace/config/atomicfile"
	"tonetrace/dsp/trace"
	"tonetrace/tui/picture"
	"tonetrace/tui/plot"
)

// Size of the text picture, in columns and rows.
const (
	pictureCols = 100
	pictureRows = 32
)

// savedMsg reports a finished save.
type savedMsg struct {
	what  string
	paths []string
	err   error
}

func (m *Model) handleSaved(msg savedMsg) {
	if msg.err != nil {
		m.log.Error("save", "what", msg.what, "err", msg.err)
		m.setNote("could not save the "+msg.what+": "+msg.err.Error(), noteAlarm)
		return
	}
	m.log.Info("saved", "what", msg.what, "paths", msg.paths)
	m.setNote("saved the "+msg.what+" to "+strings.Join(msg.paths, ", "), noteInfo)
}

// baseName returns a new file name without extension in the save
// directory: tonetrace-YYYYMMDD-HHMMSS, with -2, -3… for a name already
// used in this session or present on disk.
func (m *Model) baseName(exts ...string) string {
	stamp := "tonetrace-" + m.opt.Clock().Format("20060102-150405")
	for n := 1; ; n++ {
		name := stamp
		if n > 1 {
			name += "-" + strconv.Itoa(n)
		}
		base := filepath.Join(m.opt.SaveDir, name)
		free := true
		for _, ext := range exts {
			if _, err := os.Stat(base + ext); !errors.Is(err, fs.ErrNotExist) {
				free = false
			}
		}
		if free && !slices.Contains(m.usedNames, base) {
			m.usedNames = append(m.usedNames, base)
			return base
		}
	}
}

// snapshot returns a copy of the live trace with metadata.
func (m *Model) snapshot() *trace.Trace {
	t := &trace.Trace{Points: slices.Clone(m.liveS.points)}
	t.SetMeta("tool", "tonetrace")
	t.SetMeta("mode", m.mode.String())
	if m.info.Device != "" {
		t.SetMeta("device", m.info.Device)
	}
	if m.info.Rate > 0 {
		t.SetMeta("rate_hz", strconv.Itoa(m.info.Rate))
	}
	t.SetMeta("level_dbfs", strconv.FormatFloat(m.level, 'f', 1, 64))
	t.SetMeta("saved", m.opt.Clock().Format("2006-01-02T15:04:05Z07:00"))
	return t
}

// saveTrace writes the live trace as CSV in a command.
func (m *Model) saveTrace() tea.Cmd {
	if m.liveS.empty() {
		m.setNote("nothing to save yet: the live trace is empty", noteWarn)
		return nil
	}
	t := m.snapshot()
	path := m.baseName(".csv") + ".csv"
	return func() tea.Msg {
		return savedMsg{what: "trace", paths: []string{path}, err: trace.SaveFile(path, t)}
	}
}

// savePicture writes the plot as plain text, SVG and PNG in a command.
// The text picture is drawn here and the traces copied, so the command
// shares nothing with the model.
func (m *Model) savePicture() tea.Cmd {
	panels := m.buildPanels()
	if countSeries(panels) == 0 {
		m.setNote("nothing to draw yet: no trace", noteWarn)
		return nil
	}
	var c plot.Canvas
	opt := plot.Options{From: m.from, To: m.to, MarkClip: true}
	g := c.Render(pictureCols, pictureRows, opt, panels...)
	title := "tonetrace · " + m.mode.String() + " · " + m.opt.Clock().Format("2006-01-02 15:04:05")
	text := title + "\n" + g.String() + "\n" + m.legendText() + "\n"

	var series []picture.Series
	for _, s := range m.visibleSeries() {
		series = append(series, picture.Series{
			Name:   s.name,
			Trace:  &trace.Trace{Points: slices.Clone(s.points)},
			Dashed: s != &m.liveS && s != &m.diff,
		})
	}
	popt := picture.Options{Title: title, From: m.from, To: m.to, Unwrap: !m.wrapped}
	if m.fixedScale {
		popt.GainMin, popt.GainMax = m.opt.GainMin, m.opt.GainMax
		popt.PhaseMin, popt.PhaseMax = m.opt.PhaseMin, m.opt.PhaseMax
	}
	base := m.baseName(".txt", ".svg", ".png")
	return func() tea.Msg {
		paths := []string{base + ".txt", base + ".svg", base + ".png"}
		err := writeText(paths[0], text)
		for _, p := range paths[1:] {
			if err == nil {
				err = picture.WriteFile(p, popt, series...)
			}
		}
		return savedMsg{what: "picture", paths: paths, err: err}
	}
}

func countSeries(panels []plot.Panel) int {
	n := 0
	for _, p := range panels {
		n += len(p.Series)
	}
	return n
}

// legendText names the traces drawn, for the text picture.
func (m *Model) legendText() string {
	var names []string
	for _, s := range m.visibleSeries() {
		names = append(names, s.name)
	}
	return "traces: " + strings.Join(names, ", ")
}

// visibleSeries lists the series drawn, in drawing order.
func (m *Model) visibleSeries() []*series {
	var out []*series
	if m.showRefs {
		for _, r := range m.refs {
			if !r.empty() {
				out = append(out, r)
			}
		}
	}
	if m.showPred && !m.pred.empty() {
		out = append(out, &m.pred)
	}
	if m.showDiff && m.newestRef() != nil && !m.diff.empty() {
		out = append(out, &m.diff)
	}
	if !m.liveS.empty() {
		out = append(out, &m.liveS)
	}
	return out
}

func writeText(path, text string) error {
	err := atomicfile.Write(path, func(w io.Writer) error {
		_, err := io.WriteString(w, text)
		return err
	})
	if err != nil {
		return fmt.Errorf("%w (check that the directory exists and is writable)", err)
	}
	return nil
}
