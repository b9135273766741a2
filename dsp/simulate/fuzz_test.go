package simulate

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"tonetrace/dsp/mna"
)

// FuzzNew feeds New arbitrary small descriptors: it must return a
// simulator or an error, never panic, and a simulator it returns must
// give finite output for a bounded input (unstable networks are refused).
func FuzzNew(f *testing.F) {
	// Seeds: the RC low-pass, the Sallen-Key and the differentiator,
	// encoded as below.
	for _, d := range []*mna.Descriptor{rcLowPass(10e3, 15e-9), sallenKey(), differentiator()} {
		f.Add(encode(d))
	}
	f.Add([]byte{1, 5, 0, 5})
	f.Add([]byte{3, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0})
	f.Fuzz(func(t *testing.T, data []byte) {
		d := decode(data)
		if d == nil {
			return
		}
		sim, err := New(d, testRate, Options{})
		if err != nil {
			if err.Error() == "" {
				t.Fatal("empty error message")
			}
			return
		}
		x := make([]float64, 64)
		for i := range x {
			x[i] = 1
		}
		y := make([]float64, len(x))
		sim.Process(y, x)
		for i, v := range y {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("output %d is %v for a bounded input", i, v)
			}
		}
	})
}

// fuzzValues are the entries a byte can stand for.
var fuzzValues = [...]float64{0, 1, -1, 1e-4, -1e-4, 1e-9, -1e-9, 1e-2, -1e-2, 1e3, 2, -2, 1e-6, 1e-12, 0.5, 0}

// decode makes a descriptor from bytes: the first is N (1…6), then N²
// entries of G, N² of C, N of B (one byte each, through fuzzValues), then
// the output index. Missing bytes are 0.
func decode(data []byte) *mna.Descriptor {
	if len(data) == 0 {
		return nil
	}
	n := int(data[0])%6 + 1
	at := 1
	next := func() float64 {
		if at >= len(data) {
			return 0
		}
		v := fuzzValues[int(data[at])%len(fuzzValues)]
		at++
		return v
	}
	g, c := mat.NewDense(n, n, nil), mat.NewDense(n, n, nil)
	for i := range n {
		for j := range n {
			g.Set(i, j, next())
		}
	}
	for i := range n {
		for j := range n {
			c.Set(i, j, next())
		}
	}
	b := make([]float64, n)
	for i := range b {
		b[i] = next()
	}
	out := 0
	if at < len(data) {
		out = int(data[at]) % n
	}
	return &mna.Descriptor{G: g, C: c, B: b, Out: out}
}

// encode is decode's inverse for the entries that fuzzValues holds (others
// become the nearest by index 0); used for the seeds.
func encode(d *mna.Descriptor) []byte {
	n := d.Size()
	if n > 6 {
		return []byte{0}
	}
	code := func(v float64) byte {
		best, bestErr := 0, math.Inf(1)
		for i, f := range fuzzValues {
			if e := math.Abs(f - v); e < bestErr {
				best, bestErr = i, e
			}
		}
		return byte(best)
	}
	data := []byte{byte(n - 1)}
	for i := range n {
		for j := range n {
			data = append(data, code(d.G.At(i, j)))
		}
	}
	for i := range n {
		for j := range n {
			data = append(data, code(d.C.At(i, j)))
		}
	}
	for _, v := range d.B {
		data = append(data, code(v))
	}
	return append(data, byte(d.Out))
}
