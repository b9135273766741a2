package netlist

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// FuzzParse feeds arbitrary text to Parse. It must never panic; it returns
// either a netlist that Format writes and Parse reads back unchanged (and
// that formats to the same text again), or problems that are each a
// one-line *Error naming the file, a position inside the text (or none)
// and a hint.
func FuzzParse(f *testing.F) {
	files, _ := filepath.Glob("../../testdata/networks/*.cir")
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(string(data))
		}
	}
	for _, s := range []string{
		"", "R1 in out 10k\nC1 out 0 15n\n", "V1 in 0 AC 1\n", "rc filter\nR1 in out 1k\n",
		"R1 in\n+ out\n+10k\nC1 out 0 15n\n", "+ R1 in out 1k\n", "R1 in out 1m\n", "C1 in out 100f\n",
		"R1 in out 4.7 kΩ\n", "E1 out 0 a b 1\nR2 a b 1k\n", ".io a A\nR1 a 0 1k\n", ".io in\n",
		".control\nrun\n.endc\nU1 out in out\n", "R1 in out 1k\nr1 out 0 1k\n", "U1 gnd in out\n",
		"U1 out in out\nE1 out 0 in 0 2\n", "\ufeff* t\r\nR1\tin\tout\t4.7k\u03a9\r\n", "R1 ïn ÖUT 1meg\n.io ïn öut\n",
		"L1 in out 10MH\n", "E1 out 0 in 0 20dB\n", "R1 in out 1e-400\n", "* \xff\nR1 in \xfe 1k\nR2 \xfe out 1k\n",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, text string) {
		const name = "fuzz.cir"
		n, err := Parse(strings.NewReader(text), name)
		if err != nil {
			if n != nil {
				t.Fatal("a netlist was returned with an error")
			}
			lines := strings.Count(text, "\n") + 1
			for _, e := range unjoin(err) {
				var pe *Error
				if !errors.As(e, &pe) {
					t.Fatalf("problem %T %q is not a *Error", e, e)
				}
				msg := pe.Error()
				if strings.ContainsAny(msg, "\n\r") || pe.Msg == "" || pe.Hint == "" || pe.File != name {
					t.Fatalf("problem %q is not one line with a message, a hint and the file name", msg)
				}
				if pe.Line < 0 || pe.Line > lines || pe.Column < 0 || (pe.Line == 0 && pe.Column != 0) {
					t.Fatalf("problem %q has position %d:%d outside the text (%d lines)", msg, pe.Line, pe.Column, lines)
				}
			}
			return
		}
		var b bytes.Buffer
		if err := Format(&b, n); err != nil {
			t.Fatalf("a parsed netlist does not format: %v", err)
		}
		back, err := Parse(bytes.NewReader(b.Bytes()), name)
		if err != nil {
			t.Fatalf("formatted netlist does not parse: %v\n%s", err, b.String())
		}
		if back.Title != n.Title || back.In != n.In || back.Out != n.Out ||
			!reflect.DeepEqual(withoutLines(back.Elements), withoutLines(n.Elements)) {
			t.Fatalf("round trip differs:\n got %+v\nwant %+v\n%s", back, n, b.String())
		}
		var again bytes.Buffer
		if err := Format(&again, back); err != nil || again.String() != b.String() {
			t.Fatalf("second Format differs (%v):\n%s\n---\n%s", err, again.String(), b.String())
		}
	})
}
