package mna

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"strconv"
	"testing"

	"tonetrace/dsp/netlist"
)

// tolLadder is the relative error allowed between MNA and the chain
// matrix product for random ladders, whose values span six decades.
const tolLadder = 1e-9

// ladderPart is one series or shunt arm of a ladder: a resistor,
// capacitor or inductor, or a resistor in series with a capacitor.
type ladderPart struct {
	kind  int // 0 R, 1 C, 2 L, 3 R+C in series
	r, cv float64
}

// impedance returns the arm's impedance at angular frequency w.
func (p ladderPart) impedance(w float64) complex128 {
	switch p.kind {
	case 0:
		return complex(p.r, 0)
	case 1:
		return 1 / complex(0, w*p.cv)
	case 2:
		return complex(0, w*p.cv)
	}
	return complex(p.r, 0) + 1/complex(0, w*p.cv)
}

// elements returns the arm as netlist elements from a to b, naming any
// inner node from tag.
func (p ladderPart) elements(tag, a, b string) []netlist.Element {
	switch p.kind {
	case 0:
		return []netlist.Element{el("R"+tag, a+" "+b, p.r)}
	case 1:
		return []netlist.Element{el("C"+tag, a+" "+b, p.cv)}
	case 2:
		return []netlist.Element{el("L"+tag, a+" "+b, p.cv)}
	}
	mid := "m" + tag
	return []netlist.Element{el("R"+tag, a+" "+mid, p.r), el("C"+tag, mid+" "+b, p.cv)}
}

func randomPart(rng *rand.Rand) ladderPart {
	logU := func(lo, hi float64) float64 { return lo * math.Pow(hi/lo, rng.Float64()) }
	p := ladderPart{kind: rng.IntN(4), r: logU(10, 1e6)}
	switch p.kind {
	case 1, 3:
		p.cv = logU(1e-10, 1e-5)
	case 2:
		p.cv = logU(1e-5, 1)
	}
	return p
}

// TestRandomLadders compares MNA with the chain (ABCD) matrices of a
// cascade of series impedances [[1, Z], [0, 1]] and shunt admittances
// [[1, 0], [Y, 1]], for which V_in = A·V_out with the output open, so
// H = 1/A (Pozar, Microwave Engineering, 4th ed. 2012, Table 4.1 — from
// memory). The fixture's source resistance is a first series arm and its
// load a last shunt arm. Ladders of 1 to 10 sections with random parts,
// seeded.
func TestRandomLadders(t *testing.T) {
	rng := rand.New(rand.NewPCG(2024, 11))
	for trial := range 60 {
		sections := 1 + rng.IntN(10)
		series := make([]ladderPart, sections)
		shunt := make([]ladderPart, sections)
		var elems []netlist.Element
		node := "in"
		for i := range sections {
			next := "n" + strconv.Itoa(i)
			if i == sections-1 {
				next = "out"
			}
			series[i], shunt[i] = randomPart(rng), randomPart(rng)
			elems = append(elems, series[i].elements("s"+strconv.Itoa(i), node, next)...)
			elems = append(elems, shunt[i].elements("p"+strconv.Itoa(i), next, "0")...)
			node = next
		}
		var fx Fixture
		if rng.IntN(2) == 1 {
			fx = Fixture{SourceOhms: 50 * math.Pow(20, rng.Float64()), LoadOhms: 1e4 * math.Pow(100, rng.Float64()), LoadFarads: 1e-10 * rng.Float64()}
		}
		s := NewSolver(mustBuild(t, nl("ladder "+strconv.Itoa(trial), elems...), fx))
		for _, f := range []float64{3, 100, 1000, 20e3, 1e6} {
			w := 2 * math.Pi * f
			a, b, c, d := complex(1, 0), complex(0, 0), complex(0, 0), complex(1, 0)
			mulSeries := func(z complex128) { b, d = a*z+b, c*z+d }
			mulShunt := func(y complex128) { a, c = a+b*y, c+d*y }
			if fx.SourceOhms > 0 {
				mulSeries(complex(fx.SourceOhms, 0))
			}
			for i := range sections {
				mulSeries(series[i].impedance(w))
				mulShunt(1 / shunt[i].impedance(w))
			}
			if fx.loaded() {
				mulShunt(complex(1/fx.LoadOhms, w*fx.LoadFarads))
			} else {
				mulShunt(complex(0, w*fx.LoadFarads))
			}
			want := 1 / a
			got := mustResponse(t, s, f)
			if cmplx.Abs(got-want) > tolLadder*cmplx.Abs(want) {
				t.Errorf("ladder %d (%d sections) at %g Hz: %v, want %v (relative error %.2g)", trial, sections, f, got, want,
					cmplx.Abs(got-want)/cmplx.Abs(want))
			}
		}
	}
}
