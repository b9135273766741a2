package netlist

import (
	"bytes"
	"math"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

func TestFormatValue(t *testing.T) {
	// The prefixes k, meg, G, p, n, u, m read the same in SPICE (ngspice
	// User's Manual §2.3 — from memory) and here.
	cases := []struct {
		name string
		kind Kind
		v    float64
		want string
	}{
		{"kilohm", Resistor, 4700, "4.7k"},
		{"megohm as meg", Resistor, 1e6, "1meg"},
		{"gigohm", Resistor, 2.2e9, "2.2G"},
		{"ohms", Resistor, 100, "100"},
		{"below an ohm without m", Resistor, 0.47, "0.47"},
		{"far below an ohm", Resistor, 1.5e-5, "1.5e-5"},
		{"many digits", Resistor, 12345.678, "12.345678k"},
		{"nanofarad", Capacitor, 15e-9, "15n"},
		{"microfarad", Capacitor, 2.2e-6, "2.2u"},
		{"millifarad", Capacitor, 4.7e-3, "4.7m"},
		{"below a picofarad", Capacitor, 1e-13, "0.1p"},
		{"far below", Capacitor, 1e-20, "1e-8p"},
		{"farads", Capacitor, 2, "2"},
		{"millihenry", Inductor, 0.01, "10m"},
		{"nanohenry", Inductor, 100e-9, "100n"},
		{"gain", VCVS, 2, "2"},
		{"negative gain", VCVS, -0.5, "-0.5"},
		{"zero gain", VCVS, 0, "0"},
		{"large gain", VCVS, 1e6, "1meg"},
		{"tiny gain", VCVS, 1e-7, "1e-7"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := FormatValue(c.kind, c.v)
			if got != c.want {
				t.Errorf("FormatValue(%v, %v) = %q, want %q", c.kind, c.v, got, c.want)
			}
			back, err := parseValue(c.kind, got)
			if err != nil || back != c.v {
				t.Errorf("%q reads back as %v, %v; want %v", got, back, err, c.v)
			}
		})
	}
}

// TestFormatValueRoundTrip checks exact read-back over random values
// spread across 36 decades, for every kind.
func TestFormatValueRoundTrip(t *testing.T) {
	const trials = 20000
	rng := rand.New(rand.NewPCG(3, 4))
	for _, k := range []Kind{Resistor, Capacitor, Inductor, VCVS} {
		for range trials {
			v := (rng.Float64() + 0.1) * math.Pow(10, float64(rng.IntN(36)-18))
			if rng.IntN(4) == 0 {
				v = math.Round(v*1000) / 1000
			}
			if v == 0 {
				continue
			}
			if k == VCVS && rng.IntN(2) == 0 {
				v = -v
			}
			text := FormatValue(k, v)
			back, err := parseValue(k, text)
			if err != nil || back != v {
				t.Fatalf("%v: %v written as %q reads back as %v, %v", k, v, text, back, err)
			}
		}
	}
}

func TestFormat(t *testing.T) {
	n, err := ParseFile("../../testdata/networks/rc-lowpass.cir")
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := Format(&b, n); err != nil {
		t.Fatal(err)
	}
	const want = `* first-order RC low-pass, 10 kOhm and 15 nF, corner 1061.03 Hz
R1 in  out 10k
C1 out 0   15n
.io in out
.end
`
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
}

// roundTrip formats n, reads the text back and demands the same netlist,
// and the same text when formatted again.
func roundTrip(t *testing.T, n *Netlist) {
	t.Helper()
	var b bytes.Buffer
	if err := Format(&b, n); err != nil {
		t.Fatalf("Format: %v", err)
	}
	back, err := Parse(bytes.NewReader(b.Bytes()), n.Name)
	if err != nil {
		t.Fatalf("formatted text does not parse: %v\n%s", err, b.String())
	}
	if back.Title != n.Title || back.In != n.In || back.Out != n.Out || back.Name != n.Name {
		t.Fatalf("header differs: got %q %q %q %q, want %q %q %q %q\n%s",
			back.Name, back.Title, back.In, back.Out, n.Name, n.Title, n.In, n.Out, b.String())
	}
	if !reflect.DeepEqual(withoutLines(back.Elements), withoutLines(n.Elements)) {
		t.Fatalf("elements differ:\n got %+v\nwant %+v\n%s", back.Elements, n.Elements, b.String())
	}
	var again bytes.Buffer
	if err := Format(&again, back); err != nil {
		t.Fatal(err)
	}
	if again.String() != b.String() {
		t.Fatalf("second Format differs:\n%s\n---\n%s", again.String(), b.String())
	}
}

func TestFormatRoundTrip(t *testing.T) {
	files, err := filepath.Glob("../../testdata/networks/*.cir")
	if err != nil || len(files) == 0 {
		t.Fatalf("no example networks: %v", err)
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			n, err := ParseFile(f)
			if err != nil {
				t.Fatal(err)
			}
			roundTrip(t, n)
		})
	}
	t.Run("random ladders", func(t *testing.T) {
		const trials = 300
		rng := rand.New(rand.NewPCG(5, 6))
		for range trials {
			roundTrip(t, randomLadder(rng, 1+rng.IntN(12)))
		}
	})
}

// randomLadder builds a valid netlist in code: a chain of series R, L or
// C from "in" to "out" with shunt parts to ground, a buffer now and then,
// random values across 24 decades and names in mixed case.
func randomLadder(rng *rand.Rand, sections int) *Netlist {
	n := &Netlist{Name: "ladder.cir", Title: "random ladder " + strconv.Itoa(sections), In: "in", Out: "out"}
	value := func() float64 { return (rng.Float64() + 0.01) * math.Pow(10, float64(rng.IntN(24)-12)) }
	kinds := []Kind{Resistor, Capacitor, Inductor}
	letter := func(k Kind, i int) string {
		s := k.String() + strconv.Itoa(i)
		if rng.IntN(2) == 0 {
			s = strings.ToLower(s)
		}
		return s
	}
	prev := "in"
	for i := range sections {
		next := "n" + strconv.Itoa(i)
		if i == sections-1 {
			next = "out"
		}
		k := kinds[rng.IntN(3)]
		n.Elements = append(n.Elements, Element{Name: letter(k, 2*i), Kind: k, Nodes: []string{prev, next}, Value: value()})
		k = kinds[rng.IntN(3)]
		n.Elements = append(n.Elements, Element{Name: letter(k, 2*i+1), Kind: k, Nodes: []string{next, Ground}, Value: value()})
		if rng.IntN(4) == 0 && next != "out" {
			buf := "b" + strconv.Itoa(i)
			if rng.IntN(2) == 0 {
				n.Elements = append(n.Elements, Element{Name: "U" + strconv.Itoa(i), Kind: OpAmp, Nodes: []string{buf, next, buf}})
			} else {
				g := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(12)-4))
				n.Elements = append(n.Elements, Element{Name: "E" + strconv.Itoa(i), Kind: VCVS, Nodes: []string{buf, Ground, next, Ground}, Value: g})
			}
			next = buf
		}
		prev = next
	}
	if prev != "out" { // the last section ended in a buffer
		n.Elements = append(n.Elements, Element{Name: "Rlast", Kind: Resistor, Nodes: []string{prev, "out"}, Value: value()},
			Element{Name: "Clast", Kind: Capacitor, Nodes: []string{"out", Ground}, Value: value()})
	}
	return n
}

func TestFormatErrors(t *testing.T) {
	ok := func() *Netlist {
		return &Netlist{In: "in", Out: "out", Elements: []Element{
			{Name: "R1", Kind: Resistor, Nodes: []string{"in", "out"}, Value: 1e3},
		}}
	}
	cases := []struct {
		name   string
		change func(n *Netlist)
		want   string
	}{
		{"name of another kind", func(n *Netlist) { n.Elements[0].Name = "C1" }, `"C1": a resistor's name must start with R`},
		{"empty name", func(n *Netlist) { n.Elements[0].Name = "" }, `element ""`},
		{"space in a node", func(n *Netlist) { n.Elements[0].Nodes[1] = "o ut" }, `node "o ut"`},
		{"semicolon in a node", func(n *Netlist) { n.Elements[0].Nodes[1] = "a;b" }, `node "a;b"`},
		{"too few nodes", func(n *Netlist) { n.Elements[0].Nodes = n.Elements[0].Nodes[:1] }, "R1: it has 1 node"},
		{"not finite", func(n *Netlist) { n.Elements[0].Value = math.NaN() }, "not finite"},
		{"unknown kind", func(n *Netlist) { n.Elements[0].Kind = Kind(9) }, "unknown kind 9"},
		{"input with a space", func(n *Netlist) { n.In = "i n" }, `input or output node "i n"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n := ok()
			c.change(n)
			var b bytes.Buffer
			err := Format(&b, n)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want one containing %q", err, c.want)
			}
			if b.Len() != 0 {
				t.Errorf("wrote %q despite the error", b.String())
			}
		})
	}
}

func TestFormatDefaultsAndTitle(t *testing.T) {
	n := &Netlist{Title: "two\nlines", Elements: []Element{{Name: "U1", Kind: OpAmp, Nodes: []string{"out", "in", "out"}}}}
	var b bytes.Buffer
	if err := Format(&b, n); err != nil {
		t.Fatal(err)
	}
	const want = "* two lines\nU1 out in out\n.io in out\n.end\n"
	if b.String() != want {
		t.Errorf("got %q, want %q", b.String(), want)
	}
}
