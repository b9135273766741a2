package picture

import (
	"bytes"
	"errors"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"tonetrace/dsp/trace"
)

// Tolerances.
const (
	// refTol is the tolerance against the 4-decimal values of
	// REFERENCES.md §5, in dB or degrees.
	refTol = 1e-4
	// normTol is the tolerance of an axis fraction computed by gonum/plot
	// against log10 arithmetic.
	normTol = 1e-12
	// svgTol is the tolerance of a coordinate read back from the SVG, in
	// points: the writer keeps 5 significant digits, so a coordinate
	// below 1000 pt is within 0.005 pt, and a difference of two within
	// 0.01 pt.
	svgTol = 0.012
)

// TestRCData checks that the test data is the network of REFERENCES.md §5
// before the other tests draw it.
func TestRCData(t *testing.T) {
	tests := []struct {
		name          string
		h             func(float64) complex128
		f             float64
		gainDB, phDeg float64
	}{
		// REFERENCES.md §5 [V] (ngspice-39): R 10 kΩ, C 15 nF.
		{"low-pass at 0.1 fc", rcLowPass, 0.1 * rcFc, -0.0432, -5.7106},
		{"low-pass at fc", rcLowPass, rcFc, -3.0103, -45},
		{"low-pass at 10 fc", rcLowPass, 10 * rcFc, -20.0432, -84.2894},
		{"high-pass at 0.5 fc", rcHighPass, 0.5 * rcFc, -6.9897, 63.4349},
		{"high-pass at 2 fc", rcHighPass, 2 * rcFc, -0.9691, 26.5651},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h := tc.h(tc.f)
			if g := gainDB(h); math.Abs(g-tc.gainDB) > refTol {
				t.Errorf("gain %.5f dB, want %.4f dB (REFERENCES.md §5 [V])", g, tc.gainDB)
			}
			if p := phaseDeg(h); math.Abs(p-tc.phDeg) > refTol {
				t.Errorf("phase %.5f°, want %.4f° (REFERENCES.md §5 [V])", p, tc.phDeg)
			}
		})
	}
}

func TestSVGStructure(t *testing.T) {
	fs := logGrid(1, 5, 10)
	lp := sampled(fs, rcLowPass)
	hp := sampled(fs, rcHighPass)
	awkward := `R<10k> & "C" 'x'` + "\x00\x1b" // markup and control characters
	var buf bytes.Buffer
	err := Write(&buf, "svg", Options{Title: "RC pair", From: 20, To: 20e3},
		Series{Name: "RC low-pass", Trace: lp},
		Series{Name: awkward, Trace: hp, Dashed: true},
		Series{Trace: lp}, // unnamed
	)
	if err != nil {
		t.Fatal(err)
	}
	doc := decodeSVG(t, buf.Bytes())

	// 800 × 600 px at 96 px per inch is 600 × 450 pt (1 pt = 1/72 inch,
	// CSS px = 1/96 inch: W3C CSS Values and Units, common practice).
	if doc.width != "600pt" || doc.height != "450pt" {
		t.Errorf("SVG size %s × %s, want 600pt × 450pt", doc.width, doc.height)
	}
	want := []string{
		"RC pair", "RC low-pass", `R<10k> & "C" 'x'`, "trace 3",
		"Frequency (Hz)", "Gain (dB)", "Phase (°)",
		// The 1-2-5 frequency labels over 20 Hz–20 kHz (common practice).
		"20", "50", "100", "200", "500", "1k", "2k", "5k", "10k", "20k",
	}
	for _, w := range want {
		if !slices.Contains(doc.texts, w) {
			t.Errorf("no text %q in the SVG; texts: %q", w, doc.texts)
		}
	}
	// Each series has a line in each panel and a legend sample.
	for i := range 3 {
		if n := len(doc.pathsOf(colorHex(i))); n != 3 {
			t.Errorf("series %d (%s): %d paths, want 3 (gain, phase, legend)", i, colorHex(i), n)
		}
	}
	for _, p := range doc.pathsOf(colorHex(1)) {
		if styleValue(p.style, "stroke-dasharray") == "" {
			t.Errorf("dashed series path without stroke-dasharray: %s", p.style)
		}
	}
	for _, p := range doc.pathsOf(colorHex(0)) {
		if d := styleValue(p.style, "stroke-dasharray"); d != "" {
			t.Errorf("solid series path with stroke-dasharray %q", d)
		}
	}
}

// TestLogAxisNorm checks the frequency axis against log10 arithmetic
// through gonum/plot's own transform: on a log axis from 10 Hz to 100 kHz
// (four decades) f sits at (log10 f − 1)/4 (definition of a logarithmic
// scale, common practice).
func TestLogAxisNorm(t *testing.T) {
	fs := logGrid(1, 5, 10) // 10 Hz … 100 kHz
	fig, err := newFigure(Options{}, []Series{{Name: "RC", Trace: sampled(fs, rcLowPass)}})
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		f    float64
		want float64
	}{
		{"10 Hz, left edge", 10, 0},
		{"100 Hz, one decade", 100, 0.25},
		{"1 kHz, middle", 1000, 0.5},
		{"fc of REFERENCES.md §5", rcFc, (math.Log10(rcFc) - 1) / 4},
		{"100 kHz, right edge", 100e3, 1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			for _, p := range []struct {
				name string
				norm func(float64) float64
			}{{"gain", fig.gain.X.Norm}, {"phase", fig.phase.X.Norm}} {
				if got := p.norm(tc.f); math.Abs(got-tc.want) > normTol {
					t.Errorf("%s panel: %g Hz at %.15f of the axis, want %.15f", p.name, tc.f, got, tc.want)
				}
			}
		})
	}
}

// TestSVGLinePositions reads the drawn lines back from the SVG: x must
// follow log10 f (1 kHz halfway between 10 Hz and 100 kHz), and y must be
// linear in the gain in dB and the phase in degrees of REFERENCES.md §5's
// RC low-pass.
func TestSVGLinePositions(t *testing.T) {
	fs := logGrid(1, 5, 10)
	var buf bytes.Buffer
	opts := Options{GainMin: -45, GainMax: 5, PhaseMin: -100, PhaseMax: 10}
	if err := Write(&buf, "svg", opts, Series{Name: "RC", Trace: sampled(fs, rcLowPass)}); err != nil {
		t.Fatal(err)
	}
	doc := decodeSVG(t, buf.Bytes())
	var lines [][][2]float64
	for _, p := range doc.pathsOf(colorHex(0)) {
		if v := p.vertices(t); len(v) == len(fs) {
			lines = append(lines, v)
		}
	}
	if len(lines) != 2 {
		t.Fatalf("%d paths with %d vertices, want 2 (gain and phase)", len(lines), len(fs))
	}
	// The SVG's y axis points up inside its flipped group: the gain
	// panel is the upper one.
	if lines[0][0][1] < lines[1][0][1] {
		lines[0], lines[1] = lines[1], lines[0]
	}
	i1k := slices.Index(fs, 1000)
	for li, name := range []string{"gain", "phase"} {
		v := lines[li]
		x0, x1 := v[0][0], v[len(v)-1][0]
		// 1 kHz is 2 of the 4 decades from 10 Hz (log10 arithmetic).
		if got := (v[i1k][0] - x0) / (x1 - x0); math.Abs(got-0.5) > svgTol/(x1-x0) {
			t.Errorf("%s: 1 kHz at %.5f of the way from 10 Hz to 100 kHz, want 0.5", name, got)
		}
		for i, f := range fs {
			want := x0 + (x1-x0)*math.Log10(f/fs[0])/math.Log10(fs[len(fs)-1]/fs[0])
			if math.Abs(v[i][0]-want) > svgTol {
				t.Errorf("%s: %g Hz at x = %.3f pt, want %.3f pt (log10 f)", name, f, v[i][0], want)
			}
		}
	}
	// y against value: straight line through the first and last points.
	for li, val := range []func(complex128) float64{gainDB, phaseDeg} {
		v := lines[li]
		n := len(v) - 1
		a, b := val(rcLowPass(fs[0])), val(rcLowPass(fs[n]))
		for i, f := range fs {
			want := v[0][1] + (v[n][1]-v[0][1])*(val(rcLowPass(f))-a)/(b-a)
			if math.Abs(v[i][1]-want) > svgTol {
				t.Errorf("panel %d: %g Hz at y = %.3f pt, want %.3f pt", li, f, v[i][1], want)
			}
		}
	}
	// Scale of the gain panel: with GainMin −45 dB and GainMax 5 dB the
	// panel height holds 50 dB, so the fixed bounds were honoured.
	g := lines[0]
	y0, yEnd := g[0][1], g[len(g)-1][1]
	perDB := (y0 - yEnd) / (gainDB(rcLowPass(fs[0])) - gainDB(rcLowPass(fs[len(fs)-1])))
	fig, err := newFigure(opts, []Series{{Trace: sampled(fs, rcLowPass)}})
	if err != nil {
		t.Fatal(err)
	}
	gc, _ := fig.layout(draw.New(vgimg.New(600, 450)))
	dc := fig.gain.DataCanvas(gc)
	wantPerDB := float64(dc.Max.Y-dc.Min.Y) / 50 // GainMax − GainMin = 50 dB
	if math.Abs(perDB-wantPerDB) > svgTol {
		t.Errorf("gain scale %.4f pt/dB, want %.4f pt/dB for a 50 dB panel", perDB, wantPerDB)
	}
}

func TestPNGSize(t *testing.T) {
	fs := logGrid(1, 5, 10)
	series := []Series{
		{Name: "low-pass", Trace: sampled(fs, rcLowPass)},
		{Name: "high-pass", Trace: sampled(fs, rcHighPass), Dashed: true},
	}
	tests := []struct {
		name         string
		w, h         int
		wantW, wantH int
	}{
		{"default", 0, 0, DefaultWidth, DefaultHeight},
		{"640x480", 640, 480, 640, 480},
		{"smallest", MinSize, MinSize, MinSize, MinSize},
		{"wide", 1200, 300, 1200, 300},
		{"odd", 801, 577, 801, 577},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := Write(&buf, "PNG", Options{Width: tc.w, Height: tc.h}, series...); err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(&buf)
			if err != nil {
				t.Fatalf("image/png cannot decode the output: %v", err)
			}
			if b := img.Bounds(); b.Dx() != tc.wantW || b.Dy() != tc.wantH {
				t.Fatalf("PNG is %d×%d px, want %d×%d", b.Dx(), b.Dy(), tc.wantW, tc.wantH)
			}
			// Both series colours appear: the lines were drawn.
			for i := range series {
				if n := countColor(img, seriesColor(i)); n == 0 {
					t.Errorf("no pixel of series %d's colour %v", i, seriesColor(i))
				}
			}
		})
	}
}

func countColor(img image.Image, c color.NRGBA) int {
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if color.NRGBAModel.Convert(img.At(x, y)) == c {
				n++
			}
		}
	}
	return n
}

// TestGaps checks that undrawable points split the lines and never stop
// the picture.
func TestGaps(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	good := func(f float64) trace.Point { return trace.NewPoint(f, rcLowPass(f)) }
	tests := []struct {
		name     string
		points   []trace.Point
		wantRuns []int // points per gain run
		drawable int
	}{
		{"no gap", []trace.Point{good(10), good(20), good(30)}, []int{3}, 3},
		{"NaN H inside", []trace.Point{good(10), good(20), trace.NewPoint(30, complex(nan, 0)), good(40), good(50)}, []int{2, 2}, 4},
		{"NaN frequency", []trace.Point{good(10), good(20), trace.NewPoint(nan, 1), good(40), good(50)}, []int{2, 2}, 4},
		{"zero H", []trace.Point{good(10), good(20), trace.NewPoint(30, 0), good(40)}, []int{2, 1}, 3},
		{"infinite H", []trace.Point{good(10), trace.NewPoint(20, complex(inf, 0)), good(30), good(40)}, []int{1, 2}, 3},
		{"zero and negative frequency first", []trace.Point{trace.NewPoint(0, 1), trace.NewPoint(-5, 1), good(10), good(20)}, []int{2}, 2},
		{"infinite frequency last", []trace.Point{good(10), good(20), trace.NewPoint(inf, 1)}, []int{2}, 2},
		{"two gaps in a row", []trace.Point{good(10), good(20), trace.NewPoint(nan, 1), trace.NewPoint(40, complex(0, nan)), good(50), good(60)}, []int{2, 2}, 4},
		{"nothing drawable", []trace.Point{trace.NewPoint(nan, 1), trace.NewPoint(10, 0)}, nil, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, n := collect(tc.points, false)
			if n != tc.drawable {
				t.Errorf("%d drawable points, want %d", n, tc.drawable)
			}
			var runs []int
			for _, r := range c.gain {
				runs = append(runs, len(r))
			}
			if !slices.Equal(runs, tc.wantRuns) {
				t.Errorf("gain runs %v, want %v", runs, tc.wantRuns)
			}
		})
	}

	// In the picture, one NaN point splits each of the two lines in two.
	fs := logGrid(1, 5, 10)
	whole := sampled(fs, rcLowPass)
	holed := sampled(fs, rcLowPass)
	holed.Points[20].H = complex(nan, nan)
	count := func(tr *trace.Trace) int {
		var buf bytes.Buffer
		if err := Write(&buf, "svg", Options{}, Series{Name: "RC", Trace: tr}); err != nil {
			t.Fatal(err)
		}
		return len(decodeSVG(t, buf.Bytes()).pathsOf(colorHex(0)))
	}
	if a, b := count(whole), count(holed); b != a+2 {
		t.Errorf("a NaN point gives %d paths, without it %d; want 2 more (gain and phase split)", b, a)
	}
}

// TestPhaseWrapBreaks uses a pure delay, whose phase is −360°·f·τ (the
// phase of e^{−jωτ}, common practice): with τ = 1 ms from 100 Hz to 2 kHz
// the wrapped phase crosses ±180° at 500 Hz and 1500 Hz, so the wrapped
// line has three pieces and the unwrapped one a single piece down to
// −720°.
func TestPhaseWrapBreaks(t *testing.T) {
	const tau = 1e-3
	var fs []float64
	for f := 100.0; f <= 2000; f += 10 {
		fs = append(fs, f)
	}
	delay := sampled(fs, func(f float64) complex128 {
		s, c := math.Sincos(-2 * math.Pi * f * tau)
		return complex(c, s)
	})
	tests := []struct {
		name      string
		unwrap    bool
		wantRuns  int
		wantPhMin float64
	}{
		{"wrapped", false, 3, -180},
		{"unwrapped", true, 1, -720},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, _ := collect(delay.Points, tc.unwrap)
			if len(c.gain) != 1 {
				t.Errorf("%d gain runs, want 1", len(c.gain))
			}
			if len(c.phase) != tc.wantRuns {
				t.Errorf("%d phase runs, want %d", len(c.phase), tc.wantRuns)
			}
			_, _, pmin, _ := valueExtents([]curve{c}, fs[0], fs[len(fs)-1])
			if math.Abs(pmin-tc.wantPhMin) > 360*10*tau { // one 10 Hz step of phase
				t.Errorf("lowest phase %.2f°, want about %.0f°", pmin, tc.wantPhMin)
			}
		})
	}
}

func TestErrors(t *testing.T) {
	fs := logGrid(1, 5, 10)
	rc := Series{Name: "RC", Trace: sampled(fs, rcLowPass)}
	dead := Series{Name: "dead", Trace: &trace.Trace{Points: []trace.Point{trace.NewPoint(100, 0), trace.NewPoint(math.NaN(), 1)}}}
	nan := math.NaN()
	tests := []struct {
		name   string
		format string
		opts   Options
		series []Series
		want   error
		hint   string // part of the message that says what to do
	}{
		{"no series", "svg", Options{}, nil, ErrNoSeries, "pass at least one series"},
		{"nil trace", "svg", Options{}, []Series{rc, {Name: "x"}}, ErrNoPoints, `series 2 ("x") has no trace`},
		{"no drawable point", "png", Options{}, []Series{dead}, ErrNoPoints, "check the trace"},
		{"empty trace", "svg", Options{}, []Series{{Trace: &trace.Trace{}}}, ErrNoPoints, `"trace 1"`},
		{"range without data", "svg", Options{From: 200e3, To: 300e3}, []Series{rc}, ErrNoPoints, "widen From and To"},
		{"From above the data", "svg", Options{From: 150e3}, []Series{rc}, ErrNoPoints, "set them to 0"},
		{"From above To", "svg", Options{From: 1000, To: 100}, []Series{rc}, ErrOptions, "swap them"},
		{"From equals To", "svg", Options{From: 1000, To: 1000}, []Series{rc}, ErrOptions, "must be below To"},
		{"negative From", "svg", Options{From: -1}, []Series{rc}, ErrOptions, "or 0 to follow the data"},
		{"NaN From", "svg", Options{From: nan}, []Series{rc}, ErrOptions, "positive, finite"},
		{"infinite To", "svg", Options{To: math.Inf(1)}, []Series{rc}, ErrOptions, "positive, finite"},
		{"GainMin above GainMax", "svg", Options{GainMin: 10, GainMax: -10}, []Series{rc}, ErrOptions, "GainMin 10 dB must be below GainMax -10 dB"},
		{"GainMin alone above zero", "svg", Options{GainMin: 10}, []Series{rc}, ErrOptions, "use NaN"},
		{"infinite PhaseMax", "svg", Options{PhaseMax: math.Inf(1)}, []Series{rc}, ErrOptions, "must be finite"},
		{"width too small", "svg", Options{Width: 100}, []Series{rc}, ErrOptions, "Width 100 px"},
		{"height too large", "png", Options{Height: MaxSize + 1}, []Series{rc}, ErrOptions, "or 0 for 600 px"},
		{"negative width", "png", Options{Width: -5}, []Series{rc}, ErrOptions, "use 240 to 4096 px"},
		{"unknown format", "pdf", Options{}, []Series{rc}, ErrFormat, `use "svg" or "png"`},
		{"empty format", "", Options{}, []Series{rc}, ErrFormat, `use "svg" or "png"`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			err := Write(&buf, tc.format, tc.opts, tc.series...)
			if !errors.Is(err, tc.want) {
				t.Fatalf("error %v, want %v", err, tc.want)
			}
			if !strings.Contains(err.Error(), tc.hint) {
				t.Errorf("error %q does not say %q", err, tc.hint)
			}
			if buf.Len() != 0 {
				t.Errorf("%d bytes written despite the error", buf.Len())
			}
		})
	}
}

func TestWriteFile(t *testing.T) {
	dir := t.TempDir()
	rc := Series{Name: "RC", Trace: sampled(logGrid(1, 5, 10), rcLowPass)}
	tests := []struct {
		name string
		file string
		png  bool
	}{
		{"svg", "bode.svg", false},
		{"png", "bode.png", true},
		{"upper-case extension", "BODE.PNG", true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, tc.file)
			if err := WriteFile(path, Options{Width: 400, Height: 300}, rc); err != nil {
				t.Fatal(err)
			}
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if tc.png {
				cfg, err := png.DecodeConfig(bytes.NewReader(data))
				if err != nil || cfg.Width != 400 || cfg.Height != 300 {
					t.Errorf("PNG config %+v, error %v; want 400×300", cfg, err)
				}
			} else {
				doc := decodeSVG(t, data)
				if doc.width != "300pt" { // 400 px × 0.75 pt/px
					t.Errorf("SVG width %s, want 300pt", doc.width)
				}
			}
		})
	}

	t.Run("failure leaves the file alone", func(t *testing.T) {
		path := filepath.Join(dir, "keep.svg")
		if err := os.WriteFile(path, []byte("old"), 0o644); err != nil {
			t.Fatal(err)
		}
		err := WriteFile(path, Options{From: 1e9}, rc)
		if !errors.Is(err, ErrNoPoints) || !strings.Contains(err.Error(), path) {
			t.Errorf("error %v, want ErrNoPoints naming %s", err, path)
		}
		if data, _ := os.ReadFile(path); string(data) != "old" {
			t.Errorf("file now holds %q, want it untouched", data)
		}
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			if strings.Contains(e.Name(), ".tmp-") {
				t.Errorf("temporary file %s left behind", e.Name())
			}
		}
	})

	t.Run("unknown extension", func(t *testing.T) {
		path := filepath.Join(dir, "bode.jpg")
		err := WriteFile(path, Options{}, rc)
		if !errors.Is(err, ErrFormat) || !strings.Contains(err.Error(), ".svg or .png") {
			t.Errorf("error %v, want ErrFormat listing .svg and .png", err)
		}
		if _, err := os.Stat(path); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s was created", path)
		}
	})
}

// TestRanges checks the axis ranges that the options and the data give.
func TestRanges(t *testing.T) {
	fs := logGrid(1, 5, 10) // 10 Hz … 100 kHz
	lp := sampled(fs, rcLowPass)
	// Gain of the §5 low-pass at 10 Hz and 100 kHz, from its formula
	// (REFERENCES.md §5 [V] for the network).
	g10, g100k := gainDB(rcLowPass(10)), gainDB(rcLowPass(100e3))
	span := g10 - g100k
	nan := math.NaN()
	tests := []struct {
		name               string
		opts               Options
		xlo, xhi, glo, ghi float64
		plo, phi           float64
	}{
		{"fitted", Options{}, 10, 100e3, g100k - padFrac*span, g10 + padFrac*span, nan, nan},
		{"both zero is fitted", Options{GainMin: 0, GainMax: 0}, 10, 100e3, g100k - padFrac*span, g10 + padFrac*span, nan, nan},
		{"fixed gain", Options{GainMin: -60, GainMax: 10}, 10, 100e3, -60, 10, nan, nan},
		{"GainMin alone, GainMax zero", Options{GainMin: -60}, 10, 100e3, -60, 0, nan, nan},
		{"GainMax NaN is fitted", Options{GainMin: -60, GainMax: nan}, 10, 100e3, -60, g10 + padFrac*span, nan, nan},
		{"fixed phase", Options{PhaseMin: -90, PhaseMax: 0}, 10, 100e3, nan, nan, -90, 0},
		{"frequency window", Options{From: 100, To: 10e3}, 100, 10e3, nan, nan, nan, nan},
		{"bound beyond the data", Options{GainMin: 20, GainMax: nan}, 10, 100e3, 20, 20 + freeSpanFactor*minGainSpan, nan, nan},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			fig, err := newFigure(tc.opts, []Series{{Trace: lp}})
			if err != nil {
				t.Fatal(err)
			}
			check := func(what string, got, want float64) {
				if !math.IsNaN(want) && math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
					t.Errorf("%s %g, want %g", what, got, want)
				}
			}
			check("From", fig.phase.X.Min, tc.xlo)
			check("To", fig.phase.X.Max, tc.xhi)
			check("gain panel From", fig.gain.X.Min, tc.xlo)
			check("gain panel To", fig.gain.X.Max, tc.xhi)
			check("GainMin", fig.gain.Y.Min, tc.glo)
			check("GainMax", fig.gain.Y.Max, tc.ghi)
			check("PhaseMin", fig.phase.Y.Min, tc.plo)
			check("PhaseMax", fig.phase.Y.Max, tc.phi)
		})
	}
}

func TestFitRange(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name              string
		dmin, dmax        float64
		min, max, minSpan float64
		lo, hi            float64
	}{
		{"padded", -20, 0, nan, nan, 1, -21, 1},
		{"both zero fitted", -20, 0, 0, 0, 1, -21, 1},
		{"flat data widened to the minimum span", -3, -3, nan, nan, 1, -3.55, -2.45},
		{"fixed", -20, 0, -40, 10, 1, -40, 10},
		{"lower fixed", -20, 0, -40, nan, 1, -40, 1},
		{"upper fixed below the data", -20, -10, nan, -30, 1, -40, -30},
		{"lower fixed above the data", -20, -10, 5, nan, 10, 5, 105},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			lo, hi := fitRange(tc.dmin, tc.dmax, tc.min, tc.max, tc.minSpan)
			if math.Abs(lo-tc.lo) > 1e-12 || math.Abs(hi-tc.hi) > 1e-12 {
				t.Errorf("range [%g, %g], want [%g, %g]", lo, hi, tc.lo, tc.hi)
			}
		})
	}
}

// TestLegendCorner checks that the legend goes where the gain lines are
// not. On a −45…+5 dB panel a 0 dB line runs a tenth of the height below
// the top, through the top corners' boxes: the legend goes top right for a
// low-pass (low on the right), bottom right for a high-pass (low on the
// left) and for a flat line.
func TestLegendCorner(t *testing.T) {
	fs := logGrid(1, 5, 10)
	tests := []struct {
		name       string
		h          func(float64) complex128
		top, right bool
	}{
		{"low-pass", rcLowPass, true, true},
		{"high-pass", rcHighPass, false, true},
		{"flat at the top", func(float64) complex128 { return 1 }, false, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			fig, err := newFigure(Options{GainMin: -45, GainMax: 5}, []Series{{Name: tc.name, Trace: sampled(fs, tc.h)}})
			if err != nil {
				t.Fatal(err)
			}
			gc, _ := fig.layout(draw.New(vgimg.New(600, 450)))
			dc := fig.gain.DataCanvas(gc)
			r := fig.legendBox(dc)
			mid := dc.Center()
			top, right := r.Min.Y > mid.Y, r.Min.X > mid.X
			if top != tc.top || right != tc.right {
				t.Errorf("legend at top=%v right=%v, want top=%v right=%v", top, right, tc.top, tc.right)
			}
		})
	}
}

func TestCleanText(t *testing.T) {
	long := strings.Repeat("x", 70)
	tests := []struct {
		name, in string
		limit    int
		want     string
	}{
		{"plain", "RC low-pass", 0, "RC low-pass"},
		{"markup kept for the writer to escape", "<a&b>", 0, "<a&b>"},
		{"control characters dropped", "a\x00b\x1b[31mc", 0, "ab[31mc"},
		{"line breaks become spaces", " a\nb\tc\r\n", 0, "a b c"},
		{"invalid UTF-8", "a\xffb", 0, "a\uFFFDb"},
		{"XML non-characters", "a\uFFFEb\uFFFF", 0, "ab"},
		{"long name shortened", long, 60, strings.Repeat("x", 59) + "…"},
		{"at the limit kept", long[:60], 60, long[:60]},
		{"unicode kept", "µΩ°", 60, "µΩ°"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := cleanText(tc.in, tc.limit); got != tc.want {
				t.Errorf("cleanText(%q, %d) = %q, want %q", tc.in, tc.limit, got, tc.want)
			}
		})
	}
}

// TestRandomTraces draws seeded random traces salted with every kind of
// undrawable point under random options: Write must return nil or one of
// its errors, never panic, and every SVG it writes must be well-formed.
func TestRandomTraces(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	nan, inf := math.NaN(), math.Inf(1)
	pick := func(vals ...float64) float64 { return vals[rng.IntN(len(vals))] }
	const trials = 60
	drawn := 0
	for trial := range trials {
		var series []Series
		for s := range 1 + rng.IntN(3) {
			n := rng.IntN(40)
			tr := &trace.Trace{}
			f := math.Pow(10, rng.Float64()*4)
			for range n {
				f *= 1 + rng.Float64()
				freq, h := f, complex(rng.NormFloat64(), rng.NormFloat64())
				switch rng.IntN(12) {
				case 0:
					freq = pick(nan, inf, 0, -f)
				case 1:
					h = complex(pick(nan, inf, 0), pick(nan, 0, -inf))
				}
				tr.Points = append(tr.Points, trace.NewPoint(freq, h))
			}
			series = append(series, Series{Name: "s" + strings.Repeat("x", s), Trace: tr, Dashed: s == 1})
		}
		opts := Options{
			Unwrap:  rng.IntN(2) == 0,
			From:    pick(0, 0, 50, 1e4),
			To:      pick(0, 0, 2e3, 1e6),
			GainMin: pick(0, nan, -40), GainMax: pick(0, nan, 10),
			PhaseMin: pick(0, nan, -180), PhaseMax: pick(0, nan, 180),
		}
		var buf bytes.Buffer
		err := Write(&buf, "svg", opts, series...)
		switch {
		case err == nil:
			decodeSVG(t, buf.Bytes())
			drawn++
		case errors.Is(err, ErrNoPoints), errors.Is(err, ErrOptions):
		default:
			t.Errorf("trial %d: unexpected error %v", trial, err)
		}
	}
	t.Logf("%d of %d random pictures drawn", drawn, trials)
	if drawn < trials/4 {
		t.Errorf("only %d of %d random pictures drawn; the generator is too hostile to test drawing", drawn, trials)
	}
}
