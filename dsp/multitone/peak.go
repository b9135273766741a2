package multitone

import (
	"fmt"
	"math"
	"math/bits"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/optimize"
)

// Reduction selects an iterative improvement of the crest factor that
// runs after the starting phases. Every method only changes phases: the
// tones keep their bins and amplitudes, and nothing else enters the
// spectrum. Each keeps the phases with the smallest peak it has seen, so
// the result is never worse than the start.
//
// Both methods judge the peak on a grid of at least 4 points per cycle of
// the highest tone (a power of two, at least Period), so they lower the
// peak of the reconstructed waveform, not only that of the samples.
type Reduction int

const (
	// ReduceNone keeps the starting phases. The default.
	ReduceNone Reduction = iota
	// ReduceClip repeats: clip the composite in time at half its current
	// peak, take the phases of the clipped signal at the tone bins, rebuild
	// the tones with their own amplitudes and zero elsewhere (the
	// time–frequency swapping of Van der Ouderaa, Schoukens & Renneboog,
	// IEEE Trans. IM 37(1), 1988 — from memory). Simple and robust, slow to
	// converge on sparse log-spaced tones (about 1 dB below Schroeder on
	// 31 tones in 100 rounds).
	ReduceClip
	// ReduceLp minimises the L_p norm of the composite over the phases for
	// p = 8, 32 and 128 in turn, each stage by limited-memory BFGS with an
	// Armijo backtracking line search; as p grows the L_p norm approaches
	// the peak (the approach of Guillaume, Schoukens, Pintelon & Kollár,
	// IEEE Trans. IM 40(6), 1991 — from memory). About 3 dB below
	// Schroeder on 31 log-spaced tones.
	ReduceLp
)

// String returns the method's name.
func (r Reduction) String() string {
	switch r {
	case ReduceNone:
		return "none"
	case ReduceClip:
		return "clip"
	case ReduceLp:
		return "lp"
	}
	return fmt.Sprintf("Reduction(%d)", int(r))
}

// Defaults of the reduction iterations when Options.Iterations is 0.
const (
	// DefaultClipIterations is the number of clip-and-restore rounds of
	// ReduceClip.
	DefaultClipIterations = 50
	// DefaultLpIterations is the number of L-BFGS iterations per p stage
	// of ReduceLp.
	DefaultLpIterations = 20
)

// clipFraction is the clip level of each ReduceClip round relative to the
// current peak: 0.3 to 0.6 converged fastest on log-spaced tones; 0.5
// keeps the rounds stable.
const clipFraction = 0.5

// lpStages are the exponents of ReduceLp, each a power of two.
var lpStages = [...]int{8, 32, 128}

// Settings of the L-BFGS stages of ReduceLp.
const (
	// lbfgsMemory is the number of correction pairs L-BFGS keeps.
	lbfgsMemory = 8
	// lbfgsMaxTrials bounds the step halvings of one line search.
	lbfgsMaxTrials = 30
	// lbfgsRelTol ends a stage when an iteration lowers ln‖x‖_p by no
	// more than this fraction.
	lbfgsRelTol = 1e-12
)

// fineGrid returns a number of samples per period with at least perCycle
// points per cycle of bin maxBin: a power of two, at least period, but no
// more than maxFineGrid (or period, if longer), which bounds memory for
// very long periods at the cost of fewer points per cycle.
func fineGrid(period, maxBin, perCycle int) int {
	q := 1 << bits.Len(uint(perCycle*maxBin-1))
	return max(min(q, maxFineGrid), period)
}

// maxFineGrid bounds fineGrid: 2^22 points, 64 MiB of spectrum.
const maxFineGrid = 1 << 22

// Points per cycle of the highest tone on the grid where the reductions
// judge the peak, and on the grid of the true-peak estimate.
const (
	reduceGridPerCycle   = 4
	truePeakGridPerCycle = 16
)

// phaseOptimizer holds the buffers of one peak reduction.
type phaseOptimizer struct {
	fft  *fourier.FFT
	coef []complex128
	x, g []float64
	bins []int
	amp  []float64

	best     []float64
	bestPeak float64
}

func newPhaseOptimizer(q int, bins []int, amp, phase []float64) *phaseOptimizer {
	o := &phaseOptimizer{
		fft:  fourier.NewFFT(q),
		coef: make([]complex128, q/2+1),
		x:    make([]float64, q),
		g:    make([]float64, q),
		bins: bins,
		amp:  amp,
		best: append([]float64(nil), phase...),
	}
	synthInto(o.fft, o.coef, o.x, bins, amp, phase)
	o.bestPeak = peakAbs(o.x)
	return o
}

// synth builds the composite for phase in o.x and records phase when its
// peak is the smallest so far. It returns the peak.
func (o *phaseOptimizer) synth(phase []float64) float64 {
	synthInto(o.fft, o.coef, o.x, o.bins, o.amp, phase)
	pk := peakAbs(o.x)
	if pk < o.bestPeak {
		o.bestPeak = pk
		copy(o.best, phase)
	}
	return pk
}

func (o *phaseOptimizer) clip(phase []float64, iters int) {
	peak := o.synth(phase)
	for range iters {
		c := clipFraction * peak
		for i, v := range o.x {
			o.x[i] = max(-c, min(c, v))
		}
		o.fft.Coefficients(o.coef, o.x)
		for k, b := range o.bins {
			if o.coef[b] != 0 {
				phase[k] = cmplx.Phase(o.coef[b])
			}
		}
		peak = o.synth(phase)
	}
}

// lpNorm returns f = ln‖x‖_p (x the composite for phase, p even) and
// writes ∂f/∂φ_k into grad. With u = x/peak, S = Σu^p:
//
//	f = ln peak + (ln S)/p,
//	∂f/∂φ_k = Σ_n u^{p−1}[n]·∂u[n]/∂φ_k / S,  ∂x[n]/∂φ_k = −A_k·sin(2πm_k n/q + φ_k),
//
// and Σ_n g[n]·sin(2πmn/q + φ) = Im(e^{jφ}·conj(G[m])) with G the forward
// FFT of g, so the whole gradient costs one FFT.
func (o *phaseOptimizer) lpNorm(phase, grad []float64, p int) float64 {
	pk := o.synth(phase)
	s := 0.0
	for i, v := range o.x {
		u := v / pk
		w := u // u^(p−1) by squaring: u·(u²)^((p−2)/2)
		u2 := u * u
		for e := (p - 2) / 2; e > 0; e >>= 1 {
			if e&1 == 1 {
				w *= u2
			}
			u2 *= u2
		}
		o.g[i] = w
		s += w * u
	}
	o.fft.Coefficients(o.coef, o.g)
	for k, b := range o.bins {
		grad[k] = -o.amp[k] * imag(cmplx.Rect(1, phase[k])*cmplx.Conj(o.coef[b])) / (s * pk)
	}
	return math.Log(pk) + math.Log(s)/float64(p)
}

// lpProblem adapts lpNorm to optimize.Problem for one exponent p.
// optimize evaluates Func and then Grad at the same point; lpNorm yields
// both at once, so Func keeps the gradient and Grad hands it out when x
// is the point Func saw last.
type lpProblem struct {
	o     *phaseOptimizer
	p     int
	x, g  []float64 // the point of the last Func call and its gradient
	valid bool
}

func (l *lpProblem) fn(x []float64) float64 {
	f := l.o.lpNorm(x, l.g, l.p)
	copy(l.x, x)
	l.valid = true
	return f
}

func (l *lpProblem) grad(grad, x []float64) {
	if l.valid && floats.Equal(x, l.x) {
		copy(grad, l.g)
		return
	}
	l.o.lpNorm(x, grad, l.p)
}

// lp runs ReduceLp: gonum's L-BFGS with an Armijo backtracking line
// search on ln‖x‖_p for each p of lpStages, at most iters iterations per
// stage. Each stage starts where the previous one ended.
func (o *phaseOptimizer) lp(phase []float64, iters int) {
	n := len(phase)
	prob := &lpProblem{o: o, x: make([]float64, n), g: make([]float64, n)}
	for _, p := range lpStages {
		prob.p, prob.valid = p, false
		method := &optimize.LBFGS{
			Store: lbfgsMemory,
			// Armijo sufficient decrease 1e-4, halving the step (the
			// defaults), giving up after lbfgsMaxTrials halvings.
			Linesearcher: &optimize.Backtracking{MinimumStepSize: math.Ldexp(1, 1-lbfgsMaxTrials)},
		}
		settings := &optimize.Settings{
			// optimize counts the starting point as a major iteration.
			MajorIterations: iters + 1,
			FuncEvaluations: 1 + iters*lbfgsMaxTrials,
			// Stop once an iteration lowers ln‖x‖_p by no more than
			// lbfgsRelTol relative.
			Converger: &optimize.FunctionConverge{Relative: lbfgsRelTol, Iterations: 1},
		}
		// An error from Minimize means no further progress (no descent
		// direction left, step below the minimum, a non-finite value): it
		// ends the stage like a limit does. The next stage starts from the
		// last point L-BFGS accepted, if any; o.best keeps the smallest
		// peak seen in either case.
		res, _ := optimize.Minimize(optimize.Problem{Func: prob.fn, Grad: prob.grad}, phase, settings, method)
		if res != nil && res.Stats.MajorIterations > 0 {
			copy(phase, res.X)
		}
	}
}

// reducePeak applies method to phase in place, judging the peak on a grid
// of q samples per period.
func reducePeak(method Reduction, bins []int, amp, phase []float64, q, iters int) {
	o := newPhaseOptimizer(q, bins, amp, phase)
	switch method {
	case ReduceClip:
		o.clip(phase, iters)
	case ReduceLp:
		o.lp(phase, iters)
	}
	copy(phase, o.best)
}
