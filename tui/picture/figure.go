package picture

import (
	"fmt"
	"image/color"
	"math"
	"math/cmplx"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"tonetrace/dsp/trace"
)

// Layout and style of the figure.
const (
	// Axis labels.
	freqLabel  = "Frequency (Hz)"
	gainLabel  = "Gain (dB)"
	phaseLabel = "Phase (°)"

	// Value ranges fitted to the data are at least this wide and get
	// this margin on each side, as a fraction of the data span.
	minGainSpan  = 1.0  // dB
	minPhaseSpan = 10.0 // degrees
	padFrac      = 0.05
	// freeSpanFactor: when one bound is set beyond all the data, the
	// fitted bound is this many minimum spans away from it.
	freeSpanFactor = 10

	// maxNameRunes is the longest legend name; longer ones end in "…".
	maxNameRunes = 60

	// typeface and variant of every text in the picture (Liberation,
	// bundled with gonum/plot).
	typeface = "Liberation"
	variant  = "Sans"

	// wrapJumpDeg: consecutive wrapped phases further apart than this
	// are a wrap, not a slope, and break the phase line.
	wrapJumpDeg = 180

	// legendSamples is how many points per line segment are tested when
	// choosing the legend's corner.
	legendSamples = 8
)

// Lengths, in points.
const (
	lineWidth   = vg.Length(1.25)
	dashOn      = vg.Length(5)
	dashOff     = vg.Length(3)
	dotRadius   = vg.Length(1.5)
	gridWidth   = vg.Length(0.5)
	frameWidth  = vg.Length(0.75)
	tickFont    = vg.Length(9)
	labelFont   = vg.Length(11)
	titleFont   = vg.Length(13)
	legendFont  = vg.Length(10)
	legendInset = vg.Length(6) // legend box from the panel frame
	legendPad   = vg.Length(3) // legend text from its box
	pageMargin  = vg.Length(6)
	panelGap    = vg.Length(8)
	rightMargin = vg.Length(14) // room for the last frequency label
)

// seriesColor returns the colour of series i: the Okabe–Ito
// colour-blind-safe palette without its yellow, repeating after seven.
func seriesColor(i int) color.NRGBA {
	p := [...]color.NRGBA{
		{0x00, 0x72, 0xB2, 0xFF}, // blue
		{0xD5, 0x5E, 0x00, 0xFF}, // vermillion
		{0x00, 0x9E, 0x73, 0xFF}, // bluish green
		{0xCC, 0x79, 0xA7, 0xFF}, // reddish purple
		{0xE6, 0x9F, 0x00, 0xFF}, // orange
		{0x56, 0xB4, 0xE9, 0xFF}, // sky blue
		{0x00, 0x00, 0x00, 0xFF}, // black
	}
	return p[i%len(p)]
}

// Grid, frame and legend backdrop grey levels and opacity.
const (
	majorGrid  = 0xC0
	minorGrid  = 0xE4
	frameGray  = 0x40
	backdropOp = 0xCC // alpha of the white behind the legend
)

// curve is one series ready to draw: its runs of consecutive drawable
// points in each panel.
type curve struct {
	name        string
	style       draw.LineStyle
	gain, phase []plotter.XYs
}

// figure is the two-panel plot, built and checked, not yet drawn.
type figure struct {
	gain, phase *plot.Plot
	curves      []curve
	legend      plot.Legend
}

// newFigure checks the options and series and builds both panels.
func newFigure(opts Options, series []Series) (*figure, error) {
	if len(series) == 0 {
		return nil, ErrNoSeries
	}
	if err := checkOptions(opts); err != nil {
		return nil, err
	}
	fig := &figure{curves: make([]curve, len(series))}
	for i, s := range series {
		name := cleanText(s.Name, maxNameRunes)
		if name == "" {
			name = "trace " + strconv.Itoa(i+1)
		}
		if s.Trace == nil {
			return nil, fmt.Errorf("%w: series %d (%q) has no trace; give it a *trace.Trace", ErrNoPoints, i+1, name)
		}
		c, n := collect(s.Trace.Points, opts.Unwrap)
		if n == 0 {
			return nil, fmt.Errorf("%w: series %d (%q) has none of its %d points with a positive, finite frequency and a finite, non-zero H; check the trace or leave the series out",
				ErrNoPoints, i+1, name, len(s.Trace.Points))
		}
		c.name = name
		c.style = draw.LineStyle{Color: seriesColor(i), Width: lineWidth}
		if s.Dashed {
			c.style.Dashes = []vg.Length{dashOn, dashOff}
		}
		fig.curves[i] = c
	}

	lo, hi, err := freqRange(fig.curves, opts.From, opts.To)
	if err != nil {
		return nil, err
	}
	gmin, gmax, pmin, pmax := valueExtents(fig.curves, lo, hi)
	glo, ghi := fitRange(gmin, gmax, opts.GainMin, opts.GainMax, minGainSpan)
	plo, phi := fitRange(pmin, pmax, opts.PhaseMin, opts.PhaseMax, minPhaseSpan)

	fticks := freqTicks(lo, hi)
	gticks := valueTicks(glo, ghi, niceStep(ghi-glo, maxIntervals))
	pticks := valueTicks(plo, phi, phaseStep(phi-plo, maxIntervals))

	fig.gain = newPanel(unlabelled(fticks), gticks, gainLabel)
	fig.phase = newPanel(fticks, pticks, phaseLabel)
	fig.phase.X.Label.Text = freqLabel
	if t := cleanText(opts.Title, 0); t != "" {
		fig.gain.Title.Text = t
	}
	fig.gain.Add(grid{x: fticks, y: gticks})
	fig.phase.Add(grid{x: fticks, y: pticks})
	for _, c := range fig.curves {
		addRuns(fig.gain, c.gain, c.style)
		addRuns(fig.phase, c.phase, c.style)
	}
	// Set the ranges last: adding a plotter that reports a data range
	// would widen them.
	setRange(fig.gain, lo, hi, glo, ghi)
	setRange(fig.phase, lo, hi, plo, phi)

	fig.legend = plot.NewLegend()
	fig.legend.TextStyle.Font = font.Font{Typeface: typeface, Variant: variant, Size: legendFont}
	fig.legend.Top, fig.legend.Left = true, true
	for _, c := range fig.curves {
		fig.legend.Add(c.name, &plotter.Line{LineStyle: c.style})
	}
	return fig, nil
}

// drawable reports whether p can be placed on the plot.
func drawable(p trace.Point) bool {
	if !(p.Freq > 0) || math.IsInf(p.Freq, 1) {
		return false
	}
	if cmplx.IsNaN(p.H) || cmplx.IsInf(p.H) || p.H == 0 {
		return false
	}
	g := p.GainDB()
	return !math.IsInf(g, 0) && !math.IsNaN(g)
}

// collect splits points into runs of drawable points, for the gain and
// the phase panel, and returns the number of drawable points. Phase runs
// also break where a wrapped phase wraps.
func collect(points []trace.Point, unwrap bool) (curve, int) {
	good := make([]trace.Point, 0, len(points))
	gapBefore := make([]bool, 0, len(points))
	gap := false
	for _, p := range points {
		if !drawable(p) {
			gap = true
			continue
		}
		good = append(good, p)
		gapBefore = append(gapBefore, gap)
		gap = false
	}
	var ph []float64
	if unwrap {
		ph = trace.UnwrappedPhaseDeg(nil, good)
	} else {
		ph = make([]float64, len(good))
		for i, p := range good {
			ph[i] = p.PhaseDeg()
		}
	}
	var c curve
	for i, p := range good {
		g := plotter.XY{X: p.Freq, Y: p.GainDB()}
		q := plotter.XY{X: p.Freq, Y: ph[i]}
		if i == 0 || gapBefore[i] {
			c.gain = append(c.gain, plotter.XYs{g})
		} else {
			c.gain[len(c.gain)-1] = append(c.gain[len(c.gain)-1], g)
		}
		if i == 0 || gapBefore[i] || math.Abs(ph[i]-ph[i-1]) > wrapJumpDeg {
			c.phase = append(c.phase, plotter.XYs{q})
		} else {
			c.phase[len(c.phase)-1] = append(c.phase[len(c.phase)-1], q)
		}
	}
	return c, len(good)
}

// freqRange returns the frequency axis range from the options and the
// data, or an error when no drawable point lies inside it.
func freqRange(curves []curve, from, to float64) (lo, hi float64, err error) {
	dlo, dhi := math.Inf(1), math.Inf(-1)
	total := 0
	for _, c := range curves {
		for _, run := range c.gain {
			for _, p := range run {
				dlo, dhi = math.Min(dlo, p.X), math.Max(dhi, p.X)
				total++
			}
		}
	}
	lo, hi = from, to
	if lo == 0 {
		lo = dlo
	}
	if hi == 0 {
		hi = dhi
	}
	inside := 0
	for _, c := range curves {
		for _, run := range c.gain {
			for _, p := range run {
				if p.X >= lo && p.X <= hi {
					inside++
				}
			}
		}
	}
	if inside == 0 {
		return 0, 0, fmt.Errorf("%w: none of the %d drawable points lies between %s and %s Hz; widen From and To, or set them to 0 to follow the data",
			ErrNoPoints, total, fmtHz(lo), fmtHz(hi))
	}
	if hi <= lo { // a single frequency: widen the free sides
		w := math.Sqrt(10)
		switch {
		case from == 0 && to == 0:
			lo, hi = lo/w, hi*w
		case from == 0:
			lo = hi / 10
		default:
			hi = lo * 10
		}
	}
	return lo, hi, nil
}

func fmtHz(f float64) string { return strconv.FormatFloat(f, 'g', 6, 64) }

// valueExtents returns the smallest and largest gain and phase drawn
// from lo to hi hertz: of the drawable points inside, and of the lines
// where they cross lo and hi (interpolated over log frequency).
func valueExtents(curves []curve, lo, hi float64) (gmin, gmax, pmin, pmax float64) {
	extent := func(runs []plotter.XYs, mn, mx float64) (float64, float64) {
		add := func(y float64) { mn, mx = math.Min(mn, y), math.Max(mx, y) }
		for _, run := range runs {
			for i, p := range run {
				if p.X >= lo && p.X <= hi {
					add(p.Y)
				}
				if i == 0 {
					continue
				}
				a := run[i-1]
				for _, edge := range [...]float64{lo, hi} {
					if (a.X < edge) != (p.X < edge) {
						t := math.Log(edge/a.X) / math.Log(p.X/a.X)
						add(a.Y + t*(p.Y-a.Y))
					}
				}
			}
		}
		return mn, mx
	}
	gmin, gmax = extent(nil, math.Inf(1), math.Inf(-1))
	pmin, pmax = gmin, gmax
	for _, c := range curves {
		gmin, gmax = extent(c.gain, gmin, gmax)
		pmin, pmax = extent(c.phase, pmin, pmax)
	}
	return gmin, gmax, pmin, pmax
}

// fitRange returns an axis range: the data range [dmin, dmax] widened to
// at least minSpan and padded by padFrac each side, with the bounds the
// caller set (min, max; see Options) taking the place of fitted ones.
func fitRange(dmin, dmax, min, max, minSpan float64) (lo, hi float64) {
	lo, hi = dmin, dmax
	if hi-lo < minSpan {
		mid := lo/2 + hi/2
		lo, hi = mid-minSpan/2, mid+minSpan/2
	}
	pad := padFrac * (hi - lo)
	lo, hi = lo-pad, hi+pad
	setLo, setHi := bounds(min, max)
	if !math.IsNaN(setLo) {
		lo = setLo
	}
	if !math.IsNaN(setHi) {
		hi = setHi
	}
	if hi <= lo { // one bound set beyond all the data
		if math.IsNaN(setLo) {
			lo = hi - freeSpanFactor*minSpan
		} else {
			hi = lo + freeSpanFactor*minSpan
		}
	}
	return lo, hi
}

// newPanel returns one panel over a log frequency axis.
func newPanel(xticks, yticks []plot.Tick, ylabel string) *plot.Plot {
	p := plot.New()
	sans := func(s vg.Length) font.Font { return font.Font{Typeface: typeface, Variant: variant, Size: s} }
	p.Title.TextStyle.Font = sans(titleFont)
	p.X.Label.TextStyle.Font = sans(labelFont)
	p.Y.Label.TextStyle.Font = sans(labelFont)
	p.X.Tick.Label.Font = sans(tickFont)
	p.Y.Tick.Label.Font = sans(tickFont)
	p.X.Scale = plot.LogScale{}
	p.BackgroundColor = nil // draw fills the whole page once
	p.X.Tick.Marker = plot.ConstantTicks(xticks)
	p.Y.Tick.Marker = plot.ConstantTicks(yticks)
	p.X.Padding, p.Y.Padding = 0, 0
	p.Y.Label.Text = ylabel
	return p
}

// setRange sets the axis ranges of a panel.
func setRange(p *plot.Plot, xlo, xhi, ylo, yhi float64) {
	p.X.Min, p.X.Max = xlo, xhi
	p.Y.Min, p.Y.Max = ylo, yhi
}

// addRuns adds the runs of one series to a panel: lines, and dots for
// runs of a single point.
func addRuns(p *plot.Plot, runs []plotter.XYs, style draw.LineStyle) {
	for _, run := range runs {
		if len(run) == 1 {
			p.Add(plainPlotter{&plotter.Scatter{XYs: run, GlyphStyle: draw.GlyphStyle{
				Color: style.Color, Radius: dotRadius, Shape: draw.CircleGlyph{},
			}}})
			continue
		}
		p.Add(plainPlotter{&plotter.Line{XYs: run, LineStyle: style}})
	}
}

// plainPlotter hides the glyph boxes and data range of a plotter: the
// axis ranges are set explicitly, and gonum/plot would otherwise measure
// one glyph box per point several times while laying out the panels.
type plainPlotter struct{ p plot.Plotter }

// Plot implements plot.Plotter.
func (pp plainPlotter) Plot(c draw.Canvas, p *plot.Plot) { pp.p.Plot(c, p) }

// grid draws the grid lines of a panel — at every frequency tick (minor
// ones lighter) and at every value tick — and a frame round it.
type grid struct{ x, y []plot.Tick }

// Plot implements plot.Plotter.
func (g grid) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	major := draw.LineStyle{Color: color.Gray{Y: majorGrid}, Width: gridWidth}
	minor := draw.LineStyle{Color: color.Gray{Y: minorGrid}, Width: gridWidth}
	for _, t := range g.x {
		x := trX(t.Value)
		if x < c.Min.X || x > c.Max.X {
			continue
		}
		st := major
		if t.IsMinor() {
			st = minor
		}
		c.StrokeLine2(st, x, c.Min.Y, x, c.Max.Y)
	}
	for _, t := range g.y {
		y := trY(t.Value)
		if y < c.Min.Y || y > c.Max.Y {
			continue
		}
		c.StrokeLine2(major, c.Min.X, y, c.Max.X, y)
	}
	c.SetLineStyle(draw.LineStyle{Color: color.Gray{Y: frameGray}, Width: frameWidth})
	c.Stroke(c.Rectangle.Path())
}

// draw renders the figure onto dc: background, both panels aligned on
// one frequency axis, and the legend in the emptiest corner of the gain
// panel.
func (f *figure) draw(dc draw.Canvas) {
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	gain, phase := f.layout(dc)
	f.gain.Draw(gain)
	f.phase.Draw(phase)
	f.drawLegend(f.gain.DataCanvas(gain))
}

// layout splits dc into the canvases of the gain and the phase panel,
// aligned so that their data areas share left and right edges.
func (f *figure) layout(dc draw.Canvas) (gain, phase draw.Canvas) {
	tiles := draw.Tiles{
		Rows: 2, Cols: 1,
		PadY:   panelGap,
		PadTop: pageMargin, PadBottom: pageMargin,
		PadLeft: pageMargin, PadRight: rightMargin,
	}
	cs := plot.Align([][]*plot.Plot{{f.gain}, {f.phase}}, tiles, dc)
	return cs[0][0], cs[1][0]
}

// legendSize returns the width and height of the legend's entries.
func (f *figure) legendSize() (w, h vg.Length) {
	sty := f.legend.TextStyle
	for _, c := range f.curves {
		w = max(w, f.legend.ThumbnailWidth+sty.Rectangle(" "+c.name).Max.X)
		h = max(h, sty.Rectangle(c.name).Max.Y)
	}
	n := vg.Length(len(f.curves))
	return w, n*h + (n-1)*f.legend.Padding + sty.FontExtents().Descent
}

// legendBox returns the rectangle of the legend's entries inside the
// data area dc: of the four corners, the one whose box covers the fewest
// samples of the gain lines (top right first on a tie).
func (f *figure) legendBox(dc draw.Canvas) vg.Rectangle {
	w, h := f.legendSize()
	in := legendInset + legendPad
	corners := [...]vg.Rectangle{
		{Min: vg.Point{X: dc.Max.X - in - w, Y: dc.Max.Y - in - h}, Max: vg.Point{X: dc.Max.X - in, Y: dc.Max.Y - in}},
		{Min: vg.Point{X: dc.Max.X - in - w, Y: dc.Min.Y + in}, Max: vg.Point{X: dc.Max.X - in, Y: dc.Min.Y + in + h}},
		{Min: vg.Point{X: dc.Min.X + in, Y: dc.Min.Y + in}, Max: vg.Point{X: dc.Min.X + in + w, Y: dc.Min.Y + in + h}},
		{Min: vg.Point{X: dc.Min.X + in, Y: dc.Max.Y - in - h}, Max: vg.Point{X: dc.Min.X + in + w, Y: dc.Max.Y - in}},
	}
	for i := range corners { // a legend wider than the panel starts at its left
		if d := dc.Min.X + in - corners[i].Min.X; d > 0 {
			corners[i].Min.X += d
			corners[i].Max.X += d
		}
	}
	var hits [len(corners)]int
	trX, trY := f.gain.Transforms(&dc)
	count := func(pt vg.Point) {
		for i, r := range corners {
			if pt.X >= r.Min.X-legendPad && pt.X <= r.Max.X+legendPad &&
				pt.Y >= r.Min.Y-legendPad && pt.Y <= r.Max.Y+legendPad {
				hits[i]++
			}
		}
	}
	for _, c := range f.curves {
		for _, run := range c.gain {
			prev := vg.Point{X: trX(run[0].X), Y: trY(run[0].Y)}
			count(prev)
			for _, p := range run[1:] {
				pt := vg.Point{X: trX(p.X), Y: trY(p.Y)}
				for k := 1; k <= legendSamples; k++ {
					t := vg.Length(k) / legendSamples
					count(vg.Point{X: prev.X + t*(pt.X-prev.X), Y: prev.Y + t*(pt.Y-prev.Y)})
				}
				prev = pt
			}
		}
	}
	best := 0
	for i := range hits {
		if hits[i] < hits[best] {
			best = i
		}
	}
	return corners[best]
}

// drawLegend draws the legend on a light backdrop in the gain panel.
func (f *figure) drawLegend(dc draw.Canvas) {
	r := f.legendBox(dc)
	box := vg.Rectangle{
		Min: vg.Point{X: r.Min.X - legendPad, Y: r.Min.Y - legendPad},
		Max: vg.Point{X: r.Max.X + legendPad, Y: r.Max.Y + legendPad},
	}
	dc.SetColor(color.NRGBA{0xFF, 0xFF, 0xFF, backdropOp})
	dc.Fill(box.Path())
	dc.SetLineStyle(draw.LineStyle{Color: color.Gray{Y: majorGrid}, Width: gridWidth})
	dc.Stroke(box.Path())
	f.legend.Draw(draw.Canvas{Canvas: dc.Canvas, Rectangle: r})
}

// cleanText makes s safe to draw and to put in an SVG: invalid UTF-8
// becomes U+FFFD, tabs and line breaks become spaces, other control and
// non-characters are dropped, surrounding space is trimmed, and with
// limit > 0 a longer text is cut to limit runes ending in "…".
func cleanText(s string, limit int) string {
	s = strings.ToValidUTF8(s, "\uFFFD")
	var b strings.Builder
	for _, r := range s {
		switch {
		case r == '\t' || r == '\n' || r == '\r':
			b.WriteByte(' ')
		case unicode.IsControl(r) || r == 0xFFFE || r == 0xFFFF:
		default:
			b.WriteRune(r)
		}
	}
	out := strings.TrimSpace(b.String())
	if limit > 0 && utf8.RuneCountInString(out) > limit {
		rs := []rune(out)
		out = strings.TrimSpace(string(rs[:limit-1])) + "…"
	}
	return out
}
