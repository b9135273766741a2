package fit

import (
	"fmt"
	"math"
	"strings"
)

// Model is anything that gives a complex frequency response H(j2πf) as a
// function of named, positive parameters — component values of a circuit
// in SI units (Ω, F, H), or any other scale-free positive quantity.
//
// A Model need not be safe for concurrent use; [Fit] calls it from one
// goroutine.
type Model interface {
	// Params returns the names of all adjustable parameters, in a fixed
	// order; Evaluate refers to them by index into this list. The caller
	// must not change the slice.
	Params() []string
	// Value returns the nominal value of the named parameter (names match
	// without regard to case), or NaN when the model has no such
	// parameter. Fits start from the nominal values.
	Value(name string) float64
	// Evaluate writes the response at each frequency freqs[i] (Hz) into
	// dst[i], with parameter free[k] (an index into Params) set to
	// values[k] and every other parameter at its nominal value. It
	// panics when len(dst) != len(freqs) or len(free) != len(values), and
	// returns an error when the response cannot be computed (a singular
	// network, a value the model rejects).
	Evaluate(dst []complex128, freqs []float64, free []int, values []float64) error
}

// Func is a [Model] given by a formula H(f, p), where p holds every
// parameter in the order of Names. Create it with [NewFunc]. It keeps a
// scratch buffer, so one Func must not be evaluated from two goroutines at
// once.
type Func struct {
	names   []string
	nominal []float64
	h       func(f float64, p []float64) complex128
	p       []float64
}

// NewFunc returns a model with the given parameter names, nominal values
// and response formula h(f, p) (f in Hz, p in the order of names). It
// panics when names and nominal differ in length or h is nil. The slices
// are copied.
func NewFunc(names []string, nominal []float64, h func(f float64, p []float64) complex128) *Func {
	if len(names) != len(nominal) {
		panic(fmt.Sprintf("fit: NewFunc with %d names and %d nominal values", len(names), len(nominal)))
	}
	if h == nil {
		panic("fit: NewFunc with a nil response")
	}
	return &Func{
		names:   append([]string(nil), names...),
		nominal: append([]float64(nil), nominal...),
		h:       h,
		p:       make([]float64, len(names)),
	}
}

// Params returns the parameter names given to [NewFunc].
func (m *Func) Params() []string { return m.names }

// Value returns the nominal value of name, or NaN when there is no such
// parameter.
func (m *Func) Value(name string) float64 {
	if i := indexFold(m.names, name); i >= 0 {
		return m.nominal[i]
	}
	return math.NaN()
}

// Evaluate implements [Model]. It reports an error when the formula gives
// a non-finite response.
func (m *Func) Evaluate(dst []complex128, freqs []float64, free []int, values []float64) error {
	if len(dst) != len(freqs) || len(free) != len(values) {
		panic(fmt.Sprintf("fit: Evaluate with %d destinations for %d frequencies, %d indices for %d values",
			len(dst), len(freqs), len(free), len(values)))
	}
	copy(m.p, m.nominal)
	for k, i := range free {
		m.p[i] = values[k]
	}
	for i, f := range freqs {
		h := m.h(f, m.p)
		if math.IsNaN(real(h)) || math.IsNaN(imag(h)) || math.IsInf(real(h), 0) || math.IsInf(imag(h), 0) {
			return fmt.Errorf("fit: the model's response at %g Hz is not finite", f)
		}
		dst[i] = h
	}
	return nil
}

// indexFold returns the index of name in names, compared without regard
// to case, or −1.
func indexFold(names []string, name string) int {
	for i, n := range names {
		if strings.EqualFold(n, name) {
			return i
		}
	}
	return -1
}
