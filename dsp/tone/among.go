package tone

import (
	"fmt"
	"math"
	"math/cmplx"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// FitAmong is [Estimator.Fit] for a block that also holds sinusoids at
// known frequencies other than the tone's harmonics — mains hum and its
// harmonics, typically. Each frequency in others (Hz) gets a cosine and a
// sine column fitted jointly with the DC level and the tone's harmonics,
// so an interferer no longer leaks into the tone's estimate, however close
// to the tone it lies, as long as the block can tell them apart.
//
// Frequencies in others are ignored when they lie at or below 0 or within
// half a DFT bin of Rate/2, when the block holds less than one cycle of
// them (the DC column takes most of such a slow line), or when repeated.
// A harmonic of the tone (2nd to 5th) within one DFT bin of an interferer
// is left out of the fit instead: it comes out zero and THD is over the
// harmonics fitted. The estimate describes the tone only: ResidualRMS
// is the residual of the whole fit, Params counts the interferers' columns
// too, and AmplitudeU and PhaseU come from the fit's covariance
// σ²·(DᵀD)⁻¹ — the Cramér–Rao bound of the linear model in white Gaussian
// noise — so they grow as an interferer nears the tone and its columns
// share more of the tone's. An interferer that the block cannot tell from
// the tone or a harmonic (less than 1e−4 of a column's energy independent
// of the others, as in Fit) gives [ErrIllConditioned].
//
// FitAmong costs about p²/2 multiply-adds per sample for p fitted columns
// and allocates a few p×p matrices; with no usable frequency in others it
// is Fit.
func (e *Estimator) FitAmong(x []float64, freq float64, others []float64) (Estimate, error) {
	if err := e.check(); err != nil {
		return Estimate{}, err
	}
	if err := e.checkFreq(freq, "frequency"); err != nil {
		return Estimate{}, err
	}
	n := len(x)
	if n == 0 {
		return Estimate{}, errEmpty(freq, e.Rate)
	}
	k := harmonicsFor(Cycles(n, freq, e.Rate), n, e.maxHarmonic())
	bin := e.Rate / float64(n)
	nyq := e.Rate/2 - bin/2
	var g []float64
next:
	for _, o := range others {
		if !(o > 0 && o < nyq) || Cycles(n, o, e.Rate) < 1 {
			continue
		}
		for _, h := range g {
			if h == o {
				continue next
			}
		}
		g = append(g, o)
	}
	if len(g) == 0 {
		return e.Fit(x, freq)
	}
	// The harmonics to fit: those no interferer comes within a bin of.
	harm := make([]int, 1, k)
	harm[0] = 1
nextHarmonic:
	for h := 2; h <= k; h++ {
		for _, o := range g {
			if math.Abs(o-float64(h)*freq) < bin {
				continue nextHarmonic
			}
		}
		harm = append(harm, h)
	}

	freqs := make([]float64, 0, len(harm)+len(g))
	for _, h := range harm {
		freqs = append(freqs, float64(h)*freq)
	}
	freqs = append(freqs, g...)
	p := 1 + 2*len(freqs)
	if n < p {
		return Estimate{}, fmt.Errorf("%w: %d samples for %d parameters (DC, the tone, %d harmonics and %d interferers); use a longer block",
			ErrShortBlock, n, p, len(harm)-1, len(g))
	}

	cols := newColumns(freqs, e.Rate, n)
	gram := mat.NewSymDense(p, nil)
	rhs := make([]float64, p)
	v := make([]float64, p)
	sum := 0.0
	for i, xi := range x {
		cols.at(i, v)
		sum += xi
		for r := range p {
			rhs[r] += v[r] * xi
			vr := v[r]
			row := gram.RawSymmetric().Data[r*p:]
			for c := r; c < p; c++ {
				row[c] += vr * v[c]
			}
		}
	}
	if !isFinite(sum) {
		return Estimate{}, errNonFinite()
	}

	// Scale every column to unit energy, so that the inverse's diagonal
	// is the variance inflation 1/(independent share) of each column.
	scale := make([]float64, p)
	for r := range p {
		scale[r] = 1 / math.Sqrt(gram.At(r, r))
	}
	for r := range p {
		for c := r; c < p; c++ {
			gram.SetSym(r, c, gram.At(r, c)*scale[r]*scale[c])
		}
	}
	var chol mat.Cholesky
	var inv mat.SymDense
	if !chol.Factorize(gram) || chol.InverseTo(&inv) != nil {
		return Estimate{}, errNotApart(n, freq, e.Rate, g)
	}
	for r := range p {
		if !(inv.At(r, r) <= 1/minIndependent) {
			return Estimate{}, errNotApart(n, freq, e.Rate, g)
		}
	}
	beta := make([]float64, p)
	for r := range p {
		var s float64
		for c := range p {
			s += inv.At(r, c) * rhs[c] * scale[c]
		}
		beta[r] = s * scale[r]
	}

	ss := 0.0
	for i, xi := range x {
		cols.at(i, v)
		m := 0.0
		for r := range p {
			m += beta[r] * v[r]
		}
		ss += (xi - m) * (xi - m)
	}

	est := Estimate{Freq: freq, DC: beta[0], N: n, Params: p}
	centre := (float64(n) - 1) / 2
	w := 2 * math.Pi * freq / e.Rate
	for i, h := range harm {
		s, c := math.Sincos(-float64(h) * w * centre)
		z := complex(beta[1+2*i], -beta[2+2*i]) * complex(c, s)
		if h == 1 {
			est.Phasor = z
		} else {
			est.Harmonics[h-2] = z
		}
	}
	est.derive(ss, len(harm) > 1)
	a := est.Amplitude()

	// Covariance of the fundamental's cosine and sine coefficients, in
	// units of σ²: (DᵀD)⁻¹ restricted to them. Amplitude and phase are
	// first-order functions of the pair (the delta method); their
	// variances relative to the resolved-tone bounds 2σ²/N and
	// 2σ²/(N·A²) are the inflation factors.
	ca, cb := beta[1], beta[2]
	vaa := inv.At(1, 1) * scale[1] * scale[1]
	vbb := inv.At(2, 2) * scale[2] * scale[2]
	vab := inv.At(1, 2) * scale[1] * scale[2]
	if a > 0 {
		varA := (ca*ca*vaa + 2*ca*cb*vab + cb*cb*vbb) / (a * a)
		varPhi := (cb*cb*vaa - 2*ca*cb*vab + ca*ca*vbb) / (a * a * a * a)
		est.AmpVarFactor = varA / (2 / float64(n))
		est.PhaseVarFactor = varPhi / (2 / (float64(n) * a * a))
	}
	return est, nil
}

// errNotApart explains an interferer the block cannot tell from the tone.
func errNotApart(n int, freq, rate float64, others []float64) error {
	list := make([]string, len(others))
	for i, o := range others {
		list[i] = strconv.FormatFloat(o, 'g', 6, 64)
	}
	return fmt.Errorf("%w: %v Hz cannot be told apart from the other frequencies fitted with it (%s Hz) in %d samples (%.3g s); measure at a frequency further from them or lengthen the block",
		ErrIllConditioned, freq, strings.Join(list, ", "), n, float64(n)/rate)
}

// columns generates the fit's columns sample by sample: 1, then the cosine
// and sine of each frequency with time counted from the block centre.
// Phasors advance by rotation and are recomputed exactly every
// columnsExact samples, so rounding cannot build up.
type columns struct {
	w      []float64    // radians per sample
	z, rot []complex128 // current phasor, rotation per sample
	centre float64
	next   int // index at which z is recomputed exactly
}

const columnsExact = 1024

func newColumns(freqs []float64, rate float64, n int) *columns {
	c := &columns{w: make([]float64, len(freqs)), z: make([]complex128, len(freqs)),
		rot: make([]complex128, len(freqs)), centre: (float64(n) - 1) / 2}
	for i, f := range freqs {
		c.w[i] = 2 * math.Pi * f / rate
		c.rot[i] = cmplx.Rect(1, c.w[i])
	}
	return c
}

// at fills v with the columns at sample i; calls must come in order of i
// from 0 (a new pass starts again at 0).
func (c *columns) at(i int, v []float64) {
	if i == 0 {
		c.next = 0
	}
	if i == c.next {
		for j, w := range c.w {
			c.z[j] = cmplx.Rect(1, w*(float64(i)-c.centre))
		}
		c.next += columnsExact
	}
	v[0] = 1
	for j, z := range c.z {
		v[1+2*j], v[2+2*j] = real(z), imag(z)
		c.z[j] = z * c.rot[j]
	}
}
