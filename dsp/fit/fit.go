// Package fit adjusts chosen component values of a circuit model so that
// its predicted response matches a measured trace, and reports each value
// with its standard uncertainty and the nearest IEC 60063 preferred values.
//
// The fit minimises the weighted sum of squares of two residuals per
// measured point,
//
//	r_gain  = (dB_model − dB_meas) / σ_dB
//	r_phase = wrap(deg_model − deg_meas) / σ_deg
//
// where wrap brings an angle into (−180°, 180°] and σ are the point's
// standard uncertainties from the trace's gain_u_db and phase_u_deg
// columns, or defaults (0.1 dB, 1°) where those were not measured. Either
// residual may be left out (Options.Use). Components are positive, so the
// fit works in their natural logarithms: steps are relative, and a 10 pF
// and a 10 kΩ part are treated alike.
//
// The minimiser is gonum's optimize.Newton given the Gauss–Newton
// approximation JᵀJ of the Hessian and the gradient Jᵀr, with a
// backtracking (Armijo) line search. Newton's added multiple of the
// identity when JᵀJ is not positive definite makes it a damped Gauss–Newton
// (Levenberg-like) method. J is the Jacobian of the residuals with respect
// to the log-values, by central differences (step 1e-4). The fit starts at
// the model's nominal values; when that start does not converge or leaves
// a poor fit (reduced χ² above 4), it tries further starts within a decade
// of the nominal values and keeps the best.
//
// Before fitting, and again at the solution, Fit checks the Jacobian: a
// free component whose column is zero has no influence (NoInfluenceError);
// columns that are linearly dependent, such as R and C of a first-order
// section, which act only through R·C, make the components impossible to
// tell apart (NotIdentifiableError), and the error names them.
//
// Uncertainties come from the covariance of the log-values at the
// solution, cov = s²·(JᵀJ)⁻¹, and are reported as u = value·√cov_ii
// (first order). When every residual's σ was measured (the trace carries
// uncertainty columns for the fitted quantities), the weights are taken as
// absolute and s² = 1; otherwise the σ are only relative weights and
// s² = RSS/(m − p), the residual sum of squares over the degrees of
// freedom. Options.Sigma overrides this choice.
package fit

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"tonetrace/dsp/eseries"
	"tonetrace/dsp/trace"
)

// Quantity selects which part of the response is fitted.
type Quantity int

const (
	// GainAndPhase fits both gain (dB) and phase (degrees); the default.
	GainAndPhase Quantity = iota
	// GainOnly fits the gain alone, for traces whose phase is not
	// trusted.
	GainOnly
	// PhaseOnly fits the phase alone.
	PhaseOnly
)

// String returns "gain and phase", "gain" or "phase".
func (q Quantity) String() string {
	switch q {
	case GainAndPhase:
		return "gain and phase"
	case GainOnly:
		return "gain"
	case PhaseOnly:
		return "phase"
	}
	return fmt.Sprintf("Quantity(%d)", int(q))
}

// Sigma selects how the residual weights scale the uncertainties.
type Sigma int

const (
	// SigmaAuto treats the weights as absolute when every fitted residual
	// has a measured uncertainty in the trace, else as relative; the
	// default.
	SigmaAuto Sigma = iota
	// SigmaAbsolute takes the σ as true standard uncertainties:
	// cov = (JᵀJ)⁻¹.
	SigmaAbsolute
	// SigmaRelative takes the σ as relative weights only and scales the
	// covariance by the reduced χ²: cov = RSS/(m−p)·(JᵀJ)⁻¹.
	SigmaRelative
)

// Defaults of [Options].
const (
	DefaultGainU         = 0.1 // dB
	DefaultPhaseU        = 1.0 // degrees
	DefaultMaxIterations = 100
	DefaultStarts        = 8
)

// Options tunes a fit. The zero value fits gain and phase with the
// defaults below.
type Options struct {
	// Use selects the fitted quantity; default GainAndPhase.
	Use Quantity
	// GainU is the standard uncertainty in dB assumed for points whose
	// GainU is not measured (NaN or ≤ 0); 0 means DefaultGainU (0.1 dB).
	// Must not be negative.
	GainU float64
	// PhaseU is the standard uncertainty in degrees assumed for points
	// whose PhaseU is not measured; 0 means DefaultPhaseU (1°). Must not
	// be negative.
	PhaseU float64
	// Sigma selects absolute or relative weights for the uncertainties;
	// default SigmaAuto.
	Sigma Sigma
	// MaxIterations limits the iterations from each start; 0 means
	// DefaultMaxIterations (100). Must not be negative.
	MaxIterations int
	// Starts is the largest number of starting points tried: the nominal
	// values first, then, only when that fit fails to converge or fits
	// poorly, points spread within a decade of them. 0 means
	// DefaultStarts (8); 1 tries only the nominal values. Must not be
	// negative.
	Starts int
	// Start overrides the model's nominal values as the starting point,
	// by component name (any case). Values must be positive and finite.
	Start map[string]float64
}

// Component is one fitted component value.
type Component struct {
	// Name is the component's name as the model spells it.
	Name string
	// Value is the fitted value in the component's unit (Ω, F, H, or the
	// parameter's own unit).
	Value float64
	// Uncertainty is the standard uncertainty of Value in the same unit
	// (see the package doc for how it is scaled); NaN when it cannot be
	// estimated (as many measured values as components, with relative
	// weights).
	Uncertainty float64
	// E12, E24 and E96 are the nearest preferred values (IEC 60063), by
	// ratio.
	E12, E24, E96 float64
}

// Result is the outcome of a fit.
type Result struct {
	// Components are the fitted components in the order they were asked
	// for.
	Components []Component
	// RMSdB and RMSdeg are the root-mean-square differences between the
	// fitted model and the trace over all points, in dB and degrees,
	// whichever quantity was fitted.
	RMSdB, RMSdeg float64
	// Iterations is the number of iterations of the start that gave the
	// result.
	Iterations int
	// Converged reports whether that start reached a minimum.
	Converged bool
	// ReducedChiSquare is RSS/(m − p) of the weighted residuals: near 1
	// when the model fits the trace within its uncertainties; NaN when
	// m = p.
	ReducedChiSquare float64
	// AbsoluteSigma reports whether the uncertainties took the σ as
	// absolute (s² = 1) rather than scaling them by ReducedChiSquare.
	AbsoluteSigma bool
}

// Numerical constants of the method.
const (
	// jacStep is the central-difference step in log-value (a relative
	// change of 1e-4).
	jacStep = 1e-4
	// rankTol is the smallest singular value of the column-normalised
	// Jacobian, relative to the largest, for components to count as
	// identifiable.
	rankTol = 1e-6
	// noInfluenceDB and noInfluenceDeg bound the change of any point per
	// unit change of a log-value (a factor e) below which a component
	// has no influence.
	noInfluenceDB  = 1e-6
	noInfluenceDeg = 1e-5
	// poorFit is the reduced χ² above which further starts are tried.
	poorFit = 4
	// startSpan is the spread of further starts around the first, in
	// decades either way.
	startSpan = 1
)

// Fit adjusts the components named in free (any case) so that model m
// matches the measured points meas, and returns their values, standard
// uncertainties and nearest preferred values. See the package doc for the
// method.
//
// Errors: an unknown or repeated name (*UnknownComponentError lists the
// known ones); a non-positive nominal or start value; a point with a
// non-finite frequency or a zero or non-finite response; fewer measured
// values than free components (ErrTooFewPoints); a free component without
// influence (*NoInfluenceError); components that cannot be told apart
// (*NotIdentifiableError); a model that cannot be evaluated; no
// convergence (*NotConvergedError). With *NotConvergedError, and with
// *NotIdentifiableError found at the solution, the returned Result still
// holds the best values found; with every other error it is empty.
func Fit(m Model, meas []trace.Point, free []string, opts Options) (Result, error) {
	if err := opts.check(); err != nil {
		return Result{}, err
	}
	opts = opts.withDefaults()
	p, x0, err := newProblem(m, meas, free, opts)
	if err != nil {
		return Result{}, err
	}

	// Fail fast on a trace that cannot determine the free components.
	if _, err := p.residuals(x0); err != nil {
		return Result{}, fmt.Errorf("fit: the model cannot be evaluated at the starting values: %w", err)
	}
	if err := p.jacobian(x0); err != nil {
		return Result{}, fmt.Errorf("fit: the model cannot be evaluated near the starting values: %w", err)
	}
	if err := p.diagnose(); err != nil {
		return Result{}, err
	}

	best := p.run(x0, opts.MaxIterations)
	if !best.converged || p.reducedChi2(best.f) > poorFit {
		for _, xs := range p.starts(x0, opts.Starts-1) {
			r := p.run(xs, opts.MaxIterations)
			if r.better(best) {
				best = r
			}
		}
	}

	res, err := p.result(best)
	if err != nil {
		return res, err
	}
	if !best.converged {
		return res, &NotConvergedError{Iterations: best.iters}
	}
	return res, nil
}

func (o Options) check() error {
	switch {
	case o.Use < GainAndPhase || o.Use > PhaseOnly:
		return fmt.Errorf("fit: Options.Use is %d; use GainAndPhase, GainOnly or PhaseOnly", int(o.Use))
	case o.Sigma < SigmaAuto || o.Sigma > SigmaRelative:
		return fmt.Errorf("fit: Options.Sigma is %d; use SigmaAuto, SigmaAbsolute or SigmaRelative", int(o.Sigma))
	case !(o.GainU >= 0) || math.IsInf(o.GainU, 1):
		return fmt.Errorf("fit: Options.GainU is %g dB; give a positive uncertainty or 0 for the default %g dB", o.GainU, DefaultGainU)
	case !(o.PhaseU >= 0) || math.IsInf(o.PhaseU, 1):
		return fmt.Errorf("fit: Options.PhaseU is %g°; give a positive uncertainty or 0 for the default %g°", o.PhaseU, DefaultPhaseU)
	case o.MaxIterations < 0:
		return fmt.Errorf("fit: Options.MaxIterations is %d; give a positive limit or 0 for the default %d", o.MaxIterations, DefaultMaxIterations)
	case o.Starts < 0:
		return fmt.Errorf("fit: Options.Starts is %d; give a positive number or 0 for the default %d", o.Starts, DefaultStarts)
	}
	return nil
}

func (o Options) withDefaults() Options {
	if o.GainU == 0 {
		o.GainU = DefaultGainU
	}
	if o.PhaseU == 0 {
		o.PhaseU = DefaultPhaseU
	}
	if o.MaxIterations == 0 {
		o.MaxIterations = DefaultMaxIterations
	}
	if o.Starts == 0 {
		o.Starts = DefaultStarts
	}
	return o
}

// result turns a finished run into a Result, with uncertainties from the
// Jacobian at the solution.
func (p *problem) result(r run) (Result, error) {
	res := Result{
		Iterations: r.iters,
		Converged:  r.converged,
	}
	if _, err := p.residuals(r.x); err != nil {
		return Result{}, fmt.Errorf("fit: the model cannot be evaluated at the fitted values: %w", err)
	}
	res.RMSdB, res.RMSdeg = p.rms()
	if err := p.jacobian(r.x); err != nil {
		return Result{}, fmt.Errorf("fit: the model cannot be evaluated near the fitted values: %w", err)
	}
	res.ReducedChiSquare = p.reducedChi2(r.f)
	res.AbsoluteSigma = p.absolute
	s2 := 1.0
	if !p.absolute {
		s2 = res.ReducedChiSquare
	}
	identErr := p.diagnose()
	variance := p.logVariance()
	res.Components = make([]Component, len(p.free))
	for j := range p.free {
		v := math.Exp(r.x[j])
		c := Component{
			Name:        p.names[j],
			Value:       v,
			Uncertainty: v * math.Sqrt(s2*variance[j]),
			E12:         eseries.Nearest(v, eseries.E12),
			E24:         eseries.Nearest(v, eseries.E24),
			E96:         eseries.Nearest(v, eseries.E96),
		}
		res.Components[j] = c
	}
	if identErr != nil {
		// The variances of components that cannot be told apart are
		// meaningless; say so rather than print a huge number.
		var names []string
		var ni *NotIdentifiableError
		var nf *NoInfluenceError
		switch {
		case errors.As(identErr, &ni):
			names = ni.Names
		case errors.As(identErr, &nf):
			names = nf.Names
		}
		for j := range res.Components {
			if slices.Contains(names, res.Components[j].Name) {
				res.Components[j].Uncertainty = math.Inf(1)
			}
		}
		return res, identErr
	}
	return res, nil
}

// rms returns the RMS gain and phase differences of the last residuals
// evaluation, over all points.
func (p *problem) rms() (db, deg float64) {
	var sg, sp float64
	for i := range p.freqs {
		d := dB(p.h[i]) - p.gain[i]
		a := trace.WrapDeg(degrees(p.h[i]) - p.phase[i])
		sg += d * d
		sp += a * a
	}
	n := float64(len(p.freqs))
	return math.Sqrt(sg / n), math.Sqrt(sp / n)
}

func dB(h complex128) float64      { return 20 * math.Log10(cmplx.Abs(h)) }
func degrees(h complex128) float64 { return cmplx.Phase(h) * (180 / math.Pi) }
