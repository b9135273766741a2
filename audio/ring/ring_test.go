package ring

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"
	"time"
)

// frameValue is the sample a test writes at channel c of the frame with
// absolute index idx: distinct per frame and channel, exact in float32 for
// indices below 2^20.
func frameValue(idx int64, c int) float64 { return float64(idx%(1<<20))*8 + float64(c) }

// fill writes n frames starting at absolute index idx into dst (interleaved).
func fill[T Sample](dst []T, idx int64, ch int) {
	for i := 0; i < len(dst)/ch; i++ {
		for c := 0; c < ch; c++ {
			dst[i*ch+c] = T(frameValue(idx+int64(i), c))
		}
	}
}

// check reports the first frame of got (interleaved, starting at absolute
// index first) whose samples are not the ones fill wrote.
func check[T Sample](got []T, first int64, ch int) error {
	for i := 0; i < len(got)/ch; i++ {
		for c := 0; c < ch; c++ {
			if want := T(frameValue(first+int64(i), c)); got[i*ch+c] != want {
				return fmt.Errorf("frame %d (index %d) channel %d = %v, want %v", i, first+int64(i), c, got[i*ch+c], want)
			}
		}
	}
	return nil
}

func TestNewCapacity(t *testing.T) {
	tests := []struct {
		name             string
		frames, channels int
		wantCap          int
	}{
		{"one frame", 1, 1, 1},
		{"power of two kept", 1024, 2, 1024},
		{"rounded up", 1000, 2, 1024},
		{"just above a power", 1025, 3, 2048},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := New[float32](tc.frames, tc.channels)
			if r.Cap() != tc.wantCap || r.Channels() != tc.channels {
				t.Fatalf("Cap, Channels = %d, %d; want %d, %d", r.Cap(), r.Channels(), tc.wantCap, tc.channels)
			}
			if r.Free() != tc.wantCap || r.Buffered() != 0 {
				t.Fatalf("empty ring: Free %d Buffered %d", r.Free(), r.Buffered())
			}
		})
	}
}

func TestPanics(t *testing.T) {
	tests := []struct {
		name string
		fn   func()
	}{
		{"zero frames", func() { New[float32](0, 2) }},
		{"zero channels", func() { New[float64](8, 0) }},
		{"too large", func() { New[float32](1<<40, 2) }},
		{"write partial frame", func() { New[float32](8, 2).Write(make([]float32, 3)) }},
		{"trywrite partial frame", func() { New[float32](8, 2).TryWrite(make([]float32, 1)) }},
		{"read partial frame", func() { New[float64](8, 2).Read(make([]float64, 5)) }},
		{"negative skip", func() { New[float32](8, 1).Skip(-1) }},
		{"consume more than peeked", func() {
			r := New[float32](8, 1)
			r.Write([]float32{1, 2})
			r.Peek()
			r.Consume(3)
		}},
		{"consume negative", func() { New[float32](8, 1).Consume(-1) }},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Fatal("no panic")
				}
			}()
			tc.fn()
		})
	}
}

// TestWrapAndDrop walks a small ring through fills, partial reads,
// wraparound, an overrun and a skip, checking contents, indices and counters.
func TestWrapAndDrop(t *testing.T) {
	const ch = 2
	r := New[float32](8, ch)
	buf := make([]float32, 12*ch)

	fill(buf[:6*ch], 0, ch)
	if n := r.TryWrite(buf[:6*ch]); n != 6 {
		t.Fatalf("TryWrite 6 into empty 8: wrote %d", n)
	}
	dst := make([]float32, 4*ch)
	n, first := r.Read(dst)
	if n != 4 || first != 0 {
		t.Fatalf("Read 4: n %d first %d", n, first)
	}
	if err := check(dst[:n*ch], first, ch); err != nil {
		t.Fatal(err)
	}
	// 2 buffered; write 9 more: 6 fit (wrapping), 3 are dropped.
	fill(buf[:9*ch], 6, ch)
	if n := r.TryWrite(buf[:9*ch]); n != 6 {
		t.Fatalf("TryWrite 9 with 6 free: wrote %d", n)
	}
	if r.Dropped() != 3 || r.Overruns() != 1 {
		t.Fatalf("Dropped %d Overruns %d, want 3 and 1", r.Dropped(), r.Overruns())
	}
	if r.WriteIndex() != 15 {
		t.Fatalf("WriteIndex %d, want 15 (6+9, drops keep their indices)", r.WriteIndex())
	}
	// The consumer gets frames 4..11 across the wrap, then the hole 12..14.
	a, b, first := r.Peek()
	if first != 4 || len(a)+len(b) != 8*ch || len(b) == 0 {
		t.Fatalf("Peek: first %d, %d+%d samples; want 4, 16 samples split by the wrap", first, len(a), len(b))
	}
	if err := check(a, first, ch); err != nil {
		t.Fatal(err)
	}
	if err := check(b, first+int64(len(a)/ch), ch); err != nil {
		t.Fatal(err)
	}
	r.Consume(8)
	// After the hole: the producer skips 5 on purpose, then writes 2.
	r.Skip(5)
	fill(buf[:2*ch], 20, ch)
	if n := r.TryWrite(buf[:2*ch]); n != 2 {
		t.Fatalf("TryWrite after skip: wrote %d", n)
	}
	n, first = r.Read(dst)
	if n != 2 || first != 20 {
		t.Fatalf("Read after drop+skip: n %d first %d, want 2 at 20", n, first)
	}
	if err := check(dst[:n*ch], first, ch); err != nil {
		t.Fatal(err)
	}
	if r.ReadIndex() != 22 || r.Dropped() != 3 {
		t.Fatalf("ReadIndex %d Dropped %d, want 22, 3 (a skip is not a drop)", r.ReadIndex(), r.Dropped())
	}
	// Write (not TryWrite) leaves the rest to the caller: nothing dropped.
	fill(buf[:12*ch], 22, ch)
	if n := r.Write(buf[:12*ch]); n != 8 {
		t.Fatalf("Write 12 into 8 free: wrote %d", n)
	}
	if r.Dropped() != 3 || r.WriteIndex() != 30 {
		t.Fatalf("after Write: Dropped %d WriteIndex %d, want 3 and 30", r.Dropped(), r.WriteIndex())
	}
}

// TestRandomSequential interleaves random writes, skips and reads of random
// sizes in one goroutine and checks every frame against its index.
func TestRandomSequential(t *testing.T) {
	for _, ch := range []int{1, 2, 3} {
		for _, capFrames := range []int{1, 7, 64} {
			t.Run(fmt.Sprintf("ch%d_cap%d", ch, capFrames), func(t *testing.T) {
				rng := rand.New(rand.NewPCG(uint64(ch), uint64(capFrames)))
				r := New[float64](capFrames, ch)
				src := make([]float64, 3*r.Cap()*ch)
				dst := make([]float64, 3*r.Cap()*ch)
				var next int64 // index the consumer expects at least
				var dropped int64
				for step := 0; step < 4000; step++ {
					switch rng.IntN(4) {
					case 0, 1:
						n := rng.IntN(2*r.Cap() + 1)
						idx := r.WriteIndex()
						fill(src[:n*ch], idx, ch)
						free := r.Free()
						w := r.TryWrite(src[:n*ch])
						if w != min(n, free) {
							t.Fatalf("step %d: TryWrite(%d) with %d free wrote %d", step, n, free, w)
						}
						dropped += int64(n - w)
					case 2:
						if rng.IntN(4) == 0 {
							r.Skip(int64(rng.IntN(5)))
						}
					case 3:
						n := rng.IntN(2*r.Cap() + 1)
						got, first := r.Read(dst[:n*ch])
						if got > 0 && first < next {
							t.Fatalf("step %d: first %d before %d", step, first, next)
						}
						if err := check(dst[:got*ch], first, ch); err != nil {
							t.Fatalf("step %d: %v", step, err)
						}
						if got > 0 {
							next = first + int64(got)
						}
					}
				}
				if r.Dropped() != dropped {
					t.Fatalf("Dropped %d, counted %d", r.Dropped(), dropped)
				}
			})
		}
	}
}

// TestConcurrent runs a producer and a consumer goroutine on a small ring
// for a bounded number of frames. Run with -race: every frame the consumer
// sees must carry its own index, indices must only grow, and the frames seen
// plus those dropped and skipped must account for every index written.
func TestConcurrent(t *testing.T) {
	total := int64(400_000)
	if testing.Short() {
		total = 100_000
	}
	for _, ch := range []int{1, 2} {
		t.Run(fmt.Sprintf("float32_ch%d", ch), func(t *testing.T) { concurrent[float32](t, ch, total) })
		t.Run(fmt.Sprintf("float64_ch%d", ch), func(t *testing.T) { concurrent[float64](t, ch, total) })
	}
}

func concurrent[T Sample](t *testing.T, ch int, total int64) {
	r := New[T](256, ch)
	var wg sync.WaitGroup
	var skipped int64
	var end int64 // WriteIndex after the last write; read after wg.Wait
	done := make(chan struct{})
	deadline := time.Now().Add(20 * time.Second)
	wg.Add(1)
	go func() { // producer
		defer wg.Done()
		defer close(done)
		rng := rand.New(rand.NewPCG(1, uint64(ch)))
		src := make([]T, 300*ch)
		for r.WriteIndex() < total && time.Now().Before(deadline) {
			if rng.IntN(50) == 0 {
				k := int64(rng.IntN(10))
				r.Skip(k)
				skipped += k
			}
			n := 1 + rng.IntN(300)
			fill(src[:n*ch], r.WriteIndex(), ch)
			r.TryWrite(src[:n*ch])
			if rng.IntN(2) == 0 {
				runtime.Gosched() // let the consumer keep up part of the time
			}
		}
		end = r.WriteIndex()
	}()
	var seen, next int64
	var firstErr error
	rng := rand.New(rand.NewPCG(2, uint64(ch)))
	dst := make([]T, 400*ch)
	finished := false
	for {
		if !finished {
			select {
			case <-done:
				finished = true // drain what is left, then stop
			default:
			}
		}
		n := 1 + rng.IntN(400)
		got, first := r.Read(dst[:n*ch])
		if got == 0 {
			if finished {
				break
			}
			runtime.Gosched()
			continue
		}
		if first < next && firstErr == nil {
			firstErr = fmt.Errorf("index went back: first %d, expected at least %d", first, next)
		}
		if err := check(dst[:got*ch], first, ch); err != nil && firstErr == nil {
			firstErr = err
		}
		seen += int64(got)
		next = first + int64(got)
	}
	wg.Wait()
	if firstErr != nil {
		t.Fatal(firstErr)
	}
	if end < total {
		t.Fatalf("producer stopped at %d of %d frames (deadline)", end, total)
	}
	if seen+r.Dropped()+skipped != end {
		t.Fatalf("seen %d + dropped %d + skipped %d = %d, want %d", seen, r.Dropped(), skipped, seen+r.Dropped()+skipped, end)
	}
	t.Logf("%d frames: seen %d, dropped %d in %d overruns, skipped %d", end, seen, r.Dropped(), r.Overruns(), skipped)
}

// TestNoAllocs checks the real-time calls allocate nothing (STYLE.md, "A
// real-time core": the hot path never allocates).
func TestNoAllocs(t *testing.T) {
	r := New[float32](1024, 2)
	src := make([]float32, 300*2)
	dst := make([]float32, 300*2)
	allocs := testing.AllocsPerRun(200, func() {
		r.TryWrite(src)
		r.Skip(1)
		r.TryWrite(src[:10])
		a, b, _ := r.Peek()
		r.Consume((len(a) + len(b)) / 2 / 2)
		r.Read(dst)
		r.Read(dst)
	})
	if allocs != 0 {
		t.Fatalf("%v allocations per run, want 0", allocs)
	}
}

func BenchmarkTryWriteRead(b *testing.B) {
	for _, frames := range []int{64, 256, 1024} {
		b.Run(fmt.Sprintf("frames=%d", frames), func(b *testing.B) {
			const ch = 2
			r := New[float32](4096, ch)
			src := make([]float32, frames*ch)
			dst := make([]float32, frames*ch)
			b.ReportAllocs()
			b.SetBytes(int64(frames * ch * 4))
			for b.Loop() {
				r.TryWrite(src)
				r.Read(dst)
			}
		})
	}
}

// BenchmarkConcurrent measures throughput with the producer and consumer on
// separate goroutines.
func BenchmarkConcurrent(b *testing.B) {
	const ch, frames = 2, 256
	r := New[float32](8192, ch)
	src := make([]float32, frames*ch)
	b.ReportAllocs()
	b.SetBytes(int64(frames * ch * 4))
	done := make(chan struct{})
	go func() {
		dst := make([]float32, frames*ch)
		for {
			select {
			case <-done:
				return
			default:
			}
			if n, _ := r.Read(dst); n == 0 {
				runtime.Gosched()
			}
		}
	}()
	for b.Loop() {
		for r.Write(src) == 0 {
			runtime.Gosched()
		}
	}
	close(done)
}

func Example() {
	r := New[float32](4, 2) // 4 stereo frames
	r.TryWrite([]float32{0, 0, 1, 1, 2, 2})
	r.TryWrite([]float32{3, 3, 4, 4, 5, 5}) // one frame fits, two are dropped
	r.TryWrite([]float32{6, 6})             // no room: dropped

	dst := make([]float32, 8)
	n, first := r.Read(dst)
	fmt.Println(n, first, dst[:2*n])
	r.TryWrite([]float32{7, 7})
	n, first = r.Read(dst)
	fmt.Println(n, first, dst[:2*n], "dropped", r.Dropped())
	// Output:
	// 4 0 [0 0 1 1 2 2 3 3]
	// 1 7 [7 7] dropped 3
}
