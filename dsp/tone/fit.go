package tone

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
)

const (
	// maxHarmonic is the highest harmonic a fit can include.
	maxHarmonic = 5
	// maxParams bounds the order of the normal equations: DC, a cosine and
	// a sine per harmonic, and the frequency step of the four-parameter fit.
	maxParams = 2*maxHarmonic + 2

	// DefaultMaxHarmonic is the highest harmonic fitted when
	// [Estimator.MaxHarmonic] is 0.
	DefaultMaxHarmonic = 5
	// DefaultCycleTol is the tolerance, in cycles, used when
	// [Estimator.CycleTol] is 0.
	DefaultCycleTol = 1e-9

	// minIndependent is the smallest share of a column's nominal energy
	// (N for DC, N/2 for a cosine or sine) that must lie outside the span
	// of the columns before it: a smaller share means the tone cannot be
	// told from DC, from its neighbours or from its image about rate/2,
	// and its variance would exceed the resolved-tone bound 10⁴-fold.
	// Reached at about 0.08 cycles of the fundamental per block, or 0.004
	// DFT bins from rate/2.
	minIndependent = 1e-4
	// minPivot is the smallest pivot of the unit-diagonal scaled joint
	// matrix of the four-parameter fit accepted as non-singular.
	minPivot = 1e-12
)

// Errors returned by the fits; they arrive wrapped with details and can be
// tested with [errors.Is].
var (
	// ErrRate reports a sample rate that is not a positive finite number.
	ErrRate = errors.New("tone: invalid sample rate")
	// ErrFreq reports a tone frequency outside (0, rate/2).
	ErrFreq = errors.New("tone: frequency out of range")
	// ErrShortBlock reports an empty block or one with fewer samples than
	// fitted parameters (possible only below 3 samples, 4 for
	// [Estimator.FitFreq], since harmonics are fitted only when the block
	// holds a whole cycle and they fit below rate/2).
	ErrShortBlock = errors.New("tone: block too short")
	// ErrNonFinite reports NaN or ±Inf among the samples.
	ErrNonFinite = errors.New("tone: samples not finite")
	// ErrIllConditioned reports a fit whose columns cannot be told apart:
	// a block holding under about 0.08 cycles of the tone, a tone within
	// about 0.004 DFT bins of rate/2, or (four-parameter fit) no tone at
	// all.
	ErrIllConditioned = errors.New("tone: fit ill-conditioned")
	// ErrHarmonics reports an [Estimator.MaxHarmonic] outside 0..5.
	ErrHarmonics = errors.New("tone: invalid harmonic count")
	// ErrNoConvergence reports a four-parameter fit that did not settle.
	ErrNoConvergence = errors.New("tone: frequency fit did not converge")
)

// Estimate is the result of fitting one channel at one frequency.
//
// The fitted model is
//
//	x[n] ≈ DC + Σ_{k=1..K} |P_k|·cos(2π·k·Freq·n/rate + arg P_k)
//
// with P_1 = Phasor and P_k = Harmonics[k−2], n counted from the first
// sample of the block.
type Estimate struct {
	// Freq is the fundamental frequency in Hz the fit used (given for
	// [Estimator.Fit], estimated for [Estimator.FitFreq]).
	Freq float64
	// Phasor is A·e^{jφ} for the fundamental A·cos(2π·Freq·n/rate + φ):
	// peak amplitude in full-scale units, phase in radians at n = 0.
	Phasor complex128
	// DC is the fitted constant level in full-scale units (the block mean
	// when the block holds whole cycles).
	DC float64
	// Harmonics holds the phasors of the 2nd to 5th harmonics in the same
	// convention as Phasor. A harmonic that was not fitted is exactly zero:
	// one at or above rate/2 or within half a DFT bin (rate/(2N)) of it,
	// one above [Estimator.MaxHarmonic], and every harmonic when the block
	// holds less than one cycle of the fundamental.
	Harmonics [4]complex128
	// ResidualRMS is the estimated noise standard deviation in full-scale
	// units: sqrt(Σ residual² / (N − Params)). NaN when N = Params.
	ResidualRMS float64
	// SNR is 10·log10((A²/2)/ResidualRMS²) in dB; +Inf for a residual of
	// exactly zero, NaN when ResidualRMS is NaN.
	SNR float64
	// THD is the total harmonic distortion in percent of the fundamental:
	// 100·sqrt(Σ|H_k|²)/A over the fitted harmonics. NaN when no harmonic
	// was fitted. Noise adds a bias of about 2σ²/N to each |H_k|².
	THD float64
	// N is the number of samples fitted.
	N int
	// Params is the number of fitted parameters: 1 for DC, 2 per fitted
	// harmonic including the fundamental, 2 per interferer of
	// [Estimator.FitAmong], and 1 more when the frequency was estimated.
	// The residual has N − Params degrees of freedom.
	Params int
	// AmpVarFactor and PhaseVarFactor are the variances of the amplitude
	// and the phase relative to the resolved-tone bounds 2σ²/N and
	// 1/(N·η), when the fit knows them to differ: [Estimator.FitAmong] sets
	// them from its covariance, and they exceed 1 when an interferer lies
	// near the tone. Zero means 1.
	AmpVarFactor, PhaseVarFactor float64
}

// varFactor returns f, or 1 for the zero value.
func varFactor(f float64) float64 {
	if f == 0 {
		return 1
	}
	return f
}

// Amplitude returns the peak amplitude |Phasor| of the fundamental.
func (e Estimate) Amplitude() float64 { return cmplx.Abs(e.Phasor) }

// Phase returns the phase arg Phasor of the fundamental in radians,
// in (−π, π].
func (e Estimate) Phase() float64 { return cmplx.Phase(e.Phasor) }

// AmplitudeU returns the standard uncertainty of the amplitude,
// σ·sqrt(2/N) with σ = ResidualRMS: the square root of the Cramér–Rao
// bound var Â ≥ 2σ²/N, which the fit attains in white Gaussian noise;
// times sqrt(AmpVarFactor) when that is set.
func (e Estimate) AmplitudeU() float64 {
	return e.ResidualRMS * math.Sqrt(2*varFactor(e.AmpVarFactor)/float64(e.N))
}

// PhaseU returns the standard uncertainty of the phase in radians at a
// known frequency, sqrt(1/(N·η)) with η = A²/(2σ²): the square root of
// the Cramér–Rao bound for the phase. With the frequency known the bound is
// the same wherever the phase is referred to; times sqrt(PhaseVarFactor)
// when that is set. It is +Inf for a zero amplitude.
func (e Estimate) PhaseU() float64 {
	return e.ResidualRMS * math.Sqrt(2*varFactor(e.PhaseVarFactor)/float64(e.N)) / e.Amplitude()
}

// Estimator fits tones sampled at one rate. Create it once (with
// [NewEstimator] or as a literal) and reuse it; it holds only settings, so
// one Estimator may be used from several goroutines at once. The exported
// fields may be changed between calls.
type Estimator struct {
	// Rate is the sample rate in Hz; it must be positive and finite.
	Rate float64
	// MaxHarmonic is the highest harmonic fitted jointly with the
	// fundamental, 1 to 5; 0 means DefaultMaxHarmonic (5). With 1 the fit
	// is the plain IEEE Std 1057 three-parameter fit.
	MaxHarmonic int
	// CycleTol is how far, in cycles, the block's cycle count may lie from
	// a whole number for the orthogonal fast path; 0 means DefaultCycleTol
	// (1e−9) and a negative value disables the fast path. Leakage between
	// the fitted columns on the fast path is about CycleTol divided by the
	// number of cycles, relative to the amplitude.
	CycleTol float64
}

// NewEstimator returns an Estimator for the sample rate in Hz with default
// settings, or an error wrapping [ErrRate].
func NewEstimator(rate float64) (*Estimator, error) {
	e := &Estimator{Rate: rate}
	if err := e.check(); err != nil {
		return nil, err
	}
	return e, nil
}

func (e *Estimator) check() error {
	if !(e.Rate > 0) || math.IsInf(e.Rate, 0) {
		return fmt.Errorf("%w: %v Hz; give the interface's sample rate in Hz, e.g. 48000", ErrRate, e.Rate)
	}
	if e.MaxHarmonic < 0 || e.MaxHarmonic > maxHarmonic {
		return fmt.Errorf("%w: MaxHarmonic %d; use 1 to %d, or 0 for the default %d",
			ErrHarmonics, e.MaxHarmonic, maxHarmonic, DefaultMaxHarmonic)
	}
	return nil
}

func (e *Estimator) maxHarmonic() int {
	if e.MaxHarmonic == 0 {
		return DefaultMaxHarmonic
	}
	return e.MaxHarmonic
}

func (e *Estimator) cycleTol() float64 {
	if e.CycleTol == 0 {
		return DefaultCycleTol
	}
	return e.CycleTol
}

// checkFreq validates a tone frequency against the rate.
func (e *Estimator) checkFreq(freq float64, what string) error {
	if !(freq > 0 && freq < e.Rate/2) {
		return fmt.Errorf("%w: %s %v Hz; it must lie strictly between 0 and half the sample rate (%v Hz)",
			ErrFreq, what, freq, e.Rate/2)
	}
	return nil
}

// fitPath selects how fit solves the linear least-squares problem.
type fitPath int

const (
	pathAuto    fitPath = iota // fast when the block holds whole cycles
	pathGeneral                // always the normal equations
)

// harmonicsFor returns how many harmonics (fundamental included) to fit for
// a block holding cycles cycles of the fundamental in n samples: the
// fundamental, and when the block holds at least one whole cycle (so that
// neighbouring harmonics are a DFT bin or more apart), the harmonics up to
// maxH that lie at least half a DFT bin below rate/2.
func harmonicsFor(cycles float64, n, maxH int) int {
	k := 1
	for cycles >= 1 && k < maxH && float64(k+1)*cycles <= float64(n-1)/2 {
		k++
	}
	return k
}

// Fit fits the tone at freq (Hz, strictly between 0 and Rate/2) to the
// block x by least squares, with the DC level and the harmonics up to
// MaxHarmonic fitted jointly (IEEE Std 1057 three-parameter fit, extended).
// Harmonics are fitted when the block holds at least one cycle of the
// fundamental and they lie at least half a DFT bin below Rate/2; the others
// come out exactly zero and do not count in THD or Params.
//
// When x holds a whole number of cycles of freq to within CycleTol, the
// fitted columns are orthogonal and the fit reduces to the mean plus one
// Goertzel projection per harmonic, 2·X(kω)/N. Otherwise it solves the
// normal equations, whose matrix is known in closed form (Dirichlet
// kernels) when time is counted from the block centre, so that it too costs
// one pass for the projections and one for the residual. Neither path
// allocates. The result is the exact least-squares solution for any block
// with at least as many samples as parameters.
//
// Errors wrap [ErrRate], [ErrHarmonics], [ErrFreq], [ErrShortBlock] (empty
// block or fewer samples than parameters), [ErrNonFinite] (NaN or ±Inf in
// x; nothing is estimated) or [ErrIllConditioned]: the tone cannot be told
// from DC (a block under about 0.08 cycles) or from its image about rate/2
// (within about 0.004 DFT bins of it). A column is accepted while at least
// 1e−4 of its energy is independent of the others; near that limit the
// variances are up to 10⁴ times the resolved-tone bounds, and AmplitudeU
// and PhaseU, which assume a resolved tone, understate them.
func (e *Estimator) Fit(x []float64, freq float64) (Estimate, error) {
	return e.fit(x, freq, 0, pathAuto)
}

// linear holds the solution of the linear part of a fit at one frequency.
type linear struct {
	k   int                     // harmonics fitted, fundamental included
	dc  float64                 // DC level
	c   [maxHarmonic]complex128 // phasors referred to n = 0; zero past k
	ac  [maxHarmonic]float64    // cosine coefficients, time from the centre
	bc  [maxHarmonic]float64    // sine coefficients, time from the centre
	sum float64                 // Σ x[n], for the finiteness check
	exp float64                 // energy explained by the fit, βᵀ·Dᵀx
}

func (e *Estimator) fit(x []float64, freq float64, extra int, path fitPath) (Estimate, error) {
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
	w := 2 * math.Pi * freq / e.Rate
	cycles := float64(n) * freq / e.Rate
	whole, frac := WholeCycles(n, freq, e.Rate)
	fast := path == pathAuto && whole >= 1 && math.Abs(frac) <= e.cycleTol()
	if fast {
		cycles = float64(whole)
	}
	k := harmonicsFor(cycles, n, e.maxHarmonic())
	params := 2*k + 1 + extra
	if n < params {
		return Estimate{}, fmt.Errorf("%w: %d samples for %d parameters (DC, fundamental and %d harmonics); use at least %d samples or lower MaxHarmonic",
			ErrShortBlock, n, params, k-1, params)
	}
	var lin linear
	if !solveLinear(x, w, k, fast, &lin) {
		if !isFinite(lin.sum) {
			return Estimate{}, errNonFinite()
		}
		return Estimate{}, errIllConditioned(n, freq, e.Rate)
	}
	return finish(x, w, freq, params, &lin), nil
}

func errEmpty(freq, rate float64) error {
	return fmt.Errorf("%w: no samples; pass a block of at least one cycle of the tone (%.0f samples at %v Hz)",
		ErrShortBlock, math.Max(4, math.Ceil(rate/freq)), freq)
}

func errNonFinite() error {
	return fmt.Errorf("%w: the block holds NaN or ±Inf; check the capture for dropouts or a failed conversion", ErrNonFinite)
}

// errIllConditioned explains why a tone could not be separated: too few
// cycles in the block, or too close to rate/2.
func errIllConditioned(n int, freq, rate float64) error {
	cycles := Cycles(n, freq, rate)
	if cycles < 1 {
		return fmt.Errorf("%w: %d samples hold only %.3g cycles of %v Hz, too few to tell the tone from DC; lengthen the block to at least one cycle (%.0f samples)",
			ErrIllConditioned, n, cycles, freq, math.Ceil(rate/freq))
	}
	return fmt.Errorf("%w: %v Hz lies within %.2g DFT bins of half the sample rate, where its sine and cosine cannot be told apart; measure below %v Hz or lengthen the block",
		ErrIllConditioned, freq, float64(n)/2-cycles, rate/2-rate/float64(n))
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// solveLinear fits DC and harmonics 1..k at ω = w and fills lin. It
// reports false when the normal equations are singular or x is not finite.
func solveLinear(x []float64, w float64, k int, fast bool, lin *linear) bool {
	n := len(x)
	nf := float64(n)
	var proj [maxHarmonic]complex128
	lin.sum = goertzelBank(x, w, k, &proj)
	lin.k = k
	lin.c = [maxHarmonic]complex128{}
	lin.ac = [maxHarmonic]float64{}
	lin.bc = [maxHarmonic]float64{}
	if !isFinite(lin.sum) {
		return false
	}
	centre := (nf - 1) / 2
	if fast {
		lin.dc = lin.sum / nf
		lin.exp = lin.sum * lin.dc
		for i := range k {
			lin.c[i] = proj[i] * complex(2/nf, 0)
			lin.exp += 2 * real(proj[i]*cmplx.Conj(proj[i])) / nf
			s, c := math.Sincos(float64(i+1) * w * centre)
			z := lin.c[i] * complex(c, s) // referred to the centre
			lin.ac[i], lin.bc[i] = real(z), -imag(z)
		}
		return true
	}

	// Time from the block centre t = n − (N−1)/2 makes the cosine and DC
	// columns even and the sine columns odd, so the normal matrix splits
	// into two blocks whose entries are Dirichlet kernels
	// D(m) = Σ cos(mωt) = sin(mωN/2)/sin(mω/2).
	var dk [2*maxHarmonic + 1]float64
	dk[0] = nf
	for m := 1; m <= 2*k; m++ {
		dk[m] = math.Sin(float64(m)*w*nf/2) / math.Sin(float64(m)*w/2)
	}
	var pc [maxHarmonic]complex128 // Σ x·e^{−jkωt}
	for i := range k {
		s, c := math.Sincos(float64(i+1) * w * centre)
		pc[i] = proj[i] * complex(c, s)
	}

	var a sysMat
	var b [maxParams]float64
	// Even block: DC then cosines.
	a[0][0] = nf
	b[0] = lin.sum
	for i := 1; i <= k; i++ {
		a[0][i] = dk[i]
		a[i][0] = dk[i]
		for j := 1; j <= k; j++ {
			a[i][j] = (dk[abs(i-j)] + dk[i+j]) / 2
		}
		b[i] = real(pc[i-1])
	}
	rhs := b
	var nominal [maxParams]float64
	nominal[0] = nf
	for i := 1; i < maxParams; i++ {
		nominal[i] = nf / 2
	}
	if !cholSolve(&a, &b, k+1, &nominal, minIndependent) {
		return false
	}
	lin.dc = b[0]
	lin.exp = b[0] * rhs[0]
	for i := 1; i <= k; i++ {
		lin.ac[i-1] = b[i]
		lin.exp += b[i] * rhs[i]
	}
	// Odd block: sines.
	a = sysMat{}
	b = [maxParams]float64{}
	for i := 1; i <= k; i++ {
		for j := 1; j <= k; j++ {
			a[i-1][j-1] = (dk[abs(i-j)] - dk[i+j]) / 2
		}
		b[i-1] = -imag(pc[i-1])
	}
	rhs = b
	nominal[0] = nf / 2
	if !cholSolve(&a, &b, k, &nominal, minIndependent) {
		return false
	}
	for i := range k {
		lin.bc[i] = b[i]
		lin.exp += b[i] * rhs[i]
		s, c := math.Sincos(-float64(i+1) * w * centre)
		lin.c[i] = complex(lin.ac[i], -lin.bc[i]) * complex(c, s)
	}
	return true
}

// finish computes the residual and the derived quantities of an estimate.
func finish(x []float64, w, freq float64, params int, lin *linear) Estimate {
	n := len(x)
	est := Estimate{Freq: freq, Phasor: lin.c[0], DC: lin.dc, N: n, Params: params}
	copy(est.Harmonics[:], lin.c[1:])
	est.derive(residualSumSq(x, w, lin.dc, &lin.c), lin.k > 1)
	return est
}

// derive sets ResidualRMS, SNR and THD from the residual sum of squares
// ss, given Phasor, Harmonics (zero where not fitted), N and Params;
// harmonics says whether any harmonic was fitted (THD is NaN if not).
func (est *Estimate) derive(ss float64, harmonics bool) {
	if dof := est.N - est.Params; dof > 0 {
		est.ResidualRMS = math.Sqrt(ss / float64(dof))
	} else {
		est.ResidualRMS = math.NaN()
	}
	a := cmplx.Abs(est.Phasor)
	est.SNR = 10 * math.Log10(a*a/2/(est.ResidualRMS*est.ResidualRMS))
	est.THD = math.NaN()
	if harmonics {
		var h float64
		for _, p := range est.Harmonics {
			h += real(p)*real(p) + imag(p)*imag(p)
		}
		est.THD = 100 * math.Sqrt(h) / a
	}
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// sysMat is a small dense matrix for the normal equations.
type sysMat [maxParams][maxParams]float64

// cholSolve solves a·x = b for the symmetric positive definite leading
// n×n part of a by Cholesky factorisation; x overwrites b and a is
// destroyed. The matrix is first scaled by 1/sqrt(nominal[i]) on both
// sides (by its own diagonal when nominal is nil), so that each pivot is
// the share of a column's nominal energy independent of the columns
// before it; cholSolve reports false when a pivot falls below minPiv.
func cholSolve(a *sysMat, b *[maxParams]float64, n int, nominal *[maxParams]float64, minPiv float64) bool {
	var s [maxParams]float64
	for i := range n {
		d := a[i][i]
		if nominal != nil {
			d = nominal[i]
		}
		if !(d > 0) || math.IsInf(d, 0) {
			return false
		}
		s[i] = 1 / math.Sqrt(d)
	}
	for i := range n {
		for j := range n {
			a[i][j] *= s[i] * s[j]
		}
		b[i] *= s[i]
	}
	// a = L·Lᵀ, L stored in the lower triangle.
	for j := range n {
		d := a[j][j]
		for p := range j {
			d -= a[j][p] * a[j][p]
		}
		if !(d > minPiv) {
			return false
		}
		d = math.Sqrt(d)
		a[j][j] = d
		for i := j + 1; i < n; i++ {
			v := a[i][j]
			for p := range j {
				v -= a[i][p] * a[j][p]
			}
			a[i][j] = v / d
		}
	}
	for i := range n { // L·y = b
		v := b[i]
		for p := range i {
			v -= a[i][p] * b[p]
		}
		b[i] = v / a[i][i]
	}
	for i := n - 1; i >= 0; i-- { // Lᵀ·x = y
		v := b[i]
		for p := i + 1; p < n; p++ {
			v -= a[p][i] * b[p]
		}
		b[i] = v / a[i][i]
	}
	for i := range n {
		b[i] *= s[i]
	}
	return true
}
