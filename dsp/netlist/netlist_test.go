package netlist

import (
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"
)

const sample = "* sample\nR1 in mid 4k7\nC1 mid out 22n\nR2 out 0 10k\nE1 buf 0 out 0 2\nU1 amp buf amp\nL1 amp out 10m\n"

func mustParse(t *testing.T, text string) *Netlist {
	t.Helper()
	n, err := parseText(text)
	if err != nil {
		t.Fatal(err)
	}
	return n
}

func TestKindString(t *testing.T) {
	for k, want := range map[Kind]string{Resistor: "R", Capacitor: "C", Inductor: "L", VCVS: "E", OpAmp: "U", Kind(-1): "?"} {
		if got := k.String(); got != want {
			t.Errorf("Kind(%d).String() = %q, want %q", int(k), got, want)
		}
	}
}

func TestClone(t *testing.T) {
	n := mustParse(t, sample)
	c := n.Clone()
	if !reflect.DeepEqual(c, n) {
		t.Fatal("the clone differs from the original")
	}
	c.Elements[0].Nodes[0] = "changed"
	c.Elements[1].Value = 1
	c.Title = "other"
	if n.Elements[0].Nodes[0] != "in" || n.Elements[1].Value != 22e-9 || n.Title != "sample" {
		t.Errorf("changing the clone changed the original: %+v", n)
	}
}

func TestElement(t *testing.T) {
	n := mustParse(t, sample)
	cases := []struct {
		name   string
		lookup string
		want   string
		ok     bool
	}{
		{"exact", "C1", "C1", true},
		{"lower case", "c1", "C1", true},
		{"op-amp", "u1", "U1", true},
		{"absent", "R9", "", false},
		{"empty", "", "", false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e, ok := n.Element(c.lookup)
			if ok != c.ok || (ok && e.Name != c.want) {
				t.Fatalf("Element(%q) = %v, %v; want %q, %v", c.lookup, e, ok, c.want, c.ok)
			}
		})
	}
	e, _ := n.Element("r2")
	e.Value = 47e3
	if n.Elements[2].Value != 47e3 {
		t.Error("the pointer Element returns is not into the netlist")
	}
}

func TestSetValue(t *testing.T) {
	cases := []struct {
		name    string
		element string
		v       float64
		wantErr string
	}{
		{"resistor", "r1", 5.6e3, ""},
		{"capacitor", "C1", 1e-9, ""},
		{"inductor", "L1", 22e-3, ""},
		{"gain", "E1", -3, ""},
		{"zero gain", "e1", 0, ""},
		{"unknown", "R9", 1, `no such element: "R9"; the elements are "R1", "C1", "R2", "E1", "U1", "L1"`},
		{"op-amp", "U1", 1, "U1 is an ideal op-amp and has no value"},
		{"zero resistance", "R1", 0, "the resistance must be positive, not 0"},
		{"negative capacitance", "C1", -1e-9, "the capacitance must be positive"},
		{"NaN", "R1", math.NaN(), "must be finite, not NaN"},
		{"infinite gain", "E1", math.Inf(1), "must be finite, not +Inf"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n := mustParse(t, sample)
			before := n.Clone()
			err := n.SetValue(c.element, c.v)
			if c.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), c.wantErr) {
					t.Fatalf("error %v, want one containing %q", err, c.wantErr)
				}
				if !reflect.DeepEqual(n, before) {
					t.Error("the netlist changed despite the error")
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if e, _ := n.Element(c.element); e.Value != c.v {
				t.Errorf("value %v, want %v", e.Value, c.v)
			}
		})
	}
	n := mustParse(t, sample)
	if err := n.SetValue("Rx", 1); !errors.Is(err, ErrNoElement) {
		t.Errorf("error %v does not wrap ErrNoElement", err)
	}
}

func TestNodes(t *testing.T) {
	n := mustParse(t, sample)
	want := []string{"in", "mid", "out", "buf", "amp"}
	if got := n.Nodes(); !reflect.DeepEqual(got, want) {
		t.Errorf("Nodes() = %q, want %q", got, want)
	}
	built := &Netlist{Elements: []Element{
		{Name: "R1", Kind: Resistor, Nodes: []string{"a", "GND"}},
		{Name: "R2", Kind: Resistor, Nodes: []string{"b", "a"}},
	}}
	if got := built.Nodes(); !reflect.DeepEqual(got, []string{"a", "b"}) {
		t.Errorf("Nodes() of a built netlist = %q, want [a b]", got)
	}
}

// TestPackageDocExample parses the sample of the package documentation.
func TestPackageDocExample(t *testing.T) {
	const text = `*** presence lift for a guitar preamp
R1 in mid 4k7
C1 mid out 22n
R2 out 0 10k
E1 buf 0 out 0 2        ; voltage-controlled voltage source, gain 2
U1 amp buf amp          ; ideal op-amp: output, +input, −input
L1 amp out 10mH
+                       ; a '+' line continues the line above
.io in out              ; optional: the input and output nodes
.end                    ; optional: nothing below is read
`
	n := mustParse(t, text)
	if n.Title != "presence lift for a guitar preamp" || len(n.Elements) != 6 {
		t.Errorf("title %q, %d elements", n.Title, len(n.Elements))
	}
	if e, _ := n.Element("L1"); e.Value != 10e-3 || e.Line != 7 {
		t.Errorf("L1 = %+v", e)
	}
}

// TestKindUnit checks the SI unit symbols of element values (SI Brochure,
// 9th ed., Table 4, from memory).
func TestKindUnit(t *testing.T) {
	for k, want := range map[Kind]string{Resistor: "Ω", Capacitor: "F", Inductor: "H", VCVS: "", OpAmp: ""} {
		if got := k.Unit(); got != want {
			t.Errorf("%v.Unit() = %q, want %q", k, got, want)
		}
	}
}
