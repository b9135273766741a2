package bench

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"
	"time"

	"tonetrace/audio"
	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
)

// goroutinesBack waits until the number of goroutines falls to n or below,
// up to 2 s, and reports whether it did.
func goroutinesBack(n int) bool {
	for deadline := time.Now().Add(2 * time.Second); time.Now().Before(deadline); time.Sleep(5 * time.Millisecond) {
		if runtime.NumGoroutine() <= n {
			return true
		}
	}
	return false
}

// TestStream uses the bench as an audio.Stream, paced and unpaced: a noise
// stimulus is written, the captures are read with continuous indices, the
// reference input carries the stimulus delayed by exactly Latency() frames
// (the peak of the cross-correlation), the counters add up, Close is
// idempotent and leaves no goroutine behind.
func TestStream(t *testing.T) {
	for _, paced := range []bool{false, true} {
		name := map[bool]string{false: "unpaced", true: "paced"}[paced]
		t.Run(name, func(t *testing.T) {
			before := runtime.NumGoroutine()
			b, err := Open(Config{Paced: paced, Seed: 4})
			if err != nil {
				t.Fatal(err)
			}
			var s audio.Stream = b // the bench is a stream
			if in, out := s.Channels(); in != 2 || out != 2 || s.Rate() != testRate {
				t.Fatalf("Channels %d×%d at %d Hz, want 2×2 at %d", in, out, s.Rate(), testRate)
			}
			if rt := s.Routing(); rt.Response != 1 || rt.Reference != 2 || !rt.Stimulus.Has(1) || !rt.Stimulus.Has(2) {
				t.Errorf("Routing %+v, want the default", rt)
			}
			r := rand.New(rand.NewPCG(9, 10))
			stim := make([]float64, testRate*3/10)
			for i := range stim {
				stim[i] = max(-1, min(1, 0.3*r.NormFloat64()))
			}
			at := b.PlayIndex() + testRate/10
			frames := at + int64(b.Latency()) + int64(len(stim)) + testRate/50
			start := time.Now()
			rec := record(t, b, stim, at, frames, false)
			elapsed := time.Since(start)
			if len(rec.jumps) != 0 {
				t.Errorf("capture index jumps %v", rec.jumps)
			}
			if paced && elapsed.Seconds() < 0.8*float64(frames-at)/testRate {
				t.Errorf("paced bench delivered %.2f s of audio in %v", float64(frames-at)/testRate, elapsed)
			}
			// The reference input is the stimulus delayed by Latency().
			lag := bestLag(rec.x[1], stim, at, b.Latency()-8, b.Latency()+8)
			if lag != b.Latency() {
				t.Errorf("reference lags the stimulus by %d frames, Latency() says %d", lag, b.Latency())
			}
			st := b.Stats()
			if st.StimulusFrames != int64(len(stim)) || st.Late != 0 || st.Underruns != 0 || st.Dropped != 0 {
				t.Errorf("Stats %+v: want all %d stimulus frames played, none late, no underrun, nothing dropped", st, len(stim))
			}
			if st.CaptureFrames < frames || st.PlayFrames < frames-int64(b.Latency()) {
				t.Errorf("Stats %+v after reading %d frames", st, frames)
			}
			if err := b.Close(); err != nil {
				t.Errorf("Close: %v", err)
			}
			if err := b.Close(); err != nil {
				t.Errorf("second Close: %v", err)
			}
			if _, _, err := b.Read(context.Background(), [][]float64{make([]float64, 4), make([]float64, 4)}); !errors.Is(err, audio.ErrClosed) {
				t.Errorf("Read after Close: %v, want ErrClosed", err)
			}
			if _, err := b.Write(context.Background(), []float64{0.1}); !errors.Is(err, audio.ErrClosed) {
				t.Errorf("Write after Close: %v, want ErrClosed", err)
			}
			if err := b.SetValue("R2", 3300); !errors.Is(err, audio.ErrClosed) {
				t.Errorf("SetValue after Close: %v, want ErrClosed", err)
			}
			if !goroutinesBack(before) {
				t.Errorf("%d goroutines after Close, %d before Open", runtime.NumGoroutine(), before)
			}
		})
	}
}

// bestLag returns the lag in lo…hi at which x (by capture index) best
// matches stim played from output frame at (largest cross-correlation).
func bestLag(x, stim []float64, at int64, lo, hi int) int {
	best, bestSum := lo, math.Inf(-1)
	for lag := lo; lag <= hi; lag++ {
		var sum float64
		for i, v := range stim {
			if k := int(at) + lag + i; k < len(x) && !math.IsNaN(x[k]) {
				sum += v * x[k]
			}
		}
		if sum > bestSum {
			best, bestSum = lag, sum
		}
	}
	return best
}

// TestOutputStage checks that the bench's outputs go through the core's
// output stage: with the stimulus routed to output 1 only, the reference
// input hears nothing, and a mute silences the response.
func TestOutputStage(t *testing.T) {
	b := openBench(t, Config{Seed: 5, Routing: audio.Routing{Stimulus: audio.MaskOf(1)}})
	stim := sine(1000, 1, testRate/2)
	at := b.PlayIndex() + testRate/10
	rec := record(t, b, stim, at, at+int64(b.Latency())+int64(len(stim)), false)
	from := int(at) + b.Latency() + testRate/5
	block := func(c int) []float64 { return rec.x[c][from : from+testRate/10] }
	// −20 dBFS stimulus level (audio.DefaultOutputConfig), presence
	// network near 1 kHz about +1 dB: the response RMS is near 0.08.
	if r := rms(block(0)); r < 0.05 {
		t.Errorf("response RMS %g, want the stimulus", r)
	}
	noise := math.Pow(10, DefaultInterface().NoiseDBFS/20)
	if r := rms(block(1)); r > 2*noise {
		t.Errorf("reference RMS %g with output 2 silent, want the noise floor %g", r, noise)
	}
}

// TestOpenErrors covers the configuration errors.
func TestOpenErrors(t *testing.T) {
	unstable, err := netlist.Parse(strings.NewReader("* positive feedback\nR1 in x 1k\nU1 out x fb\nR2 out fb 1k\nR3 fb 0 1k\nC1 x out 1u\nR4 x 0 10k\n"), "")
	if err != nil {
		t.Fatal(err)
	}
	ifc := func(edit func(*Interface)) Interface {
		f := DefaultInterface()
		edit(&f)
		return f
	}
	for _, c := range []struct {
		name string
		cfg  Config
		want string
	}{
		{"rate", Config{Rate: 1000}, "sample rate 1000 Hz is out of range"},
		{"period ms", Config{PeriodMS: 1000}, "period 1000 ms is out of range"},
		{"period frames", Config{PeriodFrames: 8}, "period of 8 frames is out of range"},
		{"capture", Config{CaptureMS: 10}, "capture buffer of 10 ms"},
		{"playout", Config{PlayoutMS: 50}, "playout buffer of 50 ms"},
		{"fault", Config{Faults: []Fault{"wobble"}}, `unknown fault "wobble"`},
		{"fault twice", Config{Faults: []Fault{FaultHum, FaultHum}}, `fault "hum" is given twice`},
		{"fixture", Config{Fixture: mna.Fixture{SourceOhms: -1}}, "Config.Fixture"},
		{"coupling", Config{Interface: ifc(func(f *Interface) { f.CouplingHz[1] = 1000 })}, "CouplingHz[1]"},
		{"anti-alias", Config{Interface: ifc(func(f *Interface) { f.AntiAlias[0] = 0.6 })}, "AntiAlias[0]"},
		{"gain", Config{Interface: ifc(func(f *Interface) { f.GainDB[0] = math.NaN() })}, "GainDB[0]"},
		{"noise", Config{Interface: ifc(func(f *Interface) { f.NoiseDBFS = 0 })}, "NoiseDBFS"},
		{"buffers", Config{Interface: ifc(func(f *Interface) { f.BufferPeriods = 0 })}, "BufferPeriods"},
		{"converter", Config{Interface: ifc(func(f *Interface) { f.ConverterMS = -1 })}, "ConverterMS"},
		{"routing", Config{Routing: audio.Routing{Response: 3}}, "bench: audio:"},
		{"unstable network", Config{Netlist: unstable}, "cannot be simulated"},
	} {
		t.Run(c.name, func(t *testing.T) {
			b, err := Open(c.cfg)
			if err == nil {
				b.Close()
				t.Fatalf("Open succeeded, want an error containing %q", c.want)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q, want it to contain %q", err, c.want)
			}
		})
	}
}

// TestDefaultNetlistMatchesTestdata keeps the built-in network in step with
// testdata/networks/presence.cir, whose values the comment derives.
func TestDefaultNetlistMatchesTestdata(t *testing.T) {
	file, err := netlist.ParseFile("../../testdata/networks/presence.cir")
	if err != nil {
		t.Fatal(err)
	}
	def := DefaultNetlist()
	if def.Title != file.Title || len(def.Elements) != len(file.Elements) || def.In != file.In || def.Out != file.Out {
		t.Fatalf("built-in netlist %q (%d elements) differs from presence.cir %q (%d elements)", def.Title, len(def.Elements), file.Title, len(file.Elements))
	}
	for i, e := range def.Elements {
		f := file.Elements[i]
		if e.Name != f.Name || e.Kind != f.Kind || e.Value != f.Value || strings.Join(e.Nodes, " ") != strings.Join(f.Nodes, " ") {
			t.Errorf("element %d: built-in %+v, file %+v", i, e, f)
		}
	}
	// The comment's f0 = 1/(2π√(LC)) = 3063 Hz for 100 mH and 27 nF.
	if f0 := 1 / (2 * math.Pi * math.Sqrt(100e-3*27e-9)); math.Abs(f0-3063) > 1 {
		t.Errorf("f0 = %g Hz", f0)
	}
}

// TestRunPeriodAllocs asserts the simulated device's period allocates
// nothing, with every fault that changes the per-period path switched on.
func TestRunPeriodAllocs(t *testing.T) {
	b := openBench(t, Config{Seed: 6, Faults: []Fault{FaultSwap, FaultClip, FaultHum, FaultInvert, FaultDropout, FaultDrift}})
	if err := b.Close(); err != nil { // stop the goroutine; drive the rig here
		t.Fatal(err)
	}
	r := b.rig
	if n := testing.AllocsPerRun(200, r.runPeriod); n != 0 {
		t.Errorf("runPeriod allocates %g times per period", n)
	}
}
