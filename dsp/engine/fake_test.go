package engine

import (
	"cmp"
	"context"
	"math"
	"math/rand/v2"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"tonetrace/audio"
	iir "tonetrace/dsp/biquad"
)

// biquad is an RBJ cookbook filter (W3C Audio EQ Cookbook, REFERENCES.md
// §7 [S]) in direct form I, normalised by a0, designed and run by package
// dsp/biquad; sections may be chained in cascade.
type biquad struct {
	b0, b1, b2, a1, a2 float64
	st                 iir.Filter // the running section (direct form I memory)
	next               *biquad    // a further section in cascade, or nil
}

// Cookbook filter types, as the ints the tests' tables hold.
const (
	bqLowpass  = int(iir.LowPass)
	bqNotch    = int(iir.Notch)
	bqPeaking  = int(iir.Peaking)
	bqHighpass = int(iir.HighPass)
	bqAllpass  = int(iir.AllPass)
	bqBandpass = int(iir.BandPass)
)

// newBiquad returns the cookbook filter of the given type at f0 Hz with
// quality q (and gain in dB for the peaking filter) at rate.
func newBiquad(kind int, f0, q, gainDB, rate float64) *biquad {
	c := iir.Design(iir.Kind(kind), f0, q, gainDB, rate)
	return &biquad{b0: c.B0, b1: c.B1, b2: c.B2, a1: c.A1, a2: c.A2, st: iir.Filter{Coeffs: c}}
}

// coeffs returns the section's coefficients.
func (q *biquad) coeffs() iir.Coeffs {
	return iir.Coeffs{B0: q.b0, B1: q.b1, B2: q.b2, A1: q.a1, A2: q.a2}
}

func (q *biquad) process(x float64) float64 {
	y := q.st.Step(x)
	if q.next != nil {
		return q.next.process(y)
	}
	return y
}

// cascade chains the sections into one filter.
func cascade(s ...*biquad) *biquad {
	for i := 0; i+1 < len(s); i++ {
		s[i].next = s[i+1]
	}
	return s[0]
}

// response returns the digital response H(e^{jω}) at f Hz (REFERENCES.md
// §7: Σb_k e^{−jkω} / Σa_k e^{−jkω}).
func (q *biquad) response(f, rate float64) complex128 {
	h := q.coeffs().Response(f, rate)
	if q.next != nil {
		return h * q.next.response(f, rate)
	}
	return h
}

// faults are the defects a fakeDev can inject.
type faults struct {
	swap        bool    // inputs 1 and 2 exchanged
	deadRef     bool    // input 2 silent
	deadDUT     bool    // input 1 silent
	pullDUTAt   int64   // capture index from which input 1 is silent (a lead coming off), 0 never
	invertRef   bool    // input 2 negated
	invertResp  bool    // input 1 negated
	humAmp      float64 // 50 Hz on both inputs, peak
	humHz       float64 // the mains frequency of humAmp, 0 for 50 Hz
	humH3       float64 // a 3rd harmonic of the hum, relative to humAmp
	clipGain    float64 // input 1 multiplied by this (then clamped at full scale)
	dropAt      int64   // capture index from which the reader loses the rest of a read
	zeroAt      int64   // capture index of a stretch of zeroed input samples
	zeroN       int
	zeroEvery   int64   // repeat the zeroed stretch this often (0: once)
	ppm         float64 // input clock: inputs see frequencies ppm higher
	lostAt      int64   // capture index at which the device disappears
	noise       float64 // white noise standard deviation on both inputs
	humChannels int     // 0: both inputs; 1 or 2: that input only
	paced       bool    // run in real time like a real device, never waiting for the engine
	stalls      []int64 // capture indices from which the device runs stallFrames on without waiting for the engine
	stallFrames int     // (as when a busy machine deschedules the engine), not paced
	iface       bool    // both inputs pass an interface's own filters: DC block at 5 Hz, anti-alias at 20 kHz
}

// ifaceFilter is what a typical interface does to every input: a
// DC-blocking high-pass at 5 Hz and an anti-alias roll-off of 3 dB at
// 20 kHz (cookbook sections, common practice for the corners).
func ifaceFilter() *biquad {
	return cascade(newBiquad(bqHighpass, 5, math.Sqrt2/2, 0, fakeRate), newBiquad(bqLowpass, 20000, math.Sqrt2/2, 0, fakeRate))
}

// fakeDev is a duplex test device on an audio.Core: output 1 passes
// through a biquad into input 1 (the response), output 2 goes straight to
// input 2 (the reference), both delay frames later, with optional faults.
// Its callbacks run on their own goroutine as fast as the engine keeps up:
// a callback runs when the engine has read all but two periods of the
// capture and (while a stimulus is queued) has queued at least a period
// ahead — so nothing is dropped, late or underrun unless a fault says so.
type fakeDev struct {
	*audio.Core
	rate, period, delay int
	bq                  *biquad
	iface1, iface2      *biquad
	f                   faults
	rng                 *rand.Rand

	read     atomic.Int64 // capture index after the engine's last read
	queued   atomic.Int64 // WriteIndex after the engine's last write
	open     atomic.Bool  // the engine has queued a stimulus not yet finished
	captured atomic.Int64
	lost     atomic.Bool
	dropDone bool
	stalled  int           // stalls done
	engWake  chan struct{} // the device produced frames
	devWake  chan struct{} // the engine read or wrote

	frames        int64
	a1, a2        []float64 // what reaches inputs 1 and 2 at each output frame
	outBuf, inBuf []float32

	stop chan struct{}
	wg   sync.WaitGroup
}

const (
	fakeRate   = 48000
	fakePeriod = 256
	fakeDelay  = 1234
)

// newFake returns a started fake device, stopped when the test ends.
func newFake(t testing.TB, bq *biquad, f faults) *fakeDev {
	t.Helper()
	d, err := startFake(bq, f)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(d.close)
	return d
}

// startFake returns a started fake device; stop it with close.
func startFake(bq *biquad, f faults) (*fakeDev, error) {
	core, err := audio.NewCore(audio.CoreConfig{Rate: fakeRate, InChannels: 2, OutChannels: 2, PeriodFrames: fakePeriod,
		Output: audio.OutputConfig{LevelDBFS: -20, CapDBFS: -6, FadeMS: 10, MuteMS: 5}})
	if err != nil {
		return nil, err
	}
	d := &fakeDev{Core: core, rate: fakeRate, period: fakePeriod, delay: fakeDelay, bq: bq, f: f,
		rng:     rand.New(rand.NewPCG(11, 12)),
		engWake: make(chan struct{}, 1), devWake: make(chan struct{}, 1),
		outBuf: make([]float32, 2*fakePeriod), inBuf: make([]float32, 2*fakePeriod),
		stop: make(chan struct{})}
	if f.iface {
		d.iface1, d.iface2 = ifaceFilter(), ifaceFilter()
	}
	core.Start()
	d.wg.Add(1)
	go d.run()
	return d, nil
}

func wake(c chan struct{}) {
	select {
	case c <- struct{}{}:
	default:
	}
}

// close stops the device goroutine.
func (d *fakeDev) close() {
	select {
	case <-d.stop:
	default:
		close(d.stop)
	}
	d.wg.Wait()
}

// Close implements audio.Stream.
func (d *fakeDev) Close() error { d.close(); d.Shut(); return nil }

// run is the device thread.
func (d *fakeDev) run() {
	defer d.wg.Done()
	if d.f.paced {
		d.runPaced()
		return
	}
	for {
		select {
		case <-d.stop:
			return
		default:
		}
		if d.f.lostAt > 0 && d.frames >= d.f.lostAt {
			d.lost.Store(true)
			d.SetLost()
			wake(d.engWake)
			return
		}
		if d.stalled < len(d.f.stalls) && d.frames >= d.f.stalls[d.stalled] {
			// The engine "sleeps": the device plays stallFrames on.
			d.stalled++
			for n := 0; n < d.f.stallFrames; n += d.period {
				d.step(d.period)
			}
			d.captured.Store(d.frames)
			wake(d.engWake)
			continue
		}
		ready := d.frames-d.read.Load() <= int64(2*d.period) &&
			(!d.open.Load() || d.queued.Load() >= d.PlayIndex()+int64(d.period))
		if !ready {
			select {
			case <-d.devWake:
			case <-d.stop:
				return
			case <-time.After(200 * time.Millisecond): // never deadlock a broken test
			}
			continue
		}
		d.step(d.period)
		d.captured.Store(d.frames)
		wake(d.engWake)
	}
}

// runPaced runs a callback every period of wall time, as a real device
// does, whatever the engine is doing.
func (d *fakeDev) runPaced() {
	start := time.Now()
	per := time.Duration(float64(d.period) / float64(d.rate) * float64(time.Second))
	for k := int64(1); ; k++ {
		if d.f.lostAt > 0 && d.frames >= d.f.lostAt {
			d.lost.Store(true)
			d.SetLost()
			wake(d.engWake)
			return
		}
		d.step(d.period)
		d.captured.Store(d.frames)
		wake(d.engWake)
		select {
		case <-d.stop:
			return
		case <-time.After(time.Until(start.Add(time.Duration(k) * per))):
		}
	}
}

// analog returns what reaches the inputs at capture frame k: the outputs
// delay frames earlier, on the input clock (windowed-sinc interpolation
// when the clocks differ).
func (d *fakeDev) analog(k int64) (float64, float64) {
	at := func(x []float64, i int64) float64 {
		if i < 0 || i >= int64(len(x)) {
			return 0
		}
		return x[i]
	}
	if d.f.ppm == 0 {
		i := k - int64(d.delay)
		return at(d.a1, i), at(d.a2, i)
	}
	t := float64(k)*(1+d.f.ppm*1e-6) - float64(d.delay)
	i := int64(math.Floor(t))
	u := t - float64(i)
	if u == 0 {
		return at(d.a1, i), at(d.a2, i)
	}
	// Windowed sinc over 2·interpTaps samples around t: sin(π(u−j))
	// alternates in sign, so one sine serves every tap; the window is
	// (1 − x²)² on x = (u−j)/interpTaps.
	su := math.Sin(math.Pi*u) / math.Pi
	var v1, v2 float64
	for j := int64(-interpTaps + 1); j <= interpTaps; j++ {
		x := u - float64(j)
		w := su / x
		if j%2 != 0 {
			w = -w
		}
		y := x / interpTaps
		w *= (1 - y*y) * (1 - y*y)
		v1 += w * at(d.a1, i+j)
		v2 += w * at(d.a2, i+j)
	}
	return v1, v2
}

// interpTaps is half the length of the fake's resampling filter.
const interpTaps = 24

// step runs one callback of n frames.
func (d *fakeDev) step(n int) {
	f := &d.f
	for i := 0; i < n; i++ {
		k := d.frames + int64(i)
		v1, v2 := d.analog(k)
		if f.swap {
			v1, v2 = v2, v1
		}
		if f.deadRef {
			v2 = 0
		}
		if f.deadDUT || f.pullDUTAt > 0 && k >= f.pullDUTAt {
			v1 = 0
		}
		if f.invertRef {
			v2 = -v2
		}
		if f.invertResp {
			v1 = -v1
		}
		if f.humAmp != 0 {
			hz := cmp.Or(f.humHz, 50)
			h := f.humAmp * (math.Sin(2*math.Pi*hz*float64(k)/float64(d.rate)) + f.humH3*math.Sin(2*math.Pi*3*hz*float64(k)/float64(d.rate)+1))
			if f.humChannels != 2 {
				v1 += h
			}
			if f.humChannels != 1 {
				v2 += h
			}
		}
		if f.clipGain != 0 {
			v1 *= f.clipGain
		}
		if f.noise != 0 {
			v1 += f.noise * d.rng.NormFloat64()
			v2 += f.noise * d.rng.NormFloat64()
		}
		if f.zeroN > 0 && k >= f.zeroAt && (k-f.zeroAt)%max(f.zeroEvery, math.MaxInt64/2) < int64(f.zeroN) {
			v1, v2 = 0, 0
		}
		d.inBuf[2*i] = float32(max(-1, min(1, v1)))
		d.inBuf[2*i+1] = float32(max(-1, min(1, v2)))
	}
	d.ProcessDuplex(d.outBuf[:2*n], d.inBuf[:2*n], n)
	for i := 0; i < n; i++ {
		o1, o2 := float64(d.outBuf[2*i]), float64(d.outBuf[2*i+1])
		if d.bq != nil {
			o1 = d.bq.process(o1)
		}
		if d.iface1 != nil {
			o1, o2 = d.iface1.process(o1), d.iface2.process(o2)
		}
		d.a1 = append(d.a1, o1)
		d.a2 = append(d.a2, o2)
	}
	d.frames += int64(n)
}

// Read waits for the device without polling, then reads from the core.
// With faults.dropAt set, the read that reaches that index loses its
// frames from there on: the engine sees a jump in the capture index.
func (d *fakeDev) Read(ctx context.Context, dst [][]float64) (int, int64, error) {
	for {
		if d.captured.Load() <= d.read.Load() && !d.lost.Load() {
			select {
			case <-d.engWake:
				continue
			case <-ctx.Done():
				return 0, d.read.Load(), ctx.Err()
			case <-time.After(50 * time.Millisecond):
				continue
			}
		}
		n, first, err := d.Core.Read(ctx, dst)
		if err != nil {
			return n, first, err
		}
		d.read.Store(first + int64(n))
		wake(d.devWake)
		if d.f.dropAt > 0 && !d.dropDone && first+int64(n) > d.f.dropAt {
			d.dropDone = true
			keep := int(max(0, d.f.dropAt-first))
			if keep == 0 {
				continue
			}
			n = keep
		}
		return n, first, nil
	}
}

// Write, WriteAt and Finish track the queue for the device's pacing.
func (d *fakeDev) Write(ctx context.Context, src []float64) (int, error) {
	n, err := d.Core.Write(ctx, src)
	d.queued.Store(d.Core.WriteIndex())
	d.open.Store(true)
	wake(d.devWake)
	return n, err
}

func (d *fakeDev) WriteAt(ctx context.Context, at int64, src []float64) (int, error) {
	n, err := d.Core.WriteAt(ctx, at, src)
	d.queued.Store(d.Core.WriteIndex())
	d.open.Store(true)
	wake(d.devWake)
	return n, err
}

func (d *fakeDev) Finish() {
	d.Core.Finish()
	d.open.Store(false)
	wake(d.devWake)
}

var _ audio.Stream = (*fakeDev)(nil)
