package fit

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// ErrTooFewPoints is wrapped by the error Fit returns when the trace gives
// fewer measured values than there are free components.
var ErrTooFewPoints = errors.New("fit: fewer measured values than free components")

// UnknownComponentError reports a free name the model does not have.
type UnknownComponentError struct {
	// Name is the name asked for.
	Name string
	// Known lists the model's parameter names.
	Known []string
}

func (e *UnknownComponentError) Error() string {
	if len(e.Known) == 0 {
		return fmt.Sprintf("fit: unknown component %q; the model has no adjustable components", e.Name)
	}
	return fmt.Sprintf("fit: unknown component %q; the model has %s", e.Name, strings.Join(e.Known, ", "))
}

// NoInfluenceError reports free components whose value does not change
// the fitted part of the response anywhere in the measured range: a change
// by a factor e moves no point by more than 1e-6 dB or 1e-5°.
type NoInfluenceError struct {
	// Names are the components without influence, as the model spells
	// them.
	Names []string
	// Quantity is what was fitted.
	Quantity Quantity
	// FMin and FMax are the measured range in Hz.
	FMin, FMax float64
}

func (e *NoInfluenceError) Error() string {
	what := "response"
	switch e.Quantity {
	case GainOnly:
		what = "gain"
	case PhaseOnly:
		what = "phase"
	}
	if len(e.Names) == 1 {
		return fmt.Sprintf("fit: changing %s does not change the %s over the measured range (%s to %s): "+
			"it cannot be fitted from this trace; fix it at its nominal value or measure where it matters",
			e.Names[0], what, hz(e.FMin), hz(e.FMax))
	}
	return fmt.Sprintf("fit: changing %s does not change the %s over the measured range (%s to %s): "+
		"they cannot be fitted from this trace; fix them at their nominal values or measure where they matter",
		joinList(e.Names, "or"), what, hz(e.FMin), hz(e.FMax))
}

// Relation says how components that cannot be told apart act together.
type Relation int

const (
	// Combination: some other combination of the components leaves the
	// response unchanged.
	Combination Relation = iota
	// Product: only the product of the two components matters (R·C of a
	// first-order section).
	Product
	// Ratio: only the ratio of the two components matters (a divider).
	Ratio
)

// NotIdentifiableError reports free components that the trace cannot tell
// apart: the Jacobian of the residuals with respect to their logarithms is
// rank-deficient (its smallest singular value, columns scaled to unit
// length, is below 1e-6 of its largest), so at least one combination of
// them leaves the response unchanged.
type NotIdentifiableError struct {
	// Names are the components involved, as the model spells them.
	Names []string
	// Relation is Product or Ratio when exactly two components are
	// involved in one such way, else Combination.
	Relation Relation
	// Fix is how many of Names must be fixed to make the rest fittable.
	Fix int
}

func (e *NotIdentifiableError) Error() string {
	fix := "one of them"
	if e.Fix > 1 {
		fix = fmt.Sprintf("%d of them", e.Fix)
	}
	switch e.Relation {
	case Product:
		return fmt.Sprintf("fit: %s and %s only act through their product; fix one of them", e.Names[0], e.Names[1])
	case Ratio:
		return fmt.Sprintf("fit: %s and %s only act through their ratio %s/%s; fix one of them",
			e.Names[0], e.Names[1], e.Names[0], e.Names[1])
	}
	return fmt.Sprintf("fit: %s cannot all be fitted from this trace: changing them together in a certain way "+
		"leaves the response unchanged; fix %s", joinList(e.Names, "and"), fix)
}

// NotConvergedError reports a fit that stopped before reaching a minimum.
type NotConvergedError struct {
	// Iterations is the number of iterations spent.
	Iterations int
}

func (e *NotConvergedError) Error() string {
	return fmt.Sprintf("fit: the fit did not converge after %d iterations; check the measured trace and the starting values",
		e.Iterations)
}

// joinList writes "a", "a and b", "a, b and c".
func joinList(names []string, conj string) string {
	switch len(names) {
	case 0:
		return ""
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + " " + conj + " " + names[len(names)-1]
}

// hz formats a frequency for messages: "20 Hz", "1.5 kHz", "2 MHz".
func hz(f float64) string {
	switch a := math.Abs(f); {
	case a >= 1e6:
		return fmt.Sprintf("%.4g MHz", f/1e6)
	case a >= 1e3:
		return fmt.Sprintf("%.4g kHz", f/1e3)
	}
	return fmt.Sprintf("%.4g Hz", f)
}
