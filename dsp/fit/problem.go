package fit

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"tonetrace/dsp/trace"
)

// problem is one fit: the model, the measured values and weights, and the
// buffers every evaluation reuses. x is always the vector of natural
// logarithms of the free components' values.
type problem struct {
	model Model
	use   Quantity
	free  []int    // indices into model.Params()
	names []string // free names as the model spells them

	freqs       []float64 // Hz
	gain, phase []float64 // measured dB and degrees
	wg, wp      []float64 // 1/σ of each point's gain and phase residual
	absolute    bool      // weights are absolute (see Sigma)
	nres        int       // number of residuals m

	vals   []float64    // exp(x)
	h      []complex128 // response at the last residuals evaluation
	hp, hm []complex128 // responses at x ± step
	xs     []float64    // perturbed x
	r      []float64    // weighted residuals
	jac    *mat.Dense   // m×p weighted Jacobian ∂r/∂x
	maxDB  []float64    // per column: max |∂dB/∂x| over the fitted points
	maxDeg []float64    // per column: max |∂deg/∂x|

	// Caches, so that gonum's separate calls for the value, gradient and
	// Hessian at one point evaluate the model once.
	rx, jx     []float64
	rf         float64
	rOK, jOK   bool
	fmin, fmax float64 // measured range, Hz
}

// newProblem validates the inputs and returns the problem and the
// starting point.
func newProblem(m Model, meas []trace.Point, free []string, opts Options) (*problem, []float64, error) {
	params := m.Params()
	if len(free) == 0 {
		return nil, nil, fmt.Errorf("fit: no free components; name at least one of %s", joinList(params, "or"))
	}
	p := &problem{model: m, use: opts.Use}
	for _, name := range free {
		i := indexFold(params, name)
		if i < 0 {
			return nil, nil, &UnknownComponentError{Name: name, Known: slices.Clone(params)}
		}
		if slices.Contains(p.free, i) {
			return nil, nil, fmt.Errorf("fit: component %s is named twice; name each free component once", params[i])
		}
		p.free = append(p.free, i)
		p.names = append(p.names, params[i])
	}
	for name := range opts.Start {
		if indexFold(p.names, name) < 0 {
			if indexFold(params, name) < 0 {
				return nil, nil, &UnknownComponentError{Name: name, Known: slices.Clone(params)}
			}
			return nil, nil, fmt.Errorf("fit: a start value is given for %s, which is not free; free it or drop the start value", name)
		}
	}
	x0 := make([]float64, len(p.free))
	for j, name := range p.names {
		v := m.Value(name)
		what := "nominal value"
		for k, s := range opts.Start {
			if strings.EqualFold(name, k) {
				v, what = s, "start value"
			}
		}
		if !(v > 0) || math.IsInf(v, 1) {
			return nil, nil, fmt.Errorf("fit: %s has %s %g; only positive, finite values can be fitted", name, what, v)
		}
		x0[j] = math.Log(v)
	}

	n := len(meas)
	if n == 0 {
		return nil, nil, errors.New("fit: the measured trace has no points")
	}
	p.freqs = make([]float64, n)
	p.gain = make([]float64, n)
	p.phase = make([]float64, n)
	p.wg = make([]float64, n)
	p.wp = make([]float64, n)
	p.absolute = true
	p.fmin, p.fmax = math.Inf(1), math.Inf(-1)
	for i, pt := range meas {
		if !(pt.Freq >= 0) || math.IsInf(pt.Freq, 1) {
			return nil, nil, fmt.Errorf("fit: point %d has frequency %g Hz; frequencies must be finite and not negative", i+1, pt.Freq)
		}
		g, ph := pt.GainDB(), pt.PhaseDeg()
		if math.IsNaN(g) || math.IsInf(g, 0) || math.IsNaN(ph) {
			return nil, nil, fmt.Errorf("fit: point %d (%g Hz) has response %v, whose gain in dB is not finite; drop the point", i+1, pt.Freq, pt.H)
		}
		p.freqs[i], p.gain[i], p.phase[i] = pt.Freq, g, ph
		p.fmin, p.fmax = math.Min(p.fmin, pt.Freq), math.Max(p.fmax, pt.Freq)
		if opts.Use != PhaseOnly {
			su := pt.GainU
			if !(su > 0) || math.IsInf(su, 1) {
				su, p.absolute = opts.GainU, false
			}
			p.wg[i] = 1 / su
			p.nres++
		}
		if opts.Use != GainOnly {
			su := pt.PhaseU
			if !(su > 0) || math.IsInf(su, 1) {
				su, p.absolute = opts.PhaseU, false
			}
			p.wp[i] = 1 / su
			p.nres++
		}
	}
	switch opts.Sigma {
	case SigmaAbsolute:
		p.absolute = true
	case SigmaRelative:
		p.absolute = false
	}
	np := len(p.free)
	if p.nres < np {
		return nil, nil, fmt.Errorf("%w: the trace gives %s (%s, fitting %s) for %s; "+
			"measure more points or fix some components", ErrTooFewPoints,
			count(p.nres, "measured value"), count(n, "point"), opts.Use, count(np, "free component"))
	}

	p.vals = make([]float64, np)
	p.xs = make([]float64, np)
	p.h = make([]complex128, n)
	p.hp = make([]complex128, n)
	p.hm = make([]complex128, n)
	p.r = make([]float64, p.nres)
	p.jac = mat.NewDense(p.nres, np, nil)
	p.maxDB = make([]float64, np)
	p.maxDeg = make([]float64, np)
	p.rx = make([]float64, np)
	p.jx = make([]float64, np)
	return p, x0, nil
}

// evaluate writes the model's response at log-values x into dst.
func (p *problem) evaluate(dst []complex128, x []float64) error {
	for j, v := range x {
		p.vals[j] = math.Exp(v)
	}
	return p.model.Evaluate(dst, p.freqs, p.free, p.vals)
}

// residuals evaluates the weighted residuals at x into p.r and p.h and
// returns half their sum of squares.
func (p *problem) residuals(x []float64) (float64, error) {
	if p.rOK && slices.Equal(p.rx, x) {
		return p.rf, nil
	}
	p.rOK = false
	if err := p.evaluate(p.h, x); err != nil {
		return math.Inf(1), err
	}
	k := 0
	var ss float64
	if p.use != PhaseOnly {
		for i, h := range p.h {
			g := dB(h)
			if math.IsInf(g, 0) || math.IsNaN(g) {
				return math.Inf(1), fmt.Errorf("the model's response at %g Hz is zero", p.freqs[i])
			}
			r := (g - p.gain[i]) * p.wg[i]
			p.r[k] = r
			ss += r * r
			k++
		}
	}
	if p.use != GainOnly {
		for i, h := range p.h {
			r := trace.WrapDeg(degrees(h)-p.phase[i]) * p.wp[i]
			p.r[k] = r
			ss += r * r
			k++
		}
	}
	copy(p.rx, x)
	p.rf, p.rOK = ss/2, true
	return p.rf, nil
}

// jacobian fills p.jac, p.maxDB and p.maxDeg at x by central differences.
func (p *problem) jacobian(x []float64) error {
	if p.jOK && slices.Equal(p.jx, x) {
		return nil
	}
	p.jOK = false
	for j := range x {
		copy(p.xs, x)
		p.xs[j] = x[j] + jacStep
		if err := p.evaluate(p.hp, p.xs); err != nil {
			return err
		}
		p.xs[j] = x[j] - jacStep
		if err := p.evaluate(p.hm, p.xs); err != nil {
			return err
		}
		k := 0
		p.maxDB[j], p.maxDeg[j] = 0, 0
		if p.use != PhaseOnly {
			for i := range p.freqs {
				d := (dB(p.hp[i]) - dB(p.hm[i])) / (2 * jacStep)
				if math.IsNaN(d) || math.IsInf(d, 0) {
					return fmt.Errorf("the model's response at %g Hz is zero near the values tried", p.freqs[i])
				}
				p.maxDB[j] = math.Max(p.maxDB[j], math.Abs(d))
				p.jac.Set(k, j, d*p.wg[i])
				k++
			}
		}
		if p.use != GainOnly {
			for i := range p.freqs {
				d := trace.WrapDeg(degrees(p.hp[i])-degrees(p.hm[i])) / (2 * jacStep)
				p.maxDeg[j] = math.Max(p.maxDeg[j], math.Abs(d))
				p.jac.Set(k, j, d*p.wp[i])
				k++
			}
		}
	}
	copy(p.jx, x)
	p.jOK = true
	return nil
}

// diagnose checks the last Jacobian for free components without
// influence and for components that cannot be told apart.
func (p *problem) diagnose() error {
	var none []string
	for j := range p.free {
		if p.maxDB[j] <= noInfluenceDB && p.maxDeg[j] <= noInfluenceDeg {
			none = append(none, p.names[j])
		}
	}
	if len(none) > 0 {
		return &NoInfluenceError{Names: none, Quantity: p.use, FMin: p.fmin, FMax: p.fmax}
	}
	np := len(p.free)
	if np == 1 {
		return nil
	}
	// Scale the columns to unit length, so that the test sees only their
	// directions.
	m := p.nres
	norm := make([]float64, np)
	jn := mat.NewDense(m, np, nil)
	for j := 0; j < np; j++ {
		norm[j] = mat.Norm(p.jac.ColView(j), 2)
		for i := 0; i < m; i++ {
			jn.Set(i, j, p.jac.At(i, j)/norm[j])
		}
	}
	var svd mat.SVD
	if !svd.Factorize(jn, mat.SVDThin) {
		return errors.New("fit: the Jacobian's singular value decomposition failed; check the trace for extreme values")
	}
	s := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)
	involved := make([]bool, np)
	nNull := 0
	var null []float64 // the first null direction, in log-values
	for k := range s {
		if s[k] >= rankTol*s[0] {
			continue
		}
		nNull++
		dir := make([]float64, np)
		big := 0.0
		for j := 0; j < np; j++ {
			dir[j] = v.At(j, k) / norm[j]
			big = math.Max(big, math.Abs(v.At(j, k)))
		}
		for j := 0; j < np; j++ {
			if math.Abs(v.At(j, k)) > 0.05*big {
				involved[j] = true
			}
		}
		if null == nil {
			null = dir
		}
	}
	if nNull == 0 {
		return nil
	}
	e := &NotIdentifiableError{Fix: nNull}
	var idx []int
	for j := range involved {
		if involved[j] {
			e.Names = append(e.Names, p.names[j])
			idx = append(idx, j)
		}
	}
	if nNull == 1 && len(idx) == 2 {
		// Along the null direction the log-values move as a:b; a = −b
		// keeps the product, a = b the ratio.
		a, b := null[idx[0]], null[idx[1]]
		switch {
		case math.Abs(a+b) <= 1e-3*math.Abs(a):
			e.Relation = Product
		case math.Abs(a-b) <= 1e-3*math.Abs(a):
			e.Relation = Ratio
		}
	}
	return e
}

// logVariance returns the diagonal of (JᵀJ)⁻¹ for the last Jacobian: the
// variances of the log-values for unit weights. Components that cannot be
// told apart get +Inf.
func (p *problem) logVariance() []float64 {
	np := len(p.free)
	out := make([]float64, np)
	var svd mat.SVD
	if !svd.Factorize(p.jac, mat.SVDThin) {
		for j := range out {
			out[j] = math.NaN()
		}
		return out
	}
	s := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)
	for k := range s {
		for j := 0; j < np; j++ {
			vjk := v.At(j, k)
			if s[k] == 0 {
				if vjk != 0 {
					out[j] = math.Inf(1)
				}
				continue
			}
			out[j] += vjk * vjk / (s[k] * s[k])
		}
	}
	return out
}

// reducedChi2 returns 2f/(m−p), NaN when m = p.
func (p *problem) reducedChi2(f float64) float64 {
	dof := p.nres - len(p.free)
	if dof <= 0 {
		return math.NaN()
	}
	return 2 * f / float64(dof)
}

// run is the outcome of one start.
type run struct {
	x         []float64
	f         float64
	iters     int
	converged bool
}

// better reports whether r should replace best: a converged run beats one
// that did not converge; otherwise the lower sum of squares wins.
func (r run) better(best run) bool {
	if r.converged != best.converged {
		return r.converged
	}
	return r.f < best.f
}

// starts returns n further starting points spread within startSpan
// decades of x0, from a fixed seed so that fits are repeatable.
func (p *problem) starts(x0 []float64, n int) [][]float64 {
	if n <= 0 {
		return nil
	}
	rng := rand.New(rand.NewPCG(0x60063, uint64(len(x0))))
	out := make([][]float64, n)
	for k := range out {
		xs := make([]float64, len(x0))
		for j := range xs {
			xs[j] = x0[j] + startSpan*math.Ln10*(2*rng.Float64()-1)
		}
		out[k] = xs
	}
	return out
}

// run minimises the sum of squares from x0 with gonum's Newton method on
// the Gauss–Newton Hessian.
func (p *problem) run(x0 []float64, maxIter int) run {
	prob := optimize.Problem{
		// A point where the model cannot be evaluated counts as infinitely
		// bad, so the line search steps back from it.
		Func: func(x []float64) float64 {
			f, err := p.residuals(x)
			if err != nil {
				return math.Inf(1)
			}
			return f
		},
		Grad: func(grad, x []float64) {
			if err := p.gradHess(x); err != nil {
				for j := range grad {
					grad[j] = math.NaN()
				}
				return
			}
			g := mat.NewVecDense(len(grad), grad)
			g.MulVec(p.jac.T(), mat.NewVecDense(len(p.r), p.r))
		},
		Hess: func(hess *mat.SymDense, x []float64) {
			if err := p.gradHess(x); err != nil {
				return
			}
			hess.SymOuterK(1, p.jac.T())
		},
	}
	conv := &converger{p: p}
	settings := &optimize.Settings{
		MajorIterations: maxIter,
		FuncEvaluations: 50 * maxIter,
		Converger:       conv,
	}
	method := &optimize.Newton{Linesearcher: &optimize.Backtracking{}}
	// Minimize's error says why the iterations stopped; whether they
	// stopped at a minimum is judged below from the residuals.
	res, _ := optimize.Minimize(prob, x0, settings, method)
	if res == nil {
		return run{x: slices.Clone(x0), f: math.Inf(1)}
	}
	out := run{x: slices.Clone(res.X), f: res.F, iters: res.MajorIterations}
	// Whatever stopped the iterations (a converger test, the line
	// search finding no decrease, the iteration limit), the run has
	// reached a minimum when the fit is exact or the residuals are
	// orthogonal to every Jacobian column.
	if !math.IsInf(out.f, 1) && p.gradHess(out.x) == nil {
		out.converged = out.f <= perfectFit*float64(p.nres) || p.cosine() <= acceptCos
	}
	return out
}

// gradHess makes p.r and p.jac hold the residuals and Jacobian at x.
func (p *problem) gradHess(x []float64) error {
	if _, err := p.residuals(x); err != nil {
		return err
	}
	return p.jacobian(x)
}

// Convergence tests.
const (
	// stepTol: stop when no log-value changed by more than this (a
	// relative change of 1e-10).
	stepTol = 1e-10
	// funcTol: stop when the sum of squares fell by less than this
	// fraction.
	funcTol = 1e-13
	// gradCos: stop when every Jacobian column is this close to
	// orthogonal to the residuals (cosine of the angle).
	gradCos = 1e-9
	// acceptCos: a run stopped for another reason still counts as
	// converged when the cosine is below this.
	acceptCos = 1e-6
	// perfectFit: a sum of squares below this per residual (σ units)
	// counts as an exact fit.
	perfectFit = 1e-24
)

// cosine returns max_j |J_jᵀr| / (‖J_j‖·‖r‖) at the current residuals
// and Jacobian: 0 at a stationary point of the sum of squares (the
// MINPACK gradient test).
func (p *problem) cosine() float64 {
	rn := 0.0
	for _, v := range p.r {
		rn += v * v
	}
	rn = math.Sqrt(rn)
	if rn == 0 {
		return 0
	}
	worst := 0.0
	for j := range p.free {
		var dot, cn float64
		for i, rv := range p.r {
			a := p.jac.At(i, j)
			dot += a * rv
			cn += a * a
		}
		if cn == 0 {
			continue
		}
		worst = math.Max(worst, math.Abs(dot)/(math.Sqrt(cn)*rn))
	}
	return worst
}

// converger stops gonum's iterations on a small step, a negligible
// decrease of the sum of squares, an exact fit, or residuals orthogonal
// to the Jacobian.
type converger struct {
	p     *problem
	prevX []float64
	prevF float64
}

func (c *converger) Init(dim int) {
	c.prevX = nil
}

func (c *converger) Converged(loc *optimize.Location) optimize.Status {
	defer func() {
		c.prevX = append(c.prevX[:0], loc.X...)
		c.prevF = loc.F
	}()
	if loc.F <= perfectFit*float64(c.p.nres) {
		return optimize.FunctionThreshold
	}
	if c.prevX == nil {
		return optimize.NotTerminated
	}
	step := 0.0
	for j, v := range loc.X {
		step = math.Max(step, math.Abs(v-c.prevX[j]))
	}
	if step <= stepTol {
		return optimize.StepConvergence
	}
	if c.prevF-loc.F <= funcTol*loc.F {
		return optimize.FunctionConvergence
	}
	if c.p.gradHess(loc.X) == nil && c.p.cosine() <= gradCos {
		return optimize.GradientThreshold
	}
	return optimize.NotTerminated
}

// count writes "1 point", "3 points".
func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
