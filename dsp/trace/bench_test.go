package trace

import (
	"bytes"
	"math/rand/v2"
	"strconv"
	"testing"
)

func BenchmarkWrite(b *testing.B) {
	for _, n := range []int{100, 10000} {
		b.Run(strconv.Itoa(n), func(b *testing.B) {
			tr := randomTrace(rand.New(rand.NewPCG(1, 2)), n)
			var buf bytes.Buffer
			if err := Write(&buf, tr); err != nil {
				b.Fatal(err)
			}
			buf.Grow(buf.Len())
			b.ReportAllocs()
			for b.Loop() {
				buf.Reset()
				if err := Write(&buf, tr, ColCoherence); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkRead(b *testing.B) {
	for _, n := range []int{100, 10000} {
		b.Run(strconv.Itoa(n), func(b *testing.B) {
			var buf bytes.Buffer
			if err := Write(&buf, randomTrace(rand.New(rand.NewPCG(1, 2)), n)); err != nil {
				b.Fatal(err)
			}
			text := buf.Bytes()
			r := bytes.NewReader(nil)
			b.SetBytes(int64(len(text)))
			b.ReportAllocs()
			for b.Loop() {
				r.Reset(text)
				if _, err := Read(r); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
