package stimulus

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// Tolerances for the stepped-sine checks.
const (
	fitAmpTol   = 1e-9 // relative amplitude error of an exact sine fit
	fitPhaseTol = 1e-7 // radians
)

// fitSine is a least-squares fit of x[n] ≈ a·sin(w(n−ref)) + b·cos(w(n−ref))
// with w known (the 3-parameter fit of IEEE Std 1057, REFERENCES §1 [S],
// without the offset term) and returns amplitude √(a²+b²) and phase
// atan2(b, a) at sample ref, for x = A·sin(w(n−ref) + θ).
func fitSine(x []float64, first int, w float64, ref int) (amp, phase float64) {
	var ss, sc, cc, xs, xc float64
	for j, v := range x {
		arg := w * float64(first+j-ref)
		s, c := math.Sincos(arg)
		ss += s * s
		sc += s * c
		cc += c * c
		xs += v * s
		xc += v * c
	}
	det := ss*cc - sc*sc
	a := (xs*cc - xc*sc) / det
	b := (xc*ss - xs*sc) / det
	return math.Hypot(a, b), math.Atan2(b, a)
}

func angleDiff(a, b float64) float64 { return math.Remainder(a-b, 2*math.Pi) }

func testSteps() []Step {
	return []Step{
		{Freq: 100, Settle: 960, Integrate: 4800},
		{Freq: 1000.5, Settle: 480, Integrate: 4801},
		{Freq: 7777.7, Settle: 0, Integrate: 1234},
		{Freq: 31.25, Settle: 4800, Integrate: 9600},
	}
}

func TestSteppedSineSchedule(t *testing.T) {
	const fade = 480
	s, err := NewSteppedSine(48000, testSteps(), fade, -6, -3)
	if err != nil {
		t.Fatal(err)
	}
	got := s.Schedule(nil)
	// Hand-computed from the step lengths: starts are running sums of
	// settle + integrate.
	want := []struct {
		start, integ int64
		length       int
	}{{0, 960, 4800}, {5760, 6240, 4801}, {11041, 11041, 1234}, {12275, 17075, 9600}}
	for i, w := range want {
		b := got[i]
		if b.Start != w.start || b.IntegrateStart != w.integ || b.Length != w.length || b.Freq != testSteps()[i].Freq {
			t.Errorf("block %d = %+v, want start %d integrate %d length %d", i, b, w.start, w.integ, w.length)
		}
	}
	if s.Len() != 26675+fade {
		t.Errorf("length %d, want %d", s.Len(), 26675+fade)
	}
	buf := make([]Block, 0, 8)
	if again := s.Schedule(buf); &again[0] != &buf[:1][0] {
		t.Errorf("Schedule did not reuse dst")
	}
}

// TestSteppedSineBlocks fits each integration block and checks the
// amplitude is the level's and the phase is the one the schedule reports.
func TestSteppedSineBlocks(t *testing.T) {
	const level = -6.0
	s, err := NewSteppedSine(48000, testSteps(), 480, level, -3)
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, s.Len())
	if n := s.Read(x); int64(n) != s.Len() {
		t.Fatalf("read %d of %d", n, s.Len())
	}
	if n := s.Read(x); n != 0 {
		t.Errorf("read %d after the end, want 0", n)
	}
	for i, b := range s.Schedule(nil) {
		blk := x[b.IntegrateStart : b.IntegrateStart+int64(b.Length)]
		w := 2 * math.Pi * b.Freq / 48000
		amp, ph := fitSine(blk, int(b.IntegrateStart), w, int(b.IntegrateStart))
		if math.Abs(amp/Amplitude(level)-1) > fitAmpTol {
			t.Errorf("block %d: amplitude %.12g, want %.12g", i, amp, Amplitude(level))
		}
		if d := angleDiff(ph, b.Phase); math.Abs(d) > fitPhaseTol {
			t.Errorf("block %d: fitted phase %.9f rad, schedule says %.9f", i, ph, b.Phase)
		}
		if b.Phase < 0 || b.Phase >= 2*math.Pi {
			t.Errorf("block %d: phase %g outside [0, 2π)", i, b.Phase)
		}
	}
}

// TestSteppedSinePhaseContinuity fits the sine just before and just after
// each step boundary, each with its own frequency, and extrapolates both
// to the boundary sample: the phases must agree (no phase jump), and no
// sample-to-sample difference may exceed that of the fastest sine,
// 2A·sin(π·fmax/fs) (a jump would).
func TestSteppedSinePhaseContinuity(t *testing.T) {
	steps := testSteps()
	s, err := NewSteppedSine(48000, steps, 0, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, s.Len())
	s.Read(x)
	sched := s.Schedule(nil)
	const side = 200
	for i := 1; i < len(sched); i++ {
		b := int(sched[i].Start)
		_, left := fitSine(x[b-side:b], b-side, 2*math.Pi*steps[i-1].Freq/48000, b)
		_, right := fitSine(x[b:b+side], b, 2*math.Pi*steps[i].Freq/48000, b)
		if d := angleDiff(left, right); math.Abs(d) > fitPhaseTol {
			t.Errorf("boundary %d at sample %d: phase %.9f before, %.9f after", i, b, left, right)
		}
	}
	fmax := 0.0
	for _, st := range steps {
		fmax = math.Max(fmax, st.Freq)
	}
	limit := 2 * math.Sin(math.Pi*fmax/48000) * (1 + 1e-9)
	for n := 1; n < len(x); n++ {
		if d := math.Abs(x[n] - x[n-1]); d > limit {
			t.Fatalf("jump of %g between samples %d and %d, more than %g", d, n-1, n, limit)
		}
	}
}

func TestSteppedSineFades(t *testing.T) {
	const fade = 480
	amp := Amplitude(-6)
	s, _ := NewSteppedSine(48000, testSteps(), fade, -6, -6)
	x := make([]float64, s.Len())
	s.Read(x)
	if x[0] != 0 || x[len(x)-1] != 0 {
		t.Errorf("ends %g, %g; want 0 (raised-cosine fades)", x[0], x[len(x)-1])
	}
	for k := 0; k < fade; k++ {
		if math.Abs(x[k]) > amp*FadeGain(k, fade)+exactTol || math.Abs(x[len(x)-1-k]) > amp*FadeGain(k, fade)+exactTol {
			t.Fatalf("sample %d from an end exceeds the fade envelope", k)
		}
	}
	// After the fade-in, the signal is the unfaded sine: compare with a
	// sequence without fades.
	s0, _ := NewSteppedSine(48000, testSteps(), 0, -6, -6)
	y := make([]float64, s0.Len())
	s0.Read(y)
	for n := fade; n < len(y); n++ {
		if x[n] != y[n] {
			t.Fatalf("sample %d differs from the unfaded sequence", n)
		}
	}
	// The tail continues the last step's sine for fade samples.
	last := s.Schedule(nil)[3]
	tail := x[last.IntegrateStart+int64(last.Length):]
	if len(tail) != fade {
		t.Errorf("tail of %d samples, want %d", len(tail), fade)
	}
}

// TestSteppedSineChunking checks that reads of any sizes give the same
// samples as one read, and that Reset replays them.
func TestSteppedSineChunking(t *testing.T) {
	s, _ := NewSteppedSine(44100, testSteps(), 300, -20, -10)
	whole := make([]float64, s.Len())
	s.Read(whole)
	s.Reset()
	rng := rand.New(rand.NewPCG(11, 12))
	var got []float64
	buf := make([]float64, 5000)
	for {
		n := s.Read(buf[:rng.IntN(len(buf))+1])
		if n == 0 {
			break
		}
		got = append(got, buf[:n]...)
		if s.Pos() != int64(len(got)) {
			t.Fatalf("Pos %d after %d samples", s.Pos(), len(got))
		}
	}
	if !slices.Equal(got, whole) {
		t.Errorf("chunked reads differ from one read")
	}
}

func TestSteppedSineReadAllocs(t *testing.T) {
	s, _ := NewSteppedSine(48000, testSteps(), 480, -20, -10)
	buf := make([]float64, 512)
	allocs := testing.AllocsPerRun(100, func() {
		if s.Read(buf) == 0 {
			s.Reset()
		}
	})
	if allocs != 0 {
		t.Errorf("Read allocates %.1f times per call", allocs)
	}
}

func TestSteppedSineErrors(t *testing.T) {
	ok := testSteps()
	cases := []struct {
		name  string
		rate  float64
		steps []Step
		fade  int
	}{
		{"no steps", 48000, nil, 0},
		{"zero rate", 0, ok, 0},
		{"infinite rate", math.Inf(1), ok, 0},
		{"zero frequency", 48000, []Step{{Freq: 0, Settle: 10, Integrate: 10}}, 0},
		{"at Nyquist", 48000, []Step{{Freq: 24000, Settle: 10, Integrate: 10}}, 0},
		{"NaN frequency", 48000, []Step{{Freq: math.NaN(), Settle: 10, Integrate: 10}}, 0},
		{"negative settle", 48000, []Step{{Freq: 1000, Settle: -1, Integrate: 10}}, 0},
		{"empty block", 48000, []Step{{Freq: 1000, Settle: 10, Integrate: 0}}, 0},
		{"negative fade", 48000, ok, -1},
		{"fade into block", 48000, ok, 961},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if s, err := NewSteppedSine(c.rate, c.steps, c.fade, -20, -10); err == nil {
				t.Errorf("no error, got a sequence of %d samples", s.Len())
			}
		})
	}
}

func ExampleSteppedSine() {
	steps := []Step{
		{Freq: 100, Settle: 2400, Integrate: 4800},
		{Freq: 1001, Settle: 480, Integrate: 4800},
	}
	s, err := NewSteppedSine(48000, steps, 480, -20, -10)
	if err != nil {
		panic(err)
	}
	for _, b := range s.Schedule(nil) {
		fmt.Printf("%g Hz: step at %d, integrate %d samples from %d, phase %.4f rad\n",
			b.Freq, b.Start, b.Length, b.IntegrateStart, b.Phase)
	}
	fmt.Println("total", s.Len(), "samples")
	// Output:
	// 100 Hz: step at 0, integrate 4800 samples from 2400, phase 0.0000 rad
	// 1001 Hz: step at 7200, integrate 4800 samples from 7680, phase 0.0628 rad
	// total 12960 samples
}
