package plot

import (
	"fmt"
	"math"
	"unicode/utf8"
)

// Clip flags of a cell.
const (
	clipTop    uint8 = 1 << iota // a trace ran above the panel's range
	clipBottom                   // a trace ran below the panel's range
)

// glyphs are the characters of the frame and grid.
type glyphs struct {
	vline, hline, cross, cursor, axis, tick, up, down rune
	hlineEvery                                        int // draw hline in every n-th column
}

var (
	unicodeGlyphs = glyphs{'┊', '┈', '┼', '┃', '│', '┤', '▲', '▼', 1}
	asciiGlyphs   = glyphs{':', '.', '+', '|', '|', '+', '^', 'v', 2}
)

// Canvas renders plots into a [Grid] it owns, reusing its buffers from
// one render to the next. The zero value is ready to use. A Canvas is
// not safe for concurrent use.
type Canvas struct {
	grid  Grid
	dots  []uint8 // braille bits per cell
	clip  []uint8 // clip flags per cell
	vline []bool  // per plot column: a decade grid line
	hrow  []bool  // per grid row: a tick grid row
	xl    []xLabel
	xbuf  []byte // text of the frequency labels
	buf   []byte // scratch for one label
	bode  [2][]Series

	// Drawing state of the current panel.
	left, top, dotW, dotH, style int
	lf, xden, xmul               float64 // x mapping: (log10 f − lf)/xden·xmul
}

// Render draws panels stacked top to bottom into a grid of w columns and
// h rows and returns it. The grid belongs to the canvas and is valid
// until the next render. Sizes are clamped to 0–MaxWidth and
// 0–MaxHeight; at least 3 rows give a row of frequency labels at the
// bottom, panels of at least 4 rows get a header row (title, unit,
// series names). Rows are shared out evenly, the first panels getting
// any extra, except that panels with a Rows of their own get that many
// (see [Panel]); panels beyond the number of rows are left out.
//
// Render panics when a series has a different number of frequencies and
// values; every other input, however odd (NaN, ±Inf, a reversed range,
// no data), draws something sensible.
func (c *Canvas) Render(w, h int, opt Options, panels ...Panel) *Grid {
	w = min(max(w, 0), MaxWidth)
	h = min(max(h, 0), MaxHeight)
	for i := range panels {
		for j := range panels[i].Series {
			s := &panels[i].Series[j]
			if len(s.Freq) != len(s.Value) {
				panic(fmt.Sprintf("plot: series %q of panel %d has %d frequencies and %d values; give one value per frequency",
					s.Name, i, len(s.Freq), len(s.Value)))
			}
		}
	}
	c.reset(w, h)
	g := &c.grid
	from, to := normRange(opt.From, opt.To)
	g.X = XMap{From: from, To: to, Width: w}
	if w == 0 || h == 0 || len(panels) == 0 {
		return g
	}

	avail, labelRow := h, -1
	if h >= 3 {
		avail, labelRow = h-1, h-1
	}
	n := min(len(panels), avail)
	// Panels that ask for a height (Panel.Rows) get it when the others
	// keep at least a row each; the others share the rest evenly.
	asked, flex := 0, 0
	for i := 0; i < n; i++ {
		if panels[i].Rows > 0 {
			asked += panels[i].Rows
		} else {
			flex++
		}
	}
	rest := avail - asked
	useAsked := asked > 0 && flex > 0 && rest >= flex
	top, fi := 0, 0
	for i := 0; i < n; i++ {
		var rows int
		switch {
		case !useAsked:
			rows = avail / n
			if i < avail%n {
				rows++
			}
		case panels[i].Rows > 0:
			rows = panels[i].Rows
		default:
			rows = rest / flex
			if fi < rest%flex {
				rows++
			}
			fi++
		}
		hdr := 0
		if rows >= 4 && hasHeader(&panels[i]) {
			hdr = 1
		}
		lay := PanelLayout{Top: top, Rows: rows, PlotTop: top + hdr, PlotRows: rows - hdr}
		lay.Min, lay.Max, lay.Step = yRange(panels[i].Y, panels[i].Series, from, to, lay.PlotRows)
		g.Panels = append(g.Panels, lay)
		top += rows
	}

	gut := c.gutter(w, opt.Gutter, panels, labelRow >= 0)
	xm := XMap{From: from, To: to, Left: gut, Width: w - gut}
	g.X = xm
	c.markDecades(xm)

	cursor := -1
	if col, ok := xm.Col(opt.Cursor); ok {
		cursor = col
	}
	gl := &unicodeGlyphs
	if opt.ASCII {
		gl = &asciiGlyphs
	}
	for i := range g.Panels {
		lay := &g.Panels[i]
		c.drawSeries(&panels[i], lay, xm)
		c.compose(lay, xm, cursor, gl, opt)
		c.drawGutter(lay, gut, gl)
		c.drawHeader(&panels[i], lay, xm, gut, opt.ASCII)
	}
	if labelRow >= 0 {
		c.drawXLabels(labelRow, xm, gut)
	}
	return g
}

// Render draws panels into a new grid; see [Canvas.Render].
func Render(w, h int, opt Options, panels ...Panel) Grid {
	var c Canvas
	return *c.Render(w, h, opt, panels...)
}

// reset sizes and clears the buffers for a w×h grid.
func (c *Canvas) reset(w, h int) {
	n := w * h
	g := &c.grid
	g.W, g.H = w, h
	g.Cells = resizeSlice(g.Cells, n)
	blank := Cell{Rune: ' '}
	for i := range g.Cells {
		g.Cells[i] = blank
	}
	g.Panels = g.Panels[:0]
	c.dots = resizeSlice(c.dots, n)
	clear(c.dots)
	c.clip = resizeSlice(c.clip, n)
	clear(c.clip)
	c.vline = resizeSlice(c.vline, w)
	clear(c.vline)
	c.hrow = resizeSlice(c.hrow, h)
	clear(c.hrow)
}

func resizeSlice[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

func hasHeader(p *Panel) bool {
	if p.Title != "" || p.Y.Unit != "" {
		return true
	}
	for i := range p.Series {
		if p.Series[i].Name != "" {
			return true
		}
	}
	return false
}

// gutter returns the width of the left margin.
func (c *Canvas) gutter(w, fixed int, panels []Panel, hz bool) int {
	gut := fixed
	if gut <= 0 {
		need := 0
		if hz {
			need = 2 // "Hz"
		}
		for i := range c.grid.Panels {
			lay := &c.grid.Panels[i]
			if lay.PlotTop > lay.Top {
				need = max(need, utf8.RuneCountInString(panels[i].Y.Unit))
			}
			k0, k1, ok := tickRange(lay.Min, lay.Max, lay.Step, 4*lay.PlotRows)
			if !ok {
				continue
			}
			for k := k0; k <= k1; k++ {
				c.buf = appendTick(c.buf[:0], k*lay.Step, lay.Step)
				need = max(need, len(c.buf))
			}
		}
		gut = min(need+1, w/3)
	}
	if gut < 2 || gut > w-2 {
		return 0
	}
	return gut
}

// markDecades marks the plot columns of the decade grid lines.
func (c *Canvas) markDecades(m XMap) {
	const tol = 1e-9
	k0 := int(math.Ceil(math.Log10(m.From) - tol))
	k1 := int(math.Floor(math.Log10(m.To) + tol))
	for k := k0; k <= k1; k++ {
		if col, ok := m.Col(math.Pow10(k)); ok {
			c.vline[col-m.Left] = true
		}
	}
}

// drawSeries draws the panel's series as dots.
func (c *Canvas) drawSeries(p *Panel, lay *PanelLayout, m XMap) {
	c.left, c.top = m.Left, lay.PlotTop
	c.dotW, c.dotH = 2*m.Width, 4*lay.PlotRows
	if c.dotW <= 0 || c.dotH <= 0 {
		return
	}
	// The same operations as XMap.DotX, so dots land where it says.
	c.lf = math.Log10(m.From)
	c.xden = math.Log10(m.To) - c.lf
	c.xmul = float64(2*m.Width - 1)
	yScale := float64(c.dotH-1) / (lay.Max - lay.Min)
	xLo, xHi := -farDots, float64(c.dotW)+farDots
	yLo, yHi := -farDots, float64(c.dotH)+farDots
	for si := range p.Series {
		s := &p.Series[si]
		c.style = s.Style
		run := 0
		var px, py float64
		for i, f := range s.Freq {
			v := s.Value[i]
			if !(f > 0) || math.IsInf(f, 1) || math.IsNaN(v) {
				if run == 1 {
					c.dot(px, py)
				}
				run = 0
				continue
			}
			x := (math.Log10(f) - c.lf) / c.xden * c.xmul
			x = min(max(x, xLo), xHi)
			y := (lay.Max - v) * yScale
			y = min(max(y, yLo), yHi)
			if run > 0 {
				c.segment(px, py, x, y)
			}
			px, py = x, y
			run++
		}
		if run == 1 {
			c.dot(px, py)
		}
	}
}

// dot draws a lone point at dot coordinates (x, y).
func (c *Canvas) dot(x, y float64) {
	if x < 0 || x > float64(c.dotW-1) {
		return
	}
	ymax := float64(c.dotH - 1)
	var flag uint8
	switch {
	case y < 0:
		flag = clipTop
	case y > ymax:
		flag = clipBottom
	}
	y = min(max(y, 0), ymax)
	ix, iy := int(math.Round(x)), int(math.Round(y))
	c.line(ix, iy, ix, iy, flag)
}

// segment draws the line from (x1, y1) to (x2, y2) in dot coordinates:
// the part left or right of the plot is dropped, the parts above or
// below it run along the top or bottom edge, flagged as clipped.
func (c *Canvas) segment(x1, y1, x2, y2 float64) {
	xmax, ymax := float64(c.dotW-1), float64(c.dotH-1)
	if x1 >= 0 && x2 >= 0 && x1 <= xmax && x2 <= xmax && y1 >= 0 && y2 >= 0 && y1 <= ymax && y2 <= ymax {
		// Wholly inside: the common case.
		c.line(int(math.Round(x1)), int(math.Round(y1)), int(math.Round(x2)), int(math.Round(y2)), 0)
		return
	}
	dx, dy := x2-x1, y2-y1
	t0, t1 := 0.0, 1.0
	if dx == 0 {
		if x1 < 0 || x1 > xmax {
			return
		}
	} else {
		ta, tb := -x1/dx, (xmax-x1)/dx
		if ta > tb {
			ta, tb = tb, ta
		}
		t0, t1 = max(t0, ta), min(t1, tb)
		if t0 > t1 {
			return
		}
	}
	ax, ay := x1+t0*dx, y1+t0*dy
	bx, by := x1+t1*dx, y1+t1*dy
	if t0 == 0 {
		ax, ay = x1, y1
	}
	if t1 == 1 {
		bx, by = x2, y2
	}
	// Split where the line crosses the top and bottom edges.
	var ts [4]float64
	k := 1
	for _, e := range [2]float64{0, ymax} {
		if (ay-e)*(by-e) < 0 {
			ts[k] = (e - ay) / (by - ay)
			k++
		}
	}
	if k == 3 && ts[1] > ts[2] {
		ts[1], ts[2] = ts[2], ts[1]
	}
	ts[k] = 1
	k++
	ex, ey := bx-ax, by-ay
	for j := 0; j+1 < k; j++ {
		ta, tb := ts[j], ts[j+1]
		xa, ya := ax+ta*ex, ay+ta*ey
		xb, yb := ax+tb*ex, ay+tb*ey
		if tb == 1 {
			xb, yb = bx, by
		}
		var flag uint8
		switch mid := ay + (ta+tb)/2*ey; {
		case mid < 0:
			flag = clipTop
		case mid > ymax:
			flag = clipBottom
		}
		ya = min(max(ya, 0), ymax)
		yb = min(max(yb, 0), ymax)
		c.line(int(math.Round(xa)), int(math.Round(ya)), int(math.Round(xb)), int(math.Round(yb)), flag)
	}
}

// line sets the dots of a Bresenham line between two dot positions.
func (c *Canvas) line(x0, y0, x1, y1 int, flag uint8) {
	dx, sx := x1-x0, 1
	if dx < 0 {
		dx, sx = -dx, -1
	}
	dy, sy := y0-y1, 1 // dy ≤ 0
	if dy > 0 {
		dy = -dy
	}
	if y1 < y0 {
		sy = -1
	}
	e := dx + dy
	for {
		c.set(x0, y0, flag)
		if x0 == x1 && y0 == y1 {
			return
		}
		e2 := 2 * e
		if e2 >= dy {
			e += dy
			x0 += sx
		}
		if e2 <= dx {
			e += dx
			y0 += sy
		}
	}
}

// set sets one dot of the current panel.
func (c *Canvas) set(x, y int, flag uint8) {
	if x < 0 || y < 0 || x >= c.dotW || y >= c.dotH {
		return
	}
	i := (c.top+y>>2)*c.grid.W + c.left + x>>1
	c.dots[i] |= dotBits[y&3][x&1]
	c.clip[i] |= flag
	cell := &c.grid.Cells[i]
	cell.Kind = KindTrace
	cell.Style = c.style
}

// compose turns the panel's dots, grid and cursor into cells.
func (c *Canvas) compose(lay *PanelLayout, m XMap, cursor int, gl *glyphs, opt Options) {
	if k0, k1, ok := tickRange(lay.Min, lay.Max, lay.Step, 4*lay.PlotRows); ok {
		for k := k0; k <= k1; k++ {
			if r, ok := lay.Row(k * lay.Step); ok {
				c.hrow[r] = true
			}
		}
	}
	w := c.grid.W
	for r := lay.PlotTop; r < lay.PlotTop+lay.PlotRows; r++ {
		for col := m.Left; col < w; col++ {
			i := r*w + col
			cell := &c.grid.Cells[i]
			cell.Cursor = col == cursor
			if b := c.dots[i]; b != 0 {
				if opt.ASCII {
					cell.Rune = asciiDots(b)
				} else {
					cell.Rune = braille(b)
				}
				if f := c.clip[i]; f != 0 {
					cell.Clipped = true
					if opt.MarkClip {
						cell.Rune = gl.down
						if f&clipTop != 0 {
							cell.Rune = gl.up
						}
					}
				}
				continue
			}
			if col == cursor {
				cell.Rune, cell.Kind = gl.cursor, KindCursor
				continue
			}
			v, hz := c.vline[col-m.Left], c.hrow[r]
			switch {
			case v && hz:
				cell.Rune, cell.Kind = gl.cross, KindGrid
			case v:
				cell.Rune, cell.Kind = gl.vline, KindGrid
			case hz && (col-m.Left)%gl.hlineEvery == 0:
				cell.Rune, cell.Kind = gl.hline, KindGrid
			}
		}
	}
}

// drawGutter draws the axis line, tick marks, tick labels and unit.
func (c *Canvas) drawGutter(lay *PanelLayout, gut int, gl *glyphs) {
	if gut == 0 {
		return
	}
	axis := gut - 1
	w := c.grid.W
	for r := lay.PlotTop; r < lay.PlotTop+lay.PlotRows; r++ {
		c.grid.Cells[r*w+axis] = Cell{Rune: gl.axis, Kind: KindAxis}
	}
	k0, k1, ok := tickRange(lay.Min, lay.Max, lay.Step, 4*lay.PlotRows)
	if !ok {
		return
	}
	last := -1
	for k := k0; k <= k1; k++ {
		v := k * lay.Step
		r, ok := lay.Row(v)
		if !ok {
			continue
		}
		c.grid.Cells[r*w+axis] = Cell{Rune: gl.tick, Kind: KindAxis}
		if r == last {
			continue
		}
		c.buf = appendTick(c.buf[:0], v, lay.Step)
		if start := axis - len(c.buf); start >= 0 {
			c.writeBytes(r, start, c.buf, KindLabel)
			last = r
		}
	}
}

// drawHeader draws the panel's unit, title and series names.
func (c *Canvas) drawHeader(p *Panel, lay *PanelLayout, m XMap, gut int, ascii bool) {
	if lay.PlotTop == lay.Top {
		return
	}
	row, w := lay.Top, c.grid.W
	if n := utf8.RuneCountInString(p.Y.Unit); gut > 0 && n > 0 && n <= gut-1 {
		c.writeText(row, gut-1-n, p.Y.Unit, gut-1, KindLabel, 0, ascii)
	}
	end := c.writeText(row, m.Left, p.Title, w, KindTitle, 0, ascii)
	if p.Title != "" {
		end += 2
	}
	// As many series names as fit, right-aligned.
	room := w - end
	width, count := 0, 0
	for i := range p.Series {
		name := p.Series[i].Name
		if name == "" {
			continue
		}
		nw := utf8.RuneCountInString(name)
		if count > 0 {
			nw += 2
		}
		if width+nw > room {
			break
		}
		width += nw
		count++
	}
	col := w - width
	for i := range p.Series {
		if count == 0 {
			break
		}
		s := &p.Series[i]
		if s.Name == "" {
			continue
		}
		col = c.writeText(row, col, s.Name, w, KindLegend, s.Style, ascii) + 2
		count--
	}
}

// drawXLabels draws the frequency labels and "Hz" on the bottom row.
func (c *Canvas) drawXLabels(row int, m XMap, gut int) {
	c.placeXLabels(m, c.grid.W)
	for _, l := range c.xl {
		c.writeBytes(row, l.start, c.xbuf[l.off:l.off+l.n], KindLabel)
	}
	if gut >= 3 {
		c.writeBytes(row, gut-3, []byte("Hz"), KindLabel)
	}
}

// writeBytes writes ASCII text from column col.
func (c *Canvas) writeBytes(row, col int, text []byte, kind Kind) {
	w := c.grid.W
	for _, b := range text {
		if col >= w {
			return
		}
		c.grid.Cells[row*w+col] = Cell{Rune: rune(b), Kind: kind}
		col++
	}
}

// writeText writes s from column col up to (not including) column limit
// and returns the column after the last rune written. Control
// characters, and in ASCII mode anything outside ASCII, become '?'.
func (c *Canvas) writeText(row, col int, s string, limit int, kind Kind, style int, ascii bool) int {
	limit = min(limit, c.grid.W)
	for _, r := range s {
		if col >= limit {
			break
		}
		if r < 0x20 || (r >= 0x7f && r < 0xa0) || r == utf8.RuneError || (ascii && r >= 0x80) {
			r = '?'
		}
		c.grid.Cells[row*c.grid.W+col] = Cell{Rune: r, Kind: kind, Style: style}
		col++
	}
	return col
}
