package mna

import (
	"errors"
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"tonetrace/dsp/netlist"
)

// fuzzNetlist decodes bytes into a netlist of up to 12 elements on six
// nodes, and a fixture: three bytes of fixture, then four per element
// (kind, two bytes of nodes, value).
func fuzzNetlist(data []byte) (*netlist.Netlist, Fixture) {
	nodes := []string{"0", "in", "out", "a", "b", "c"}
	var fx Fixture
	if len(data) >= 3 {
		fx.SourceOhms = float64(data[0]%4) * 50
		fx.LoadOhms = []float64{0, 1e3, 1e4, math.Inf(1)}[data[1]%4]
		fx.LoadFarads = float64(data[2]%3) * 1e-10
		data = data[3:]
	}
	n := &netlist.Netlist{Title: "fuzz", In: "in", Out: "out"}
	letters := "RCLEU"
	for i := 0; i+4 <= len(data) && len(n.Elements) < 12; i += 4 {
		k := netlist.Kind(data[i] % 5)
		node := func(b byte, shift uint) string { return nodes[int(b>>shift)%len(nodes)] }
		e := netlist.Element{Name: string(letters[k]) + string(rune('a'+len(n.Elements))), Kind: k}
		all := []string{node(data[i+1], 0), node(data[i+1], 4), node(data[i+2], 0), node(data[i+2], 4)}
		e.Nodes = all[:nodeCount(k)]
		v := data[i+3]
		switch k {
		case netlist.Resistor:
			e.Value = math.Pow(10, float64(v%7)+1)
		case netlist.Capacitor:
			e.Value = math.Pow(10, -float64(v%7)-6)
		case netlist.Inductor:
			e.Value = math.Pow(10, -float64(v%5))
		case netlist.VCVS:
			e.Value = float64(int(v%9) - 4)
		}
		n.Elements = append(n.Elements, e)
	}
	return n, fx
}

// FuzzBuild builds random small circuits: Build must not panic, its
// errors must carry the package prefix, and a built system must solve to
// a finite response or report ErrSingular.
func FuzzBuild(f *testing.F) {
	// Seeds: an RC low-pass, a follower, a Sallen-Key, and a floating
	// node.
	f.Add([]byte{1, 1, 1, 0, 0x21, 0, 3, 1, 0x02, 0, 2})
	f.Add([]byte{0, 0, 0, 0, 0x31, 0, 1, 4, 0x32, 0x02, 0, 0, 0x02, 0, 3})
	f.Add([]byte{0, 3, 0, 0, 0x31, 0, 3, 0, 0x43, 0, 3, 1, 0x23, 0, 2, 1, 0x04, 0, 1, 4, 0x42, 0x02, 0})
	f.Add([]byte{2, 2, 2, 0, 0x21, 0, 3, 0, 0x54, 0, 3})
	f.Fuzz(func(t *testing.T, data []byte) {
		n, fx := fuzzNetlist(data)
		d, err := Build(n, fx)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "mna: ") {
				t.Fatalf("error without prefix: %v", err)
			}
			return
		}
		if d.Size() != len(d.Unknowns) || d.Out < 0 || d.Out >= d.Size() {
			t.Fatalf("inconsistent descriptor: size %d, %d unknowns, out %d", d.Size(), len(d.Unknowns), d.Out)
		}
		s := NewSolver(d)
		for _, freq := range []float64{0, 50, 1000, 1e5} {
			h, err := s.Response(freq)
			if err != nil {
				if !errors.Is(err, ErrSingular) {
					t.Fatalf("%g Hz: error not ErrSingular: %v", freq, err)
				}
				continue
			}
			if cmplx.IsNaN(h) || cmplx.IsInf(h) {
				t.Fatalf("%g Hz: H = %v", freq, h)
			}
			// The solution satisfies its equations: each row's residual
			// is small beside the row's size times the largest unknown
			// (a normwise backward error per row).
			x, _ := s.SolveTo(nil, freq)
			w := 2 * math.Pi * freq
			xmax := 0.0
			for _, v := range x {
				xmax = max(xmax, cmplx.Abs(v))
			}
			for i := range x {
				r, size := complex(-d.B[i], 0), math.Abs(d.B[i])
				for j := range x {
					a := complex(d.G.At(i, j), w*d.C.At(i, j))
					r += a * x[j]
					size += cmplx.Abs(a) * xmax
				}
				if cmplx.Abs(r) > 1e-9*size {
					t.Fatalf("%g Hz: residual %g of row %d (%s) beside %g", freq, cmplx.Abs(r), i, d.Unknowns[i], size)
				}
			}
		}
		if _, err := NewNetwork(n, fx); err != nil {
			t.Fatalf("NewNetwork failed where Build succeeded: %v", err)
		}
	})
}
