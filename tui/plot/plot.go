// Package plot draws frequency-response (Bode) plots as text: traces on a
// braille-dot canvas over a logarithmic frequency axis, with linear value
// axes in dB or degrees.
//
// Each terminal cell holds 2×4 dots of a Unicode braille pattern
// (U+2800–U+28FF), so a 80×24 screen gives a 160×96 dot canvas. The dot
// bits are those of the Unicode Braille Patterns block:
//
//	col 0   col 1
//	 1 0x01  4 0x08   row 0
//	 2 0x02  5 0x10   row 1
//	 3 0x04  6 0x20   row 2
//	 7 0x40  8 0x80   row 3
//
// A 40×6 gain panel of a first-order low-pass over 20 Hz–20 kHz, with a
// fixed range of −30…0 dB, renders like this (without colour):
//
//	 dB Gain                              RC
//	  0┤⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠓⠒⠒⠢⠤⢄⣀┈┈┈┈┈┈┈┈┼┈┈┈
//	   │        ┊           ┊   ⠉⠑⠒⠤⣀⡀  ┊
//	-20┤┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈⠈⠑⠒⠤⣀┈┈
//	   │        ┊           ┊           ┊ ⠉⠑
//	 Hz     50 100     500  1k      5k 10k
//
// The renderer is pure: [Canvas.Render] turns panels of series (frequency,
// value pairs) and a size into a [Grid] of cells. Each cell carries its
// rune and what it shows ([Kind], and the caller's style index for
// traces), so a screen can colour cells without the renderer knowing about
// terminals; [Grid.String] gives plain text. The x mapping ([XMap]) and
// each panel's y mapping ([PanelLayout]) come back with the grid so a
// cursor or a mouse column can be turned into a frequency and back.
//
// A Canvas keeps its buffers: rendering again at the same size allocates
// nothing.
package plot

import (
	"math"
	"unicode/utf8"
)

// Size limits of a render. Larger sizes are clamped to these.
const (
	MaxWidth  = 1000 // columns
	MaxHeight = 1000 // rows
)

// Default frequency range used when Options.From and Options.To are both
// zero.
const (
	DefaultFrom = 20.0    // Hz
	DefaultTo   = 20000.0 // Hz
)

// Series is one trace of a panel: values over frequency, drawn as a
// continuous line through its points in slice order.
type Series struct {
	// Name is shown in the panel header (the legend) when not empty.
	Name string
	// Freq holds the frequencies in hertz. A point whose frequency is
	// not a positive finite number breaks the line like a NaN value.
	Freq []float64
	// Value holds the values in the panel's unit (dB, degrees…), one per
	// frequency. NaN breaks the line (a gap); ±Inf and values outside the
	// panel's range are drawn clipped to the panel's top or bottom edge.
	Value []float64
	// Style is the caller's colour index, copied into every cell this
	// series draws (see [Cell]).
	Style int
}

// Axis is the value (y) axis of a panel.
type Axis struct {
	// Auto chooses the range from the data: the finite values whose
	// frequencies lie in the plotted range, widened by 5 % of their span
	// on each side and to at least MinSpan. When false, Min and Max are
	// used; an unusable fixed range (not finite, Min ≥ Max, or beyond
	// ±1e15) falls back to Auto.
	Auto bool
	// Min and Max are the fixed range in the axis unit.
	Min, Max float64
	// MinSpan is the smallest automatic span in the axis unit, so a flat
	// trace does not fill the panel with noise. Default 1 when ≤ 0.
	MinSpan float64
	// Step is the tick spacing in the axis unit. 0 chooses a 1-2-5 step
	// for the panel height (see [NiceStep]); a step that would put more
	// than one tick in a dot row is replaced by the automatic one.
	Step float64
	// Unit is shown above the tick labels, e.g. "dB" or "deg".
	Unit string
}

// Panel is one plot area with its own value axis. Panels passed together
// to [Canvas.Render] are stacked top to bottom and share the frequency
// axis, whose labels run along the bottom row.
type Panel struct {
	// Title is shown at the left of the panel's header row.
	Title string
	// Y is the value axis.
	Y Axis
	// Series are drawn in order; where two share a cell the later one
	// owns it (its Style wins).
	Series []Series
	// Rows, when positive, is the panel's height in rows, header
	// included; panels with Rows 0 share the remaining rows evenly. When
	// no panel has Rows 0, or the heights asked for leave fewer rows than
	// there are such panels, every panel shares evenly as if none had
	// asked. Default 0.
	Rows int
}

// Options holds what panels share.
type Options struct {
	// From and To are the frequency range in hertz, From < To, both
	// positive and finite. Both zero means DefaultFrom–DefaultTo. They
	// are swapped when reversed; From == To widens to the decade around
	// it; any other unusable pair gives the default range.
	From, To float64
	// Cursor is a frequency in hertz whose column is highlighted in
	// every panel. 0, NaN or a frequency outside From–To: no cursor.
	Cursor float64
	// ASCII draws with ASCII characters only: traces become ' - . | / \
	// by the position of their dots, the grid uses : . +.
	ASCII bool
	// MarkClip replaces the dots of cells where a trace was clipped to a
	// panel edge with ▲ or ▼ (^ or v in ASCII). Cells are flagged
	// Clipped either way.
	MarkClip bool
	// Gutter is the width in columns of the left margin holding tick
	// labels and the axis line. 0 sizes it to the labels (at most a
	// third of the width). Labels that do not fit are left out.
	Gutter int
}

// Kind says what a cell shows, so a caller can colour it.
type Kind uint8

// Cell kinds.
const (
	KindBlank  Kind = iota // empty space
	KindTrace              // braille dots of a series; Style names which
	KindGrid               // faint grid: decade columns and tick rows
	KindAxis               // the y axis line with its tick marks
	KindLabel              // tick labels, the unit and "Hz"
	KindTitle              // a panel title
	KindLegend             // a series name in a panel header; Style names which
	KindCursor             // the cursor column where no trace is drawn
)

// String returns the kind's name.
func (k Kind) String() string {
	switch k {
	case KindBlank:
		return "blank"
	case KindTrace:
		return "trace"
	case KindGrid:
		return "grid"
	case KindAxis:
		return "axis"
	case KindLabel:
		return "label"
	case KindTitle:
		return "title"
	case KindLegend:
		return "legend"
	case KindCursor:
		return "cursor"
	}
	return "kind?"
}

// Cell is one terminal cell of a rendered plot.
type Cell struct {
	// Rune is the character, always one column wide for the ASCII and
	// braille output (titles and names are copied as given).
	Rune rune
	// Kind says what the cell shows.
	Kind Kind
	// Style is the Series.Style of the last series drawn in the cell,
	// for KindTrace and KindLegend; 0 otherwise.
	Style int
	// Cursor is set for every plot cell of the cursor column, including
	// those holding trace dots.
	Cursor bool
	// Clipped is set when a trace in this cell was clipped to the
	// panel's top or bottom edge.
	Clipped bool
}

// Grid is a rendered plot: H rows of W cells, with the mappings used to
// draw it.
type Grid struct {
	// W and H are the size in columns and rows.
	W, H int
	// Cells holds the cells row by row; len(Cells) == W·H.
	Cells []Cell
	// X maps frequencies to columns and back.
	X XMap
	// Panels gives each drawn panel's rows and value range, top to
	// bottom. Panels that got no rows are left out.
	Panels []PanelLayout
}

// At returns the cell at column col and row row, or a zero Cell outside
// the grid.
func (g *Grid) At(col, row int) Cell {
	if col < 0 || row < 0 || col >= g.W || row >= g.H {
		return Cell{}
	}
	return g.Cells[row*g.W+col]
}

// Row returns the cells of row row (shared with the grid), or nil outside
// the grid.
func (g *Grid) Row(row int) []Cell {
	if row < 0 || row >= g.H {
		return nil
	}
	return g.Cells[row*g.W : (row+1)*g.W]
}

// AppendRow appends the plain text of row row to dst and returns it.
func (g *Grid) AppendRow(dst []byte, row int) []byte {
	for _, c := range g.Row(row) {
		dst = utf8.AppendRune(dst, c.Rune)
	}
	return dst
}

// AppendText appends the plain text of the grid to dst, rows separated by
// '\n' with none after the last, and returns it.
func (g *Grid) AppendText(dst []byte) []byte {
	for r := 0; r < g.H; r++ {
		if r > 0 {
			dst = append(dst, '\n')
		}
		dst = g.AppendRow(dst, r)
	}
	return dst
}

// String returns the plain text of the grid: H rows of exactly W runes,
// separated by '\n' with none after the last.
func (g *Grid) String() string {
	return string(g.AppendText(make([]byte, 0, g.W*g.H*3+g.H)))
}

// XMap maps frequencies to columns of a rendered grid on a logarithmic
// scale. In dot space (two dots per column) a frequency f lands on
//
//	x = (log10 f − log10 From)/(log10 To − log10 From) · (2·Width − 1)
//
// rounded to the nearest dot, so From is the first dot of column Left
// and To the last dot of column Left+Width−1.
type XMap struct {
	// From and To are the plotted range in hertz, after normalisation.
	From, To float64
	// Left is the first plot column; Width the number of plot columns.
	Left, Width int
}

// DotX returns the fractional dot column of frequency f, 0 at From and
// 2·Width−1 at To; NaN when f is not a positive finite number or the map
// is empty.
func (m XMap) DotX(f float64) float64 {
	if !(f > 0) || math.IsInf(f, 1) || m.Width <= 0 {
		return math.NaN()
	}
	lf := math.Log10(m.From)
	return (math.Log10(f) - lf) / (math.Log10(m.To) - lf) * float64(2*m.Width-1)
}

// DotFreq returns the frequency in hertz at fractional dot column x, the
// inverse of DotX.
func (m XMap) DotFreq(x float64) float64 {
	if m.Width <= 0 {
		return math.NaN()
	}
	lf := math.Log10(m.From)
	return math.Pow(10, lf+x/float64(2*m.Width-1)*(math.Log10(m.To)-lf))
}

// Col returns the grid column of frequency f and whether f lies within
// the plotted range From–To. Outside it the column is clamped to the first or
// last plot column; for an invalid f it is Left and false.
func (m XMap) Col(f float64) (int, bool) {
	x := m.DotX(f)
	if math.IsNaN(x) {
		return m.Left, false
	}
	last := float64(2*m.Width - 1)
	switch {
	case x < -edgeTol:
		return m.Left, false
	case x > last+edgeTol:
		return m.Left + m.Width - 1, false
	}
	d := min(max(math.Round(x), 0), last)
	return m.Left + int(d)/2, true
}

// edgeTol is how far, in dots, a position may fall outside the plot
// through rounding and still count as inside.
const edgeTol = 1e-9

// Freq returns the frequency in hertz at the centre of grid column col
// (the point between its two dots); Col(Freq(col)) == col. Columns left
// or right of the plot area are clamped to its first or last column.
func (m XMap) Freq(col int) float64 {
	if m.Width <= 0 {
		return math.NaN()
	}
	col = min(max(col, m.Left), m.Left+m.Width-1)
	return m.DotFreq(float64(2*(col-m.Left)) + 0.5)
}

// PanelLayout is where a panel was drawn and its value range. Rows are
// grid rows; the plot area has PlotRows·4 dot rows, dot row 0 at Max and
// dot row PlotRows·4−1 at Min.
type PanelLayout struct {
	// Top and Rows give the panel's rows, header included.
	Top, Rows int
	// PlotTop and PlotRows give the rows of the plot area.
	PlotTop, PlotRows int
	// Min and Max are the value range, Step the tick spacing, in the
	// axis unit.
	Min, Max, Step float64
}

// DotY returns the fractional dot row of value v within the plot area:
// 0 at Max, PlotRows·4−1 at Min.
func (p PanelLayout) DotY(v float64) float64 {
	return (p.Max - v) / (p.Max - p.Min) * float64(4*p.PlotRows-1)
}

// Row returns the grid row of value v and whether v lies within Min–Max.
// Outside it the row is clamped to the first or last plot row.
func (p PanelLayout) Row(v float64) (int, bool) {
	if p.PlotRows <= 0 || math.IsNaN(v) {
		return p.PlotTop, false
	}
	y := p.DotY(v)
	last := float64(4*p.PlotRows - 1)
	switch {
	case y < -edgeTol:
		return p.PlotTop, false
	case y > last+edgeTol:
		return p.PlotTop + p.PlotRows - 1, false
	}
	y = min(max(math.Round(y), 0), last)
	return p.PlotTop + int(y)/4, true
}

// Value returns the value at the centre of grid row row of the plot area;
// Row(Value(row)) == row. Rows outside the plot area are clamped to it.
func (p PanelLayout) Value(row int) float64 {
	if p.PlotRows <= 0 {
		return math.NaN()
	}
	row = min(max(row, p.PlotTop), p.PlotTop+p.PlotRows-1)
	y := float64(4*(row-p.PlotTop)) + 1.5
	return p.Max - y/float64(4*p.PlotRows-1)*(p.Max-p.Min)
}
