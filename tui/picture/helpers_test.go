package picture

import (
	"bytes"
	"encoding/xml"
	"errors"
	"io"
	"math"
	"math/cmplx"
	"strconv"
	"strings"
	"testing"

	"tonetrace/dsp/trace"
)

// The first-order RC network of REFERENCES.md §5: R = 10 kΩ, C = 15 nF,
// fc = 1/(2πRC) = 1061.0330 Hz ([V], ngspice-39 AC analysis).
const (
	rcR  = 10e3
	rcC  = 15e-9
	rcFc = 1061.0330 // Hz, REFERENCES.md §5 [V]
)

// rcLowPass returns H = 1/(1 + jωRC) of the §5 network.
func rcLowPass(f float64) complex128 {
	return 1 / complex(1, 2*math.Pi*f*rcR*rcC)
}

// rcHighPass returns H = jωRC/(1 + jωRC) of the §5 network.
func rcHighPass(f float64) complex128 {
	jwrc := complex(0, 2*math.Pi*f*rcR*rcC)
	return jwrc / (1 + jwrc)
}

// logGrid returns n points per decade from 10^loExp to 10^hiExp hertz,
// each exactly a power of ten where i/n is an integer.
func logGrid(loExp, hiExp, perDecade int) []float64 {
	var fs []float64
	for i := loExp * perDecade; i <= hiExp*perDecade; i++ {
		fs = append(fs, math.Pow(10, float64(i)/float64(perDecade)))
	}
	return fs
}

// sampled returns a trace of h at the frequencies fs.
func sampled(fs []float64, h func(float64) complex128) *trace.Trace {
	t := &trace.Trace{Points: make([]trace.Point, len(fs))}
	for i, f := range fs {
		t.Points[i] = trace.NewPoint(f, h(f))
	}
	return t
}

// svgDoc is what the tests read back from an SVG: the root size, the
// strings of every text element, and every path with its style.
type svgDoc struct {
	width, height string
	texts         []string
	paths         []svgPath
}

type svgPath struct {
	d, style string
}

// stroke returns the stroke colour of the path ("#RRGGBB"), or "".
func (p svgPath) stroke() string { return styleValue(p.style, "stroke") }

func styleValue(style, key string) string {
	for _, kv := range strings.Split(style, ";") {
		if k, v, ok := strings.Cut(kv, ":"); ok && strings.TrimSpace(k) == key {
			return strings.TrimSpace(v)
		}
	}
	return ""
}

// vertices parses the M and L commands of the path's data.
func (p svgPath) vertices(t *testing.T) [][2]float64 {
	t.Helper()
	var out [][2]float64
	for _, cmd := range splitPath(p.d) {
		if cmd[0] != 'M' && cmd[0] != 'L' {
			t.Fatalf("path %q: unexpected command %q", p.d, cmd)
		}
		x, y, ok := strings.Cut(cmd[1:], ",")
		if !ok {
			t.Fatalf("path %q: bad vertex %q", p.d, cmd)
		}
		xv, err1 := strconv.ParseFloat(x, 64)
		yv, err2 := strconv.ParseFloat(y, 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("path %q: bad vertex %q", p.d, cmd)
		}
		out = append(out, [2]float64{xv, yv})
	}
	return out
}

func splitPath(d string) []string {
	var cmds []string
	start := 0
	for i := 1; i <= len(d); i++ {
		if i == len(d) || strings.IndexByte("MLZQCA", d[i]) >= 0 {
			cmds = append(cmds, d[start:i])
			start = i
		}
	}
	return cmds
}

// decodeSVG reads an SVG with encoding/xml, failing the test on any
// well-formedness error.
func decodeSVG(t *testing.T, data []byte) svgDoc {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(data))
	var doc svgDoc
	var inText bool
	var text strings.Builder
	depth, roots := 0, 0
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed XML: %v", err)
		}
		switch el := tok.(type) {
		case xml.StartElement:
			if depth == 0 {
				roots++
				if el.Name.Local != "svg" {
					t.Fatalf("root element %q, want svg", el.Name.Local)
				}
				doc.width, doc.height = attr(el, "width"), attr(el, "height")
			}
			depth++
			switch el.Name.Local {
			case "text":
				inText = true
				text.Reset()
			case "path":
				doc.paths = append(doc.paths, svgPath{d: attr(el, "d"), style: attr(el, "style")})
			}
		case xml.EndElement:
			depth--
			if el.Name.Local == "text" {
				inText = false
				doc.texts = append(doc.texts, text.String())
			}
		case xml.CharData:
			if inText {
				text.Write(el)
			}
		}
	}
	if roots != 1 || depth != 0 {
		t.Fatalf("SVG has %d root elements and ends at depth %d; want 1 and 0", roots, depth)
	}
	return doc
}

func attr(el xml.StartElement, name string) string {
	for _, a := range el.Attr {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

// colorHex writes series colour i as the SVG writer does.
func colorHex(i int) string {
	c := seriesColor(i)
	return "#" + strings.ToUpper(hex2(c.R)+hex2(c.G)+hex2(c.B))
}

func hex2(b uint8) string {
	s := strconv.FormatUint(uint64(b), 16)
	if len(s) < 2 {
		s = "0" + s
	}
	return s
}

// pathsOf returns the paths stroked in colour c with the trace line
// width — the data lines and the legend sample of one series.
func (d svgDoc) pathsOf(c string) []svgPath {
	var out []svgPath
	for _, p := range d.paths {
		if p.stroke() == c && styleValue(p.style, "stroke-width") == strconv.FormatFloat(float64(lineWidth), 'g', -1, 64) {
			out = append(out, p)
		}
	}
	return out
}

// gainDB and phaseDeg of a ratio, written out for the tests.
func gainDB(h complex128) float64   { return 20 * math.Log10(cmplx.Abs(h)) }
func phaseDeg(h complex128) float64 { return cmplx.Phase(h) * 180 / math.Pi }
