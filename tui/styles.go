package tui

import (
	"io"
	"os"
	"strings"

	"github.com/charmbracelet/lipgloss"
	"github.com/muesli/termenv"

	"tonetrace/tui/plot"
)

// Colour indices of the plot's series (plot.Series.Style).
const (
	styleLive = 1 + iota
	stylePrediction
	styleDifference
	styleCoherence
	styleRef // styleRef+i for reference i, up to MaxReferences
)

// Palette entries: ANSI colour numbers 0–15 only, so that the screen
// looks the same in a 16-colour terminal as in a true-colour one.
const (
	colLive       = "14" // bright cyan
	colPrediction = "10" // bright green
	colDifference = "11" // bright yellow
	colCoherence  = "12" // bright blue
	colGrid       = "8"  // grey
	colAlarm      = "9"  // bright red
	colWarn       = "11" // bright yellow
	colGood       = "10" // bright green
	colDim        = "8"  // grey
)

// refColour returns the colour of reference i.
func refColour(i int) string {
	switch i % MaxReferences {
	case 0:
		return "13" // bright magenta
	case 1:
		return "5" // magenta
	case 2:
		return "15" // bright white
	}
	return "7" // white
}

// styles holds everything that depends on the colour profile. It is built
// by newStyles only, and rebuilt when the profile changes.
type styles struct {
	profile termenv.Profile

	// Pane text.
	title, label, value, dim, warn, alarm, good, key, header, headerMode lipgloss.Style
	live, prediction, difference                                         lipgloss.Style
	refs                                                                 [MaxReferences]lipgloss.Style

	// Plot cells: SGR sequences ("" without colour) by what a cell shows.
	sgrGrid, sgrLabel, sgrTitle string
	sgrSeries                   [styleRef + MaxReferences]string
	sgrCursor                   string // added to cells of the cursor column
	sgrReset                    string
}

// newStyles builds the styles for a colour profile. termenv.Ascii gives
// plain text without any escape sequence (NO_COLOR).
func newStyles(p termenv.Profile) *styles {
	r := lipgloss.NewRenderer(io.Discard)
	r.SetColorProfile(p)
	r.SetHasDarkBackground(true)
	fg := func(c string) lipgloss.Style { return r.NewStyle().Foreground(lipgloss.Color(c)) }
	s := &styles{
		profile:    p,
		title:      r.NewStyle().Bold(true),
		label:      fg(colDim),
		value:      r.NewStyle(),
		dim:        fg(colDim),
		warn:       fg(colWarn),
		alarm:      fg(colAlarm).Bold(true),
		good:       fg(colGood),
		key:        r.NewStyle().Bold(true),
		header:     r.NewStyle().Reverse(true),
		headerMode: r.NewStyle().Reverse(true).Bold(true),
		live:       fg(colLive),
		prediction: fg(colPrediction),
		difference: fg(colDifference),
	}
	for i := range s.refs {
		s.refs[i] = fg(refColour(i))
	}

	if p == termenv.Ascii {
		return s
	}
	seq := func(col string, extra ...string) string {
		var parts []string
		if col != "" {
			parts = append(parts, p.Color(col).Sequence(false))
		}
		parts = append(parts, extra...)
		if len(parts) == 0 || parts[0] == "" {
			return ""
		}
		return termenv.CSI + strings.Join(parts, ";") + "m"
	}
	s.sgrGrid = seq(colGrid)
	s.sgrTitle = termenv.CSI + termenv.BoldSeq + "m"
	s.sgrLabel = seq(colDim)
	s.sgrSeries[styleLive] = seq(colLive)
	s.sgrSeries[stylePrediction] = seq(colPrediction)
	s.sgrSeries[styleDifference] = seq(colDifference)
	s.sgrSeries[styleCoherence] = seq(colCoherence)
	for i := 0; i < MaxReferences; i++ {
		s.sgrSeries[styleRef+i] = seq(refColour(i))
	}
	s.sgrCursor = termenv.CSI + termenv.ReverseSeq + "m"
	s.sgrReset = termenv.CSI + termenv.ResetSeq + "m"
	return s
}

// seriesStyle returns the pane style of a plot series index.
func (s *styles) seriesStyle(style int) lipgloss.Style {
	switch {
	case style == styleLive:
		return s.live
	case style == stylePrediction:
		return s.prediction
	case style == styleDifference:
		return s.difference
	case style >= styleRef && style < styleRef+MaxReferences:
		return s.refs[style-styleRef]
	}
	return s.value
}

// cellSGR returns the escape sequence that starts a plot cell, "" for
// plain text.
func (s *styles) cellSGR(c plot.Cell) string {
	var base string
	switch c.Kind {
	case plot.KindTrace, plot.KindLegend:
		if c.Style > 0 && c.Style < len(s.sgrSeries) {
			base = s.sgrSeries[c.Style]
		}
	case plot.KindGrid:
		base = s.sgrGrid
	case plot.KindLabel:
		base = s.sgrLabel
	case plot.KindTitle:
		base = s.sgrTitle
	}
	return base
}

// ProfileFor returns the colour profile to draw with on out: termenv.Ascii
// (no colour at all) when noColor is set or the environment variable
// NO_COLOR is present and not empty (https://no-color.org), otherwise what
// the terminal on out supports (16, 256 or true colour). out need not be
// a terminal; then the profile is Ascii.
func ProfileFor(out io.Writer, noColor bool) termenv.Profile {
	if noColor || os.Getenv("NO_COLOR") != "" {
		return termenv.Ascii
	}
	return termenv.NewOutput(out).EnvColorProfile()
}
