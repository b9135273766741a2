// Package picture draws frequency responses as Bode plots and writes them
// as SVG or PNG files.
//
// A picture has two panels that share one logarithmic frequency axis,
// gain above phase, with an optional title and a legend of the series
// names in whichever corner of the gain panel the lines leave emptiest:
//
//	                         RC low-pass
//	          ┌──────────────────────────────────────────┐
//	        0 ┤━━━━━━━━━━━━━━━━━━━━━┓        ┌──────────┐│
//	Gain (dB) │                      ┗━━┓    │━━ RC     ││
//	      -20 ┤                          ┗━━━━━━━━━━━━━━━┥
//	          └──────────────────────────────────────────┘
//	          ┌──────────────────────────────────────────┐
//	        0 ┤━━━━━━━━━━━━━━━━━━━━┓                     │
//	Phase (°) │                     ┗━━━┓                │
//	      -90 ┤                          ┗━━━━━━━━━━━━━━━┥
//	          └┬───┬───┬───┬───┬───┬───┬───┬───┬───┬─────┘
//	           20  50 100 200 500  1k  2k  5k 10k 20k
//	                        Frequency (Hz)
//
// The frequency axis is logarithmic: a point at f hertz sits at the
// fraction log(f/From)/log(To/From) of the axis. Ticks fall on every
// m × 10^k hertz (m = 1…9) with labels at 1, 2 and 5 × 10^k — "20, 50,
// 100, 200, 500, 1k, 2k, 5k, 10k, 20k" — and grid lines at every tick.
// Over more than 4.5 decades only powers of ten are labelled; under 0.8
// decade every tick is, and a range too narrow for three such labels gets
// evenly spaced ones ("900, 950, 1.00k, 1.05k").
// The gain panel shows 20·log10|H| in dB, the phase panel arg H in degrees,
// wrapped to (−180°, 180°] or unwrapped ([Options.Unwrap]).
//
// Each [Series] is one trace drawn as a line in both panels, in its own
// colour, solid or dashed. A point that cannot be drawn — a frequency that
// is NaN, infinite, zero or negative, or a ratio H that is zero, NaN or
// infinite — leaves a gap in the line. Where a wrapped phase jumps between
// −180° and +180° the phase line is broken too, rather than drawn across
// the panel. A point with gaps on both sides is drawn as a dot.
//
// [Write] renders to any writer; [WriteFile] picks the format from the
// file name and replaces the file atomically (config/atomicfile).
package picture

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"tonetrace/config/atomicfile"
	"tonetrace/dsp/trace"
)

// Picture sizes, in pixels of 1/96 inch (the CSS pixel).
const (
	// DefaultWidth and DefaultHeight are the size used when
	// Options.Width or Options.Height is zero.
	DefaultWidth  = 800
	DefaultHeight = 600
	// MinSize and MaxSize bound Options.Width and Options.Height.
	MinSize = 240
	MaxSize = 4096
)

// pixel is the length of one picture pixel: 1/96 inch, 0.75 point.
const pixel = vg.Inch / 96

// Formats Write accepts.
const (
	FormatSVG = "svg"
	FormatPNG = "png"
)

// Errors returned by Write and WriteFile, wrapped with the details.
var (
	// ErrNoSeries: Write was given no series.
	ErrNoSeries = errors.New("picture: nothing to draw: pass at least one series with a trace")
	// ErrNoPoints: a series, or the chosen frequency range, holds no
	// point that can be drawn.
	ErrNoPoints = errors.New("picture: no drawable points")
	// ErrFormat: the picture format is neither SVG nor PNG.
	ErrFormat = errors.New("picture: unknown picture format")
	// ErrOptions: a field of Options is out of range.
	ErrOptions = errors.New("picture: invalid options")
)

// Series is one response to draw.
type Series struct {
	// Name labels the series in the legend. Control characters are
	// dropped and names longer than 60 characters are shortened with
	// "…". Empty means "trace N", N counting series from 1.
	Name string
	// Trace holds the points, in ascending frequency. It must not be nil
	// and must hold at least one drawable point (see the package doc).
	Trace *trace.Trace
	// Dashed draws the series with a dashed line — for a prediction or
	// a reference beside a measurement.
	Dashed bool
}

// Options shape the picture. The zero value gives an 800×600 picture
// without a title, over the frequencies of the data, with wrapped phase
// and value ranges fitted to the data.
type Options struct {
	// Width and Height are the picture size in pixels of 1/96 inch: a PNG
	// has exactly this many pixels; an SVG is Width·0.75 by Height·0.75
	// points. Zero means DefaultWidth or DefaultHeight; otherwise each
	// must lie from MinSize to MaxSize.
	Width, Height int
	// Title is written above the gain panel; empty for none. Control
	// characters are dropped.
	Title string
	// From and To bound the frequency axis, in hertz. Zero means the
	// lowest or highest drawable frequency of all series. Otherwise they
	// must be positive and finite, and From below To. A range holding a
	// single frequency is widened by half a decade on each free side.
	From, To float64
	// Unwrap draws the unwrapped phase (trace.UnwrappedPhaseDeg over the
	// drawable points of each series) instead of the phase wrapped to
	// (−180°, 180°].
	Unwrap bool
	// GainMin and GainMax bound the gain axis, in dB; PhaseMin and
	// PhaseMax the phase axis, in degrees. A NaN bound is fitted to the
	// data (the data range plus 5 % margin, at least 1 dB or 10° wide);
	// when both bounds of a pair are zero, both are fitted. A set bound
	// must be finite, and a set Min must lie below a set Max.
	GainMin, GainMax   float64
	PhaseMin, PhaseMax float64
}

// Write draws the series as a Bode plot and writes it to w in format,
// "svg" or "png" (any case). Nothing is written when the arguments are
// invalid; a write error from w is returned as is.
func Write(w io.Writer, format string, opts Options, series ...Series) error {
	out, err := render(format, opts, series)
	if err != nil {
		return err
	}
	_, err = out.WriteTo(w)
	return err
}

// WriteFile draws the series as a Bode plot into the file at path, SVG
// for a name ending in .svg and PNG for .png (any case), replacing an
// existing file atomically: on any error the file is left as it was.
func WriteFile(path string, opts Options, series ...Series) error {
	ext := strings.ToLower(filepath.Ext(path))
	switch ext {
	case "." + FormatSVG, "." + FormatPNG:
	default:
		return fmt.Errorf("%w: cannot tell the format of %q from its extension; name the file .svg or .png", ErrFormat, path)
	}
	out, err := render(ext[1:], opts, series)
	if err != nil {
		return fmt.Errorf("%w (not writing %s)", err, path)
	}
	return atomicfile.Write(path, func(w io.Writer) error {
		_, err := out.WriteTo(w)
		return err
	})
}

// render validates everything, draws the figure and returns the canvas
// ready to be written.
func render(format string, opts Options, series []Series) (io.WriterTo, error) {
	f := strings.ToLower(strings.TrimPrefix(format, "."))
	if f != FormatSVG && f != FormatPNG {
		return nil, fmt.Errorf("%w %q; use %q or %q", ErrFormat, format, FormatSVG, FormatPNG)
	}
	wpx, hpx, err := size(opts)
	if err != nil {
		return nil, err
	}
	fig, err := newFigure(opts, series)
	if err != nil {
		return nil, err
	}
	w, h := vg.Length(wpx)*pixel, vg.Length(hpx)*pixel
	switch f {
	case FormatSVG:
		c := vgsvg.New(w, h)
		fig.draw(draw.New(c))
		return c, nil
	default:
		c := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(96))
		fig.draw(draw.New(c))
		return vgimg.PngCanvas{Canvas: c}, nil
	}
}

// size returns the picture size in pixels, defaults applied.
func size(opts Options) (w, h int, err error) {
	w, h = opts.Width, opts.Height
	if w == 0 {
		w = DefaultWidth
	}
	if h == 0 {
		h = DefaultHeight
	}
	for _, d := range [...]struct {
		name string
		v    int
		def  int
	}{{"Width", w, DefaultWidth}, {"Height", h, DefaultHeight}} {
		if d.v < MinSize || d.v > MaxSize {
			return 0, 0, fmt.Errorf("%w: %s %d px is out of range; use %d to %d px, or 0 for %d px",
				ErrOptions, d.name, d.v, MinSize, MaxSize, d.def)
		}
	}
	return w, h, nil
}

// checkOptions validates the frequency and value bounds.
func checkOptions(opts Options) error {
	for _, b := range [...]struct {
		name string
		v    float64
	}{{"From", opts.From}, {"To", opts.To}} {
		if b.v != 0 && !(b.v > 0 && !math.IsInf(b.v, 0)) {
			return fmt.Errorf("%w: %s %v Hz must be a positive, finite frequency, or 0 to follow the data", ErrOptions, b.name, b.v)
		}
	}
	if opts.From != 0 && opts.To != 0 && opts.From >= opts.To {
		return fmt.Errorf("%w: From %v Hz must be below To %v Hz; swap them or set one to 0", ErrOptions, opts.From, opts.To)
	}
	for _, p := range [...]struct {
		min, max       float64
		nmin, nmax, un string
	}{
		{opts.GainMin, opts.GainMax, "GainMin", "GainMax", "dB"},
		{opts.PhaseMin, opts.PhaseMax, "PhaseMin", "PhaseMax", "°"},
	} {
		if math.IsInf(p.min, 0) || math.IsInf(p.max, 0) {
			return fmt.Errorf("%w: %s %v and %s %v must be finite; use NaN to fit a bound to the data", ErrOptions, p.nmin, p.min, p.nmax, p.max)
		}
		lo, hi := bounds(p.min, p.max)
		if lo >= hi { // false when either is NaN
			return fmt.Errorf("%w: %s %v %s must be below %s %v %s; use NaN for a bound fitted to the data",
				ErrOptions, p.nmin, p.min, p.un, p.nmax, p.max, p.un)
		}
	}
	return nil
}

// bounds applies the "both zero means fitted" rule to a pair of axis
// bounds; a NaN result means "fit to the data".
func bounds(min, max float64) (lo, hi float64) {
	if min == 0 && max == 0 {
		return math.NaN(), math.NaN()
	}
	return min, max
}
