package audio

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// loopback is a test device: a duplex callback whose input i+1 hears
// output i+1 delay frames later, times gain[i]: what a stereo interface
// with both outputs wired back to its inputs does, minus noise. A delay of
// 0 gives silent inputs; otherwise callbacks may not exceed delay frames.
type loopback struct {
	core       *Core
	in, out    int
	delay      int
	gain       []float64
	line       [][]float32 // per output, the last delay output frames, oldest first
	outBuf     []float32
	inBuf      []float32
	frameCount int64
}

func newLoopback(c *Core, delay, maxFrames int, gain ...float64) *loopback {
	in, out := c.Channels()
	lb := &loopback{core: c, in: in, out: out, delay: delay, gain: gain,
		outBuf: make([]float32, maxFrames*out), inBuf: make([]float32, maxFrames*in)}
	for range out {
		lb.line = append(lb.line, make([]float32, delay))
	}
	return lb
}

// step runs one callback of n frames.
func (lb *loopback) step(n int) {
	if lb.delay > 0 && n > lb.delay {
		panic("loopback: callback longer than the delay")
	}
	for i := 0; i < n; i++ {
		for c := 0; c < lb.in; c++ {
			v := float32(0)
			if c < lb.out && lb.delay > 0 {
				v = float32(float64(lb.line[c][i]) * lb.gain[c])
			}
			lb.inBuf[i*lb.in+c] = v
		}
	}
	lb.core.ProcessDuplex(lb.outBuf[:n*lb.out], lb.inBuf[:n*lb.in], n)
	for c := 0; c < lb.out && lb.delay > 0; c++ {
		l := lb.line[c]
		copy(l, l[n:])
		for i := 0; i < n; i++ {
			l[lb.delay-n+i] = lb.outBuf[i*lb.out+c]
		}
	}
	lb.frameCount += int64(n)
}

func testCore(t testing.TB, cfg CoreConfig) *Core {
	t.Helper()
	if cfg.Rate == 0 {
		cfg.Rate = 48000
	}
	if cfg.InChannels == 0 {
		cfg.InChannels, cfg.OutChannels = 2, 2
	}
	c, err := NewCore(cfg)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// sineNoise returns n samples: a burst of seeded noise (for alignment)
// followed by a sine of f cycles per sample, peak 1.
func sineNoise(n, burst int, f float64, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	s := make([]float64, n)
	for i := range s {
		if i < burst {
			s[i] = 2*rng.Float64() - 1
		} else {
			s[i] = math.Sin(2 * math.Pi * f * float64(i))
		}
	}
	return s
}

// TestScheduleLoopback plays a stimulus at a chosen output frame through a
// loopback with a known delay, from concurrent engine and device
// goroutines, and checks each input frame by index: the reference input
// must hold float32(stimulus·gain) exactly at output index + delay, the
// response the same through its gain, silence elsewhere; no frame dropped,
// no underrun.
func TestScheduleLoopback(t *testing.T) {
	const (
		rate   = 48000
		period = 480
		delay  = 1234
		at     = 9000 // after the 50 ms fade-in (2400 frames)
		total  = 40000
	)
	c := testCore(t, CoreConfig{Rate: rate, InChannels: 2, OutChannels: 2, PeriodFrames: period})
	c.Start()
	stim := sineNoise(20000, 2000, 1000.0/rate, 1)
	gain := dbToAmp(-20)
	lb := newLoopback(c, delay, 2*period, 0.5, 1)

	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	defer cancel()
	var wg sync.WaitGroup
	wg.Add(2)
	var writeErr error
	var queued atomic.Int64 // output index up to which the writer has queued
	var writerDone atomic.Bool
	go func() { // engine writer: in blocks, the queue is smaller than the stimulus
		defer wg.Done()
		defer writerDone.Store(true)
		if _, err := c.WriteAt(ctx, at, stim[:5000]); err != nil {
			writeErr = err
			return
		}
		queued.Store(c.WriteIndex())
		for i := 5000; i < len(stim); i += 3000 {
			if _, err := c.Write(ctx, stim[i:min(i+3000, len(stim))]); err != nil {
				writeErr = err
				return
			}
			queued.Store(c.WriteIndex())
		}
		c.Finish()
	}()
	go func() { // device: callbacks of varying size, as fast as the engine keeps up
		defer wg.Done()
		rng := rand.New(rand.NewPCG(3, 4))
		for lb.frameCount < total && ctx.Err() == nil {
			if !writerDone.Load() && c.PlayIndex()+2*period > queued.Load() ||
				c.Buffered() > 8*period {
				time.Sleep(100 * time.Microsecond) // a real device would not wait: keep the test deterministic
				continue
			}
			lb.step(period/2 + rng.IntN(period))
			runtime.Gosched()
		}
	}()
	got := [][]float64{make([]float64, total+2*period), make([]float64, total+2*period)}
	var next int64
	buf := [][]float64{make([]float64, 700), make([]float64, 700)}
	for next < total {
		n, first, err := c.Read(ctx, buf)
		if err != nil {
			t.Fatalf("Read at %d: %v", next, err)
		}
		if first != next {
			t.Fatalf("Read: first %d, want %d (a gap)", first, next)
		}
		copy(got[0][first:], buf[0][:n])
		copy(got[1][first:], buf[1][:n])
		next += int64(n)
	}
	wg.Wait()
	if writeErr != nil {
		t.Fatal(writeErr)
	}
	for i := int64(0); i < total; i++ {
		var want float32
		if j := i - delay - at; j >= 0 && j < int64(len(stim)) {
			want = float32(stim[j] * gain)
		}
		if got[1][i] != float64(want) {
			t.Fatalf("reference input frame %d = %v, want %v (stimulus sample %d)", i, got[1][i], want, i-delay-at)
		}
		if w := float32(float64(want) * 0.5); got[0][i] != float64(w) {
			t.Fatalf("response input frame %d = %v, want %v", i, got[0][i], w)
		}
	}
	st := c.Stats()
	if st.Dropped != 0 || st.Underruns != 0 || st.Late != 0 || st.StimulusFrames != int64(len(stim)) {
		t.Fatalf("stats %+v: want no drops, underruns or late samples and %d stimulus frames", st, len(stim))
	}
	if st.CaptureFrames != lb.frameCount || st.PlayFrames != lb.frameCount {
		t.Fatalf("stats %+v: capture and play frames should be %d", st, lb.frameCount)
	}
}

// Buffered is a test helper: captured frames waiting.
func (c *Core) Buffered() int { return c.capture.Buffered() }

// TestUnderrunAndLate checks the playout accounting: a stimulus that runs
// dry before Finish is an underrun of silence; after Finish it is not;
// samples scheduled for frames already played are discarded as late and the
// rest keep their schedule.
func TestUnderrunAndLate(t *testing.T) {
	ctx := context.Background()
	c := testCore(t, CoreConfig{PeriodFrames: 100, Output: OutputConfig{LevelDBFS: 0, CapDBFS: 0, FadeMS: 1, MuteMS: 1}})
	c.Start()
	lb := newLoopback(c, 0, 1000, 1, 1)
	lb.step(200) // fade in on silence
	ones := func(n int) []float64 {
		s := make([]float64, n)
		for i := range s {
			s[i] = 1
		}
		return s
	}
	// Write starts at PlayIndex + Lead.
	if _, err := c.Write(ctx, ones(300)); err != nil {
		t.Fatal(err)
	}
	if wi := c.WriteIndex(); wi != 200+200+300 {
		t.Fatalf("WriteIndex %d, want %d (play 200 + lead 200 + 300)", wi, 700)
	}
	lb.step(1000) // plays 400…700, then runs dry for 300 frames
	st := c.Stats()
	if st.Underruns != 1 || st.UnderrunFrames != 500 || st.StimulusFrames != 300 {
		t.Fatalf("after running dry: %+v; want 1 underrun of 500 frames (700…1200), 300 stimulus", st)
	}
	lb.step(500)
	if st = c.Stats(); st.Underruns != 1 || st.UnderrunFrames != 1000 {
		t.Fatalf("still dry: %+v; want the same episode, 1000 frames", st)
	}
	c.Finish()
	lb.step(500)
	if st = c.Stats(); st.UnderrunFrames != 1000 {
		t.Fatalf("after Finish: %+v; running dry is no longer an underrun", st)
	}
	// Late: schedule 1000 samples at frame 2000 while the device is at 2200.
	if _, err := c.WriteAt(ctx, 100, ones(10)); err == nil {
		t.Fatal("WriteAt before WriteIndex: no error")
	}
	if _, err := c.WriteAt(ctx, 2000, ones(1000)); err != nil {
		t.Fatal(err)
	}
	lb.step(900)
	st = c.Stats()
	if st.Late != 200 || st.StimulusFrames != 300+800 {
		t.Fatalf("late: %+v; want 200 late samples and 800 played", st)
	}
	// Discontinuities in capture: an overrun leaves a jump in first.
	small := testCore(t, CoreConfig{PeriodFrames: 100, CaptureFrames: 256})
	small.Start()
	slb := newLoopback(small, 0, 1000, 1, 1)
	slb.step(200)
	slb.step(100) // 300 > 256: 44 dropped
	dst := [][]float64{make([]float64, 1000), make([]float64, 1000)}
	n, first, err := small.Read(ctx, dst)
	if err != nil || n != 256 || first != 0 {
		t.Fatalf("Read after overrun: %d at %d, %v; want 256 at 0", n, first, err)
	}
	slb.step(10)
	n, first, err = small.Read(ctx, dst)
	if err != nil || n != 10 || first != 300 {
		t.Fatalf("Read after the hole: %d at %d, %v; want 10 at 300", n, first, err)
	}
	if st := small.Stats(); st.Dropped != 44 || st.Overruns != 1 {
		t.Fatalf("stats %+v, want 44 dropped in 1 overrun", st)
	}
}

// TestReadWriteErrors checks Read and Write never hang: context
// cancellation, Shut, SetLost and a stalled device each end them promptly.
func TestReadWriteErrors(t *testing.T) {
	dst := [][]float64{make([]float64, 10), make([]float64, 10)}
	tests := []struct {
		name  string
		setup func(c *Core)
		ctx   time.Duration
		want  error
	}{
		{"context deadline", func(c *Core) { c.Start() }, 30 * time.Millisecond, context.DeadlineExceeded},
		{"closed", func(c *Core) { c.Start(); go func() { time.Sleep(20 * time.Millisecond); c.Shut() }() }, time.Second, ErrClosed},
		{"lost", func(c *Core) { c.Start(); go func() { time.Sleep(20 * time.Millisecond); c.SetLost() }() }, time.Second, ErrDeviceLost},
		{"stalled", func(c *Core) { c.Start() }, 5 * time.Second, ErrDeviceLost},
		{"not started is no stall", func(c *Core) {}, 300 * time.Millisecond, context.DeadlineExceeded},
	}
	for _, tc := range tests {
		for _, op := range []string{"Read", "Write"} {
			t.Run(tc.name+"/"+op, func(t *testing.T) {
				c := testCore(t, CoreConfig{PeriodFrames: 96, PlayoutFrames: 512, StallTimeout: 100 * time.Millisecond})
				tc.setup(c)
				ctx, cancel := context.WithTimeout(context.Background(), tc.ctx)
				defer cancel()
				start := time.Now()
				var err error
				if op == "Read" {
					_, _, err = c.Read(ctx, dst)
				} else {
					_, err = c.Write(ctx, make([]float64, 4096)) // more than the queue holds
				}
				if !errors.Is(err, tc.want) {
					t.Fatalf("%s = %v, want %v", op, err, tc.want)
				}
				if el := time.Since(start); el > tc.ctx+200*time.Millisecond {
					t.Fatalf("%s took %v", op, el)
				}
			})
		}
	}
}

func TestNewCoreErrors(t *testing.T) {
	tests := []struct {
		name string
		cfg  CoreConfig
	}{
		{"rate too low", CoreConfig{Rate: 100, InChannels: 2, OutChannels: 2}},
		{"no inputs", CoreConfig{Rate: 48000, InChannels: 0, OutChannels: 2}},
		{"too many outputs", CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 33}},
		{"negative period", CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, PeriodFrames: -1}},
		{"tiny capture ring", CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, CaptureFrames: 10}},
		{"level above cap", CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, Output: OutputConfig{LevelDBFS: -1, CapDBFS: -6, FadeMS: 50, MuteMS: 5}}},
		{"bad routing", CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, Routing: Routing{Response: 3}}},
		{"negative stall", CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, StallTimeout: -time.Second}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, err := NewCore(tc.cfg)
			if err == nil || c != nil {
				t.Fatalf("NewCore(%+v) = %v, %v; want an error", tc.cfg, c, err)
			}
			t.Log(err)
		})
	}
}

func TestRoutingResolve(t *testing.T) {
	tests := []struct {
		name    string
		r       Routing
		in, out int
		want    Routing
		wantErr bool
	}{
		{"defaults stereo", Routing{}, 2, 2, Routing{Stimulus: 0b11, Response: 1, Reference: 2}, false},
		{"defaults mono input", Routing{}, 1, 2, Routing{Stimulus: 0b11, Response: 1, Reference: NoReference}, false},
		{"swapped inputs, output 2 only", Routing{Stimulus: MaskOf(2), Response: 2, Reference: 1}, 2, 2, Routing{Stimulus: 0b10, Response: 2, Reference: 1}, false},
		{"eight outputs", Routing{}, 2, 8, Routing{Stimulus: 0xff, Response: 1, Reference: 2}, false},
		{"thirty-two outputs", Routing{}, 2, 32, Routing{Stimulus: 0xffffffff, Response: 1, Reference: 2}, false},
		{"no reference", Routing{Reference: NoReference}, 2, 2, Routing{Stimulus: 0b11, Response: 1, Reference: NoReference}, false},
		{"output 3 of 2", Routing{Stimulus: MaskOf(3)}, 2, 2, Routing{}, true},
		{"response input 3 of 2", Routing{Response: 3}, 2, 2, Routing{}, true},
		{"reference equals response", Routing{Response: 2, Reference: 2}, 2, 2, Routing{}, true},
		{"reference -2", Routing{Reference: -2}, 2, 2, Routing{}, true},
		{"zero channels", Routing{}, 0, 2, Routing{}, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.r.Resolve(tc.in, tc.out)
			if (err != nil) != tc.wantErr {
				t.Fatalf("Resolve = %+v, %v; want error %v", got, err, tc.wantErr)
			}
			if err == nil && got != tc.want {
				t.Fatalf("Resolve = %+v, want %+v", got, tc.want)
			}
		})
	}
}

// TestProcessNoAllocs checks the callback bodies allocate nothing, with a
// stimulus queued, holes in the schedule, late samples and capture
// overruns all happening (STYLE.md: AllocsPerRun on the callback path).
func TestProcessNoAllocs(t *testing.T) {
	ctx := context.Background()
	c := testCore(t, CoreConfig{PeriodFrames: 480, CaptureFrames: 2048, PlayoutFrames: 1 << 16})
	c.Start()
	out := make([]float32, 2*480)
	in := make([]float32, 2*480)
	stim := make([]float64, 40000)
	for i := range stim {
		stim[i] = math.Sin(float64(i) / 10)
	}
	if _, err := c.WriteAt(ctx, 1000, stim[:20000]); err != nil {
		t.Fatal(err)
	}
	if _, err := c.WriteAt(ctx, 22000, stim[20000:]); err != nil { // a hole
		t.Fatal(err)
	}
	i := 0
	allocs := testing.AllocsPerRun(200, func() {
		i++
		c.ProcessDuplex(out, in, 480-i%50)
		c.ProcessCapture(in, 100)
		c.ProcessPlayback(out, 10)
		if i%20 == 0 {
			c.Output().Mute()
		} else if i%20 == 5 {
			c.Output().Unmute()
		}
	})
	if allocs != 0 {
		t.Fatalf("%v allocations per callback, want 0", allocs)
	}
	if st := c.Stats(); st.Dropped == 0 || st.StimulusFrames == 0 {
		t.Fatalf("the run did not exercise overruns and playout: %+v", st)
	}
}

// BenchmarkProcessDuplex measures the callback body per period size; x-rt
// is how many times faster than real time at 48 kHz.
func BenchmarkProcessDuplex(b *testing.B) {
	for _, frames := range []int{256, 960, 2400} {
		b.Run(fmt.Sprintf("frames=%d", frames), func(b *testing.B) {
			c := testCore(b, CoreConfig{PeriodFrames: frames})
			out := make([]float32, 2*frames)
			in := make([]float32, 2*frames)
			stim := make([]float64, c.playout.Cap())
			dst := [][]float64{make([]float64, frames), make([]float64, frames)}
			ctx := context.Background()
			b.ReportAllocs()
			for b.Loop() {
				if c.playout.Free() >= frames {
					c.queue(ctx, stim[:frames])
				}
				c.ProcessDuplex(out, in, frames)
				c.Read(ctx, dst)
			}
			perFrame := b.Elapsed().Seconds() / float64(b.N) / float64(frames)
			b.ReportMetric(1/(perFrame*48000), "x-rt")
		})
	}
}

func ExampleCore() {
	c, err := NewCore(CoreConfig{Rate: 48000, InChannels: 2, OutChannels: 2, PeriodFrames: 4,
		Output: OutputConfig{LevelDBFS: -6, CapDBFS: -6, FadeMS: 1, MuteMS: 1}})
	if err != nil {
		fmt.Println(err)
		return
	}
	c.Start()
	out := make([]float32, 2*64)
	in := make([]float32, 2*64)
	c.ProcessDuplex(out, in, 64) // the fade-in (48 frames) plays on silence
	ctx := context.Background()
	c.WriteAt(ctx, 100, []float64{1, -1, 0.5})
	c.ProcessDuplex(out, in, 64)                          // frames 64…127
	fmt.Println(out[2*36:2*39], c.Stats().StimulusFrames) // frames 100…102, both outputs
	// Output:
	// [0.5011872 0.5011872 -0.5011872 -0.5011872 0.2505936 0.2505936] 3
}
