package multitone

import (
	"fmt"
	"math"
	"math/bits"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
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

// lbfgsMemory is the number of correction pairs L-BFGS keeps.
const lbfgsMemory = 8

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

// lp runs ReduceLp: L-BFGS (two-loop recursion) with Armijo backtracking
// on ln‖x‖_p for each p of lpStages.
func (o *phaseOptimizer) lp(phase []float64, iters int) {
	n := len(phase)
	alloc := func() []float64 { return make([]float64, n) }
	g, d, xn, gn := alloc(), alloc(), alloc(), alloc()
	var sv, yv [lbfgsMemory][]float64
	var rho, alpha [lbfgsMemory]float64
	for i := range sv {
		sv[i], yv[i] = alloc(), alloc()
	}
	for _, p := range lpStages {
		f := o.lpNorm(phase, g, p)
		used, head := 0, 0 // correction pairs stored; next slot
		for range iters {
			// d = −H·g by the two-loop recursion over the stored pairs,
			// newest first.
			copy(d, g)
			for j := 0; j < used; j++ {
				i := (head - 1 - j + lbfgsMemory) % lbfgsMemory
				alpha[i] = rho[i] * dot(sv[i], d)
				axpy(d, -alpha[i], yv[i])
			}
			if used > 0 {
				i := (head - 1 + lbfgsMemory) % lbfgsMemory
				scal(d, dot(sv[i], yv[i])/dot(yv[i], yv[i]))
			} else if gg := math.Sqrt(dot(g, g)); gg > 0 {
				scal(d, 0.1/gg) // first step: 0.1 rad along the gradient
			}
			for j := used - 1; j >= 0; j-- {
				i := (head - 1 - j + lbfgsMemory) % lbfgsMemory
				beta := rho[i] * dot(yv[i], d)
				axpy(d, alpha[i]-beta, sv[i])
			}
			scal(d, -1)
			slope := dot(g, d)
			if !(slope < 0) {
				break // no descent direction left: converged
			}
			step, fn := 1.0, 0.0
			accepted := false
			for range 30 {
				for j := range phase {
					xn[j] = phase[j] + step*d[j]
				}
				fn = o.lpNorm(xn, gn, p)
				if fn <= f+1e-4*step*slope {
					accepted = true
					break
				}
				step /= 2
			}
			if !accepted {
				break
			}
			s, y := sv[head], yv[head]
			sy := 0.0
			for j := range phase {
				s[j] = xn[j] - phase[j]
				y[j] = gn[j] - g[j]
				sy += s[j] * y[j]
			}
			if sy > 0 {
				rho[head] = 1 / sy
				head = (head + 1) % lbfgsMemory
				used = min(used+1, lbfgsMemory)
			}
			copy(phase, xn)
			copy(g, gn)
			done := f-fn <= 1e-12*math.Abs(f)
			f = fn
			if done {
				break
			}
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

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

func axpy(dst []float64, a float64, x []float64) {
	for i := range dst {
		dst[i] += a * x[i]
	}
}

func scal(x []float64, a float64) {
	for i := range x {
		x[i] *= a
	}
}
