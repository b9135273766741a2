package simulate

import (
	"errors"
	"fmt"
	"math"

	"tonetrace/dsp/mna"
)

// Defaults and limits of [Options].
const (
	// DefaultHalfLength is the kernel half-length, and so the latency, in
	// samples when [Options.HalfLength] is 0.
	DefaultHalfLength = 16
	// MinHalfLength and MaxHalfLength bound [Options.HalfLength].
	MinHalfLength = 4
	MaxHalfLength = 64
	// DefaultPassband is the flat band's upper edge as a fraction of the
	// rate when [Options.Passband] is 0.
	DefaultPassband = 0.4
	// MinPassband and MaxPassband bound [Options.Passband].
	MinPassband = 0.05
	MaxPassband = 0.48
)

// Errors returned by [New] and [Simulator.Update]; they arrive wrapped with
// details and can be tested with errors.Is.
var (
	// ErrDescriptor reports a descriptor of the wrong shape or with
	// non-finite entries.
	ErrDescriptor = errors.New("simulate: invalid descriptor")
	// ErrSingular reports equations that do not determine the unknowns.
	ErrSingular = errors.New("simulate: singular network equations")
	// ErrUnstable reports a network with a pole in the right half-plane
	// (an oscillator): its response grows without bound.
	ErrUnstable = errors.New("simulate: unstable network")
	// ErrImproper reports a network whose output follows a derivative of
	// the input of order above 2.
	ErrImproper = errors.New("simulate: improper network")
	// ErrOptions reports an invalid rate or option.
	ErrOptions = errors.New("simulate: invalid options")
	// ErrMismatch reports an [Simulator.Update] with a descriptor of a
	// different size or output.
	ErrMismatch = errors.New("simulate: descriptor does not match the running network")
)

// Options tunes the band-limited interpolation of the input. The zero
// value selects the defaults.
type Options struct {
	// HalfLength is the half-length of the interpolation kernel in
	// samples; it is also the simulator's latency (see
	// [Simulator.Latency]) and sets the per-sample cost, which grows as
	// 2·HalfLength per state. 0 selects DefaultHalfLength (16);
	// otherwise MinHalfLength…MaxHalfLength (4…64).
	HalfLength int
	// Passband is the highest frequency, as a fraction of the rate, at
	// which the response must be exact; the kernel's transition band runs
	// from Passband to 1 − Passband. 0 selects DefaultPassband (0.4);
	// otherwise MinPassband…MaxPassband (0.05…0.48). With the defaults the
	// kernel's ripple and image rejection are both 10^(−100/20) = 1e−5;
	// in general 8 + 2.285·2π·(1 − 2·Passband)·2·HalfLength dB (Kaiser's
	// formula).
	Passband float64
}

// resolve fills in the defaults and checks the limits.
func (o Options) resolve() (Options, error) {
	if o.HalfLength == 0 {
		o.HalfLength = DefaultHalfLength
	}
	if o.Passband == 0 {
		o.Passband = DefaultPassband
	}
	if o.HalfLength < MinHalfLength || o.HalfLength > MaxHalfLength {
		return o, fmt.Errorf("%w: HalfLength %d outside %d…%d; use 0 for the default %d", ErrOptions, o.HalfLength, MinHalfLength, MaxHalfLength, DefaultHalfLength)
	}
	if !(o.Passband >= MinPassband && o.Passband <= MaxPassband) {
		return o, fmt.Errorf("%w: Passband %v outside %v…%v (a fraction of the rate); use 0 for the default %v", ErrOptions, o.Passband, MinPassband, MaxPassband, DefaultPassband)
	}
	return o, nil
}

// Simulator runs a network's MNA equations sample by sample. It is not safe
// for concurrent use; one goroutine owns it.
type Simulator struct {
	rate float64
	opts Options
	kern *kernel
	size int // unknowns N of the descriptor
	out  int
	mod  *model
	st   *stepper

	x, xn []float64 // state ξ and the next one
	hist  []float64 // input history, doubled: window at hist[pos:pos+w+1]
	pos   int
}

// New prepares the simulation of d at rate samples per second.
//
// It reduces d to state-space form, discretises it exactly for the
// band-limited input (see the package documentation), and starts at rest:
// zero state and zero input history. Errors: a nil or malformed d
// (ErrDescriptor), equations that do not determine every unknown
// (ErrSingular), a right-half-plane pole (ErrUnstable), an output that
// follows the input's third or higher derivative (ErrImproper), a rate that
// is not positive and finite, or options outside their limits
// (ErrOptions). New copies what it needs; d may change afterwards.
func New(d *mna.Descriptor, rate float64, opts Options) (*Simulator, error) {
	if !(rate > 0) || math.IsInf(rate, 0) {
		return nil, fmt.Errorf("%w: rate %v Hz must be positive and finite", ErrOptions, rate)
	}
	o, err := opts.resolve()
	if err != nil {
		return nil, err
	}
	mod, err := reduce(d, 2*math.Pi*rate)
	if err != nil {
		return nil, err
	}
	k := newKernel(o.HalfLength, o.Passband)
	s := &Simulator{
		rate: rate, opts: o, kern: k, size: d.Size(), out: d.Out, mod: mod,
		st:   discretize(mod, rate, k),
		hist: make([]float64, 2*(2*o.HalfLength+1)),
	}
	s.x = make([]float64, mod.n)
	s.xn = make([]float64, mod.n)
	return s, nil
}

// Rate returns the sample rate in Hz.
func (s *Simulator) Rate() float64 { return s.rate }

// Options returns the options in effect, defaults filled in.
func (s *Simulator) Options() Options { return s.opts }

// Order returns the number of state variables the network reduced to, its
// dynamic order: at most the number of capacitors and inductors, less one
// for each loop of capacitors and voltage sources (a load capacitor on an
// op-amp output) and each cut of inductors, and less any pole beyond about
// 10⁴·2π·rate, which is taken as instantaneous. The cost of a sample is
// about Order·(Order/2 + 2·HalfLength) multiply-adds.
func (s *Simulator) Order() int { return s.mod.n }

// Latency returns the delay, in whole samples at the simulator's rate,
// between the input and the output: Options.HalfLength (16 by default).
//
// Precisely: dst[n] from [Simulator.Process] is the network's response,
// at time (n − Latency())/rate, to the band-limited signal through the
// src samples (src[k] at time k/rate). The delay is not compensated:
// a tone in gives, once settled, dst[n] = |H|·A·cos(ω(n − Latency()) + φ
// + arg H). A bench that forms response/reference must delay the reference
// by Latency() samples, or multiply the prediction by
// e^{−j2πf·Latency()/rate}.
func (s *Simulator) Latency() int { return s.opts.HalfLength }

// Process runs the network over src, the input u one sample per entry at
// the simulator's rate, writing the output y to dst, and keeps the state
// for the next call: consecutive calls behave as one long call. dst and
// src must have the same length (else Process panics); they may be the
// same slice. It does not allocate. Values are in any consistent unit
// (full scale in the bench). A NaN or ±Inf in src spoils the state until
// [Simulator.Reset].
func (s *Simulator) Process(dst, src []float64) {
	if len(dst) != len(src) {
		panic(fmt.Sprintf("simulate: Process with len(dst) = %d ≠ len(src) = %d", len(dst), len(src)))
	}
	st := s.st
	n, w := st.n, st.w
	hist, pos := s.hist, s.pos
	x, xn := s.x, s.xn
	phi, gamma, c, start := st.phi, st.gamma, st.c[:n], st.start
	x = x[:n]
	half := w / 2
	wt := w + 1 // the output's taps reach one sample further back
	for i, u := range src {
		pos--
		if pos < 0 {
			pos += wt
		}
		hist[pos] = u
		hist[pos+wt] = u
		win := hist[pos : pos+wt : pos+wt]

		var yv float64
		if st.direct {
			yv = st.p0 * win[half]
		} else {
			yv = dot4(st.taps, win)
		}
		for r, v := range c {
			yv += v * x[r]
		}
		wn := win[:w]
		for r := range n {
			// ξ[n+1][r] = Φ[r]·ξ + Γ[r]·window, written out here
			// because dot4 is too large to be inlined.
			s0, s1, s2, s3 := 0.0, 0.0, 0.0, 0.0
			pr := phi[r*n+start[r] : (r+1)*n]
			xr := x[start[r]:]
			xr = xr[:len(pr)]
			for j, v := range pr {
				s0 += v * xr[j]
			}
			gr := gamma[r*w : (r+1)*w]
			gr = gr[:len(wn)]
			j := 0
			for ; j+4 <= len(gr); j += 4 {
				s0 += gr[j] * wn[j]
				s1 += gr[j+1] * wn[j+1]
				s2 += gr[j+2] * wn[j+2]
				s3 += gr[j+3] * wn[j+3]
			}
			for ; j < len(gr); j++ {
				s0 += gr[j] * wn[j]
			}
			xn[r] = (s0 + s1) + (s2 + s3)
		}
		x, xn = xn, x
		dst[i] = yv
	}
	// Flush values that have decayed into the subnormal range, whose
	// arithmetic is slow; they are 1e−290 below any signal.
	for r, v := range x {
		if math.Abs(v) < 1e-290 {
			x[r] = 0
		}
	}
	s.x, s.xn, s.pos = x, xn, pos
}

// dot4 returns Σ a[i]·b[i] over len(a) (b at least as long), with four
// independent sums.
func dot4(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += a[i] * b[i]
		s1 += a[i+1] * b[i+1]
		s2 += a[i+2] * b[i+2]
		s3 += a[i+3] * b[i+3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// Reset returns the simulator to rest: zero state and zero input history,
// as after [New].
func (s *Simulator) Reset() {
	clear(s.x)
	clear(s.xn)
	clear(s.hist)
	s.pos = 0
}

// Update swaps in d, a descriptor of the same network with changed element
// values (a trimmer turned, a capacitor swapped), without a click: the
// input history is kept, and the new state is the one that reproduces the
// capacitor charges and inductor fluxes C·x of the old network's present
// unknowns x (exactly, when the new network can hold them, which it can
// unless capacitors form a loop with voltage sources or inductors a cut).
// The output then moves on as the real circuit would: continuous across
// the change wherever a reactive element holds it, with a step only where
// the output follows the input through resistors alone.
//
// d must have the same number of unknowns and the same output index as the
// running network (else ErrMismatch); the other errors are those of New.
// On error the simulator is unchanged. Update allocates and costs about
// as much as New (0.05 ms for an RC, 0.2 ms for a 20-element network):
// call it between blocks, not inside a real-time callback.
func (s *Simulator) Update(d *mna.Descriptor) error {
	if err := checkDescriptor(d); err != nil {
		return err
	}
	if d.Size() != s.size || d.Out != s.out {
		return fmt.Errorf("%w: it has %d unknowns and output %d, the running network %d and %d; use New for a different network",
			ErrMismatch, d.Size(), d.Out, s.size, s.out)
	}
	mod, err := reduce(d, 2*math.Pi*s.rate)
	if err != nil {
		return err
	}
	st := discretize(mod, s.rate, s.kern)

	// The unknowns now: x = xs·ξ + xf0·ũ, with ũ at the next sample time
	// (the interpolated input passes through the samples: ũ(t) =
	// u[n−half] for the next n).
	un := s.hist[s.pos+s.opts.HalfLength-1]
	old := s.mod
	N := s.size
	xfull := make([]float64, N)
	for i := range N {
		v := old.xf0[i] * un
		for j := range old.n {
			v += old.xs[i*old.n+j] * s.x[j]
		}
		xfull[i] = v - mod.xf0[i]*un
	}
	x := make([]float64, mod.n)
	for i := range mod.n {
		x[i] = dot(mod.pinv[i*N:(i+1)*N], xfull)
	}
	s.mod, s.st = mod, st
	s.x, s.xn = x, make([]float64, mod.n)
	return nil
}
