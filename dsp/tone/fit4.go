package tone

import (
	"fmt"
	"math"
)

const (
	// searchBins is how far, in DFT bins (rate/N), FitFreq looks on each
	// side of its start for the tone before iterating.
	searchBins = 2
	// searchStep is the step of that search in bins.
	searchStep = 1.0 / 8
	// maxIter bounds the Gauss–Newton iterations of FitFreq.
	maxIter = 50
	// convPhase is the convergence limit: iteration stops once a step
	// changes the phase at the block's ends by less than this (radians).
	convPhase = 1e-10
	// reseed is how often (samples) the joint accumulation recomputes
	// e^{jωt} exactly instead of rotating it.
	reseed = 64
)

// FreqEstimate is the result of the four-parameter fit: the tone's
// frequency estimated along with its phasor, DC and harmonics.
type FreqEstimate struct {
	// Estimate is the fit at the estimated frequency Estimate.Freq. Its
	// Params counts the frequency, so ResidualRMS has N − Params degrees of
	// freedom.
	Estimate
	// FreqU is the standard uncertainty of Freq in Hz, in the Cramér–Rao
	// form rate·sqrt(12/((2π)²·η·N(N²−1))) with η = A²/(2σ²).
	FreqU float64
	// Iterations is the number of Gauss–Newton steps taken.
	Iterations int
}

// PhaseU returns the standard uncertainty in radians of the phase at n = 0
// when the frequency is estimated too: sqrt(2(2N−1)/(η·N(N+1))), the
// Cramér–Rao form, about twice the known-frequency value of
// [Estimate.PhaseU] for long blocks (the phase at the block centre keeps
// the smaller value). [Ratio] takes the embedded Estimate and so uses the
// known-frequency form.
func (e FreqEstimate) PhaseU() float64 {
	a := e.Amplitude()
	eta := a * a / (2 * e.ResidualRMS * e.ResidualRMS)
	n := float64(e.N)
	return math.Sqrt(2 * (2*n - 1) / (eta * n * (n + 1)))
}

// FitFreq is the IEEE Std 1057 four-parameter sine fit, extended with the
// harmonics up to MaxHarmonic: it estimates the frequency of the tone near
// start (Hz, strictly between 0 and Rate/2) together with its phasor, DC
// and harmonics. Use it to detect a clock mismatch between separately
// clocked devices.
//
// It first scans start ± 2 DFT bins (bin = Rate/N) in eighth-bin steps
// for the frequency whose three-parameter fit explains most energy, so the
// start must lie within 2 bins of the tone. From there it iterates
// Gauss–Newton steps on the joint linearised model (DC, cosine and sine of
// each harmonic, and the frequency step), halving a step that would
// increase the residual, until a step moves the phase at the block's end by
// less than 1e−10 rad or 50 steps have been taken. In white Gaussian noise
// the frequency variance reaches the Cramér–Rao bound (Händel 2000).
//
// It allocates nothing. The scan costs 33 DC-plus-fundamental fits (one
// Goertzel pass each) and every step one pass accumulating the joint normal
// equations, in all some 30 times the cost of one [Estimator.Fit]. Errors
// are those of [Estimator.Fit], with one more parameter to fit, plus
// [ErrNoConvergence] (returned with the best estimate found).
//
// For a transfer ratio, estimate the frequency on the reference channel
// with FitFreq and then Fit both channels at that frequency.
func (e *Estimator) FitFreq(x []float64, start float64) (FreqEstimate, error) {
	if err := e.check(); err != nil {
		return FreqEstimate{}, err
	}
	if err := e.checkFreq(start, "start frequency"); err != nil {
		return FreqEstimate{}, err
	}
	n := len(x)
	nf := float64(n)
	maxH := e.maxHarmonic()
	if n == 0 {
		return FreqEstimate{}, errEmpty(start, e.Rate)
	}
	if need := 2*harmonicsFor(Cycles(n, start, e.Rate), n, maxH) + 2; n < need {
		return FreqEstimate{}, fmt.Errorf("%w: %d samples for %d parameters (DC, fundamental, %d harmonics and frequency); use at least %d samples or lower MaxHarmonic",
			ErrShortBlock, n, need, need/2-2, need)
	}

	// Scan for the best start with a DC + fundamental fit.
	bin := e.Rate / nf
	var lin linear
	bestW, bestExp := 0.0, math.Inf(-1)
	steps := int(searchBins / searchStep)
	for i := -steps; i <= steps; i++ {
		f := start + float64(i)*searchStep*bin
		if !(f > 0 && f < e.Rate/2) {
			continue
		}
		w := 2 * math.Pi * f / e.Rate
		if !solveLinear(x, w, 1, false, &lin) {
			if !isFinite(lin.sum) {
				return FreqEstimate{}, errNonFinite()
			}
			continue
		}
		if lin.exp > bestExp {
			bestW, bestExp = w, lin.exp
		}
	}
	if bestW == 0 {
		return FreqEstimate{}, errIllConditioned(n, start, e.Rate)
	}

	// Gauss–Newton on the joint model.
	w := bestW
	k := harmonicsFor(nf*w/(2*math.Pi), n, maxH)
	if !solveLinear(x, w, k, false, &lin) {
		return FreqEstimate{}, errIllConditioned(n, w*e.Rate/(2*math.Pi), e.Rate)
	}
	var iter int
	var converged bool
	for iter = 1; iter <= maxIter; iter++ {
		dw, ok := gaussNewtonStep(x, w, &lin)
		if !ok {
			return FreqEstimate{}, fmt.Errorf("%w: no tone found near %v Hz (the frequency is undetermined); check the signal and the start frequency",
				ErrIllConditioned, start)
		}
		if math.Abs(dw)*nf/2 < convPhase {
			converged = true
			break
		}
		// Accept the step if it does not lower the explained energy
		// (beyond rounding); otherwise halve it.
		accepted := false
		var trial linear
		for h := 0; h < 30; h++ {
			wt := w + dw
			if wt > 0 && wt < math.Pi {
				kt := harmonicsFor(nf*wt/(2*math.Pi), n, maxH)
				if solveLinear(x, wt, kt, false, &trial) && trial.exp >= lin.exp*(1-1e-14) {
					w, lin = wt, trial
					accepted = true
					break
				}
			}
			dw /= 2
		}
		if !accepted || math.Abs(dw)*nf/2 < convPhase {
			converged = true
			break
		}
	}
	iter = min(iter, maxIter)
	est, err := e.fit(x, w*e.Rate/(2*math.Pi), 1, pathAuto)
	if err != nil {
		return FreqEstimate{}, err
	}
	a := est.Amplitude()
	eta := a * a / (2 * est.ResidualRMS * est.ResidualRMS)
	fe := FreqEstimate{
		Estimate:   est,
		FreqU:      e.Rate * math.Sqrt(12/(4*math.Pi*math.Pi*eta*nf*(nf*nf-1))),
		Iterations: iter,
	}
	if !converged {
		return fe, fmt.Errorf("%w after %d steps near %.9g Hz; the block may hold more than one tone or too much noise",
			ErrNoConvergence, maxIter, fe.Freq)
	}
	return fe, nil
}

// gaussNewtonStep accumulates and solves the normal equations of the model
// linearised in ω around the fit lin at w, with columns
// [1, cos kωt, sin kωt, Σ k·t·(−a_k sin kωt + b_k cos kωt)], t counted
// from the block centre, and returns the frequency step in rad/sample.
func gaussNewtonStep(x []float64, w float64, lin *linear) (float64, bool) {
	n := len(x)
	k := lin.k
	p := 2*k + 2
	centre := float64(n-1) / 2
	var a sysMat
	var b [maxParams]float64
	var row [maxParams]float64
	rot := complex(math.Cos(w), math.Sin(w))
	var z complex128
	for i, v := range x {
		t := float64(i) - centre
		if i%reseed == 0 {
			s, c := math.Sincos(w * t)
			z = complex(c, s)
		} else {
			z *= rot
		}
		row[0] = 1
		zk := z
		var g float64
		for h := 0; h < k; h++ {
			c, s := real(zk), imag(zk)
			row[1+h] = c
			row[1+k+h] = s
			g += float64(h+1) * (-lin.ac[h]*s + lin.bc[h]*c)
			zk *= z
		}
		row[p-1] = g * t
		for r := range p {
			rv := row[r]
			b[r] += rv * v
			for c := r; c < p; c++ {
				a[r][c] += rv * row[c]
			}
		}
	}
	for r := range p {
		for c := range r {
			a[r][c] = a[c][r]
		}
	}
	if !cholSolve(&a, &b, p, nil, minPivot) {
		return 0, false
	}
	return b[p-1], true
}
