package netlist

import (
	"bytes"
	"fmt"
	"strings"
	"testing"
)

// ladderText returns an RC ladder of the given number of elements (even):
// series resistors from "in" to "out" with a capacitor to ground at each
// node.
func ladderText(elements int) string {
	var b strings.Builder
	b.WriteString("* RC ladder for benchmarks\n")
	prev := "in"
	for i := range elements / 2 {
		next := fmt.Sprintf("n%d", i)
		if i == elements/2-1 {
			next = "out"
		}
		fmt.Fprintf(&b, "R%d %s %s 4k7\nC%d %s 0 2n2 ; shunt\n", i, prev, next, i, next)
		prev = next
	}
	b.WriteString(".io in out\n.end\n")
	return b.String()
}

func BenchmarkParse(b *testing.B) {
	for _, size := range []int{20, 200} {
		data := []byte(ladderText(size))
		b.Run(fmt.Sprintf("%d_elements", size), func(b *testing.B) {
			r := bytes.NewReader(data)
			b.ReportAllocs()
			b.SetBytes(int64(len(data)))
			for b.Loop() {
				r.Reset(data)
				if _, err := Parse(r, "ladder.cir"); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkFormat(b *testing.B) {
	n, err := Parse(strings.NewReader(ladderText(20)), "ladder.cir")
	if err != nil {
		b.Fatal(err)
	}
	var buf bytes.Buffer
	b.ReportAllocs()
	for b.Loop() {
		buf.Reset()
		if err := Format(&buf, n); err != nil {
			b.Fatal(err)
		}
	}
}
