package device

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"sync"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/dsp/fourier"

	"tonetrace/audio"
)

// The PulseAudio rig (../shared/AUDIO.md, started by .ci/pulse-rig.sh): sink
// "out" is the interface output; source "cap.monitor" the interface input.
// Output 1 passes through the LADSPA one-pole low-pass at 1 kHz (ladspa-sdk
// filter.so, label lpf) to input 1; output 2 goes straight to input 2.
const (
	rigEnv      = "TONETRACE_PULSE_RIG"
	rigPlayback = "out"
	rigCapture  = "cap.monitor"
	rigRate     = 48000
	rigCornerHz = 1000.0
)

// Tolerances of the rig checks.
const (
	// rigGainTolDB and rigPhaseTolDeg bound the one-pole's response at
	// 1 kHz measured through the rig (AUDIO.md [V] saw 0.01 dB, 0.1°).
	rigGainTolDB   = 0.05
	rigPhaseTolDeg = 0.5
	// exactTolDB and exactTolDeg bound the same against the plugin's own
	// pole: only float32 rounding separates them.
	exactTolDB, exactTolDeg = 0.001, 0.01
	// f32Rel is float32 rounding, relative: one ulp is at most 2^-23.
	f32Rel = 1.0 / (1 << 23)
	// lostWithin is how soon Read must report a killed server.
	lostWithin = 2500 * time.Millisecond
	// closeWithin bounds Close after the device is lost.
	closeWithin = 5 * time.Second
)

// rigConfig returns the rig's duplex configuration, or skips the test when
// the rig is not running (TONETRACE_PULSE_RIG=1 says it is).
func rigConfig(t *testing.T) Config {
	t.Helper()
	if os.Getenv(rigEnv) != "1" {
		if os.Getenv("TONETRACE_REQUIRE_TOOLS") == "1" {
			t.Fatalf("PulseAudio rig required (TONETRACE_REQUIRE_TOOLS=1) but %s is not 1; start it with: eval \"$(bash .ci/pulse-rig.sh start)\"", rigEnv)
		}
		t.Skipf("PulseAudio rig not running; start it with: eval \"$(bash .ci/pulse-rig.sh start)\" (sets %s=1)", rigEnv)
	}
	lockRig(t)
	cfg := DefaultConfig()
	cfg.Backend = BackendPulseAudio // explicitly: with no server the default list falls back to ALSA
	cfg.Playback, cfg.Capture = rigPlayback, rigCapture
	cfg.Rate, cfg.PeriodMS = rigRate, 20
	cfg.Output = audio.OutputConfig{LevelDBFS: -6, CapDBFS: -6, FadeMS: 20, MuteMS: 5}
	return cfg
}

// rigStimulus is 100 ms of seeded noise (for alignment) then 1 s of a
// 1 kHz sine, both peak 1.
func rigStimulus() []float64 {
	rng := rand.New(rand.NewPCG(2024, 11))
	const burst, tone = rigRate / 10, rigRate
	s := make([]float64, burst+tone)
	for i := range burst {
		s[i] = 2*rng.Float64() - 1
	}
	for i := range tone {
		s[burst+i] = math.Sin(2 * math.Pi * rigCornerHz * float64(i) / rigRate)
	}
	return s
}

// capture plays stim from output frame at (or, when at < 0, wherever Write
// puts it) and records both inputs until frames frames are in; it returns
// them indexed by capture frame and the output index of stim[0].
func capture(t *testing.T, s *Stream, stim []float64, at int64, frames int) (in [2][]float64, start int64) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	defer cancel()
	var wg sync.WaitGroup
	var werr error
	startCh := make(chan int64, 1)
	wg.Add(1)
	go func() {
		defer wg.Done()
		if at < 0 {
			_, werr = s.Write(ctx, stim[:1])
			startCh <- s.WriteIndex() - 1
			if werr == nil {
				_, werr = s.Write(ctx, stim[1:])
			}
		} else {
			startCh <- at
			_, werr = s.WriteAt(ctx, at, stim)
		}
		s.Finish()
	}()
	in = [2][]float64{make([]float64, frames), make([]float64, frames)}
	buf := [][]float64{make([]float64, 4096), make([]float64, 4096)}
	var next int64
	for next < int64(frames) {
		n, first, err := s.Read(ctx, buf)
		if err != nil {
			t.Fatalf("Read at frame %d: %v", next, err)
		}
		if first != next {
			t.Fatalf("Read: frame %d follows %d: %d frames lost", first, next, first-next)
		}
		m := min(n, frames-int(first))
		copy(in[0][first:], buf[0][:m])
		copy(in[1][first:], buf[1][:m])
		next += int64(n)
	}
	wg.Wait()
	if werr != nil {
		t.Fatalf("Write: %v", werr)
	}
	return in, <-startCh
}

// align finds the lag of want within got: the onset (first sample above
// threshold) gives a candidate, cross-correlation over ±search frames
// around it picks the peak.
func align(t *testing.T, got []float64, want []float64, from int, search int) int {
	t.Helper()
	onset := -1
	for i := from; i < len(got); i++ {
		if math.Abs(got[i]) > 1e-3 {
			onset = i
			break
		}
	}
	if onset < 0 {
		t.Fatal("the stimulus never arrived")
	}
	best, bestC := -1, math.Inf(-1)
	for lag := max(from, onset-search); lag <= onset+search && lag+len(want) <= len(got); lag++ {
		var c float64
		for i, w := range want {
			c += got[lag+i] * w
		}
		if c > bestC {
			best, bestC = lag, c
		}
	}
	return best
}

// ladspaPole returns the pole of ladspa-sdk's "lpf" at f cycles per
// sample, computed as the plugin does, in float32.
func ladspaPole(f float64) float32 {
	c := float32(2 - math.Cos(2*math.Pi*f))
	return c - float32(math.Sqrt(float64(c*c-1)))
}

// tone returns the DFT of x at f cycles per sample: Σ x[n]·e^{−j2πfn}.
func tone(x []float64, f float64) complex128 {
	var re, im float64
	for n, v := range x {
		s, c := math.Sincos(2 * math.Pi * f * float64(n))
		re += v * c
		im -= v * s
	}
	return complex(re, im)
}

// findHole returns a description of the first run of at least holeMin
// zero samples in got where want is not silent — silence the sound server
// inserted when its playback buffer ran dry (a server-side underrun, which
// no counter of the stream can see) — or "" when there is none.
func findHole(got, want []float64) string {
	const holeMin = 32
	for i := 0; i < len(want); {
		if got[i] != 0 || want[i] == 0 {
			i++
			continue
		}
		j := i
		for j < len(want) && got[j] == 0 {
			j++
		}
		if j-i >= holeMin {
			return fmt.Sprintf("%d frames of silence from stimulus sample %d", j-i, i)
		}
		i = j
	}
	return ""
}

// rigAttempts is how many times the rig tests repeat a run spoiled by a
// server-side underrun before they fail.
const rigAttempts = 3

// retryHoles runs one rig measurement up to rigAttempts times while it
// reports a hole the sound server left in the stimulus.
func retryHoles(t *testing.T, run func() (hole string)) {
	t.Helper()
	for attempt := 1; ; attempt++ {
		hole := run()
		if hole == "" {
			return
		}
		if attempt == rigAttempts {
			t.Fatalf("the stimulus had a hole or a dropout in all %d attempts (last: %s): the machine is too busy for %s", rigAttempts, hole, "these periods")
		}
		t.Logf("attempt %d: %s (a busy machine); again", attempt, hole)
	}
}

// TestPulseRigLoop plays the stimulus through the rig's duplex device and
// checks: input 2 (the straight reference path) equals the output sample
// for sample after aligning by the measured latency; input 1 (through the
// one-pole low-pass) has the one-pole's response at 1 kHz; no frame was
// dropped, no underrun at 20 ms periods; miniaudio reports no conversion.
func TestPulseRigLoop(t *testing.T) {
	cfg := rigConfig(t)
	retryHoles(t, func() string { return rigLoop(t, cfg) })
}

func rigLoop(t *testing.T, cfg Config) (hole string) {
	s, err := Open(cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if !s.Duplex() {
		t.Fatal("rig stream is not duplex")
	}
	pp, pn, cp, cn := s.DeviceBuffers()
	t.Logf("backend %s, playback %v, capture %v; device buffers playback %d×%d, capture %d×%d frames",
		s.Backend(), s.Playback(), s.Capture(), pp, pn, cp, cn)
	if c := s.Conversions(); len(c) != 0 {
		t.Errorf("the rig is float32 stereo 48 kHz throughout, yet: %q", c)
	}

	stim := rigStimulus()
	gain := math.Pow(10, cfg.Output.LevelDBFS/20)
	fade := int64(cfg.Output.FadeMS * rigRate / 1000)
	at := max(s.PlayIndex()+int64(s.Lead()), fade+int64(s.Lead()))
	frames := int(at) + len(stim) + rigRate/2 // room for up to 0.5 s latency
	in, at := capture(t, s, stim, at, frames)

	want := make([]float64, len(stim))
	for i, v := range stim {
		want[i] = float64(float32(v * gain)) // what the callback wrote
	}
	lag := align(t, in[1], want[:rigRate/10], int(at), 100)
	latency := lag - int(at)
	t.Logf("round-trip latency %d frames (%.2f ms) at %d ms periods", latency, float64(latency)*1000/rigRate, cfg.PeriodMS)
	if latency < 0 || latency > rigRate/2 {
		t.Fatalf("latency %d frames is implausible", latency)
	}
	st := s.Stats()
	t.Logf("stats %+v", st)
	if st.Dropped != 0 || st.Overruns != 0 || st.Underruns != 0 || st.Late != 0 {
		// The stream saw the dropout and counted it, as it must; a busy
		// machine causes that now and then, so the run is tried again.
		return fmt.Sprintf("dropouts at %d ms periods: %+v", cfg.PeriodMS, st)
	}
	if st.Clamped != 0 {
		t.Errorf("%d samples clamped at full scale at −6 dBFS", st.Clamped)
	}
	if st.StimulusFrames != int64(len(stim)) {
		t.Errorf("%d stimulus frames played, want %d", st.StimulusFrames, len(stim))
	}
	if h := findHole(in[1][lag:], want); h != "" {
		return h
	}

	// Input 2: sample for sample (AUDIO.md: bit-exact through the rig).
	exact := 0
	var maxRel float64
	for i, w := range want {
		if g := in[1][lag+i]; g == w {
			exact++
		} else if r := math.Abs(g-w) / math.Max(math.Abs(w), 1e-30); r > maxRel {
			maxRel = r
		}
	}
	t.Logf("reference input: %d of %d samples bit-exact, worst relative error %.3g", exact, len(want), maxRel)
	if maxRel > f32Rel {
		t.Errorf("reference input differs from the output by up to %.3g relative; want float32 rounding (%.3g) at most", maxRel, f32Rel)
	}
	loopbackFlat(t, in[1][lag:lag+rigRate/10], want[:rigRate/10])
	for i := int(at); i < lag-2; i++ { // silence before the stimulus (the fade plays on silence)
		if in[1][i] != 0 {
			t.Fatalf("reference input frame %d = %v before the stimulus arrived", i, in[1][i])
		}
	}

	// Input 1 against input 2 at 1 kHz.
	f := rigCornerHz / rigRate
	seg := lag + rigRate/10 + 480 // skip the noise and 10 ms of settling
	n := 48 * 900                 // 900 whole cycles
	x1, x2 := tone(in[0][seg:seg+n], f), tone(in[1][seg:seg+n], f)
	h := x1 / x2
	gotDB, gotDeg := 20*math.Log10(cmplx.Abs(h)), cmplx.Phase(h)*180/math.Pi
	onePole := func(p float64) complex128 { // H = (1−p)/(1 − p·e^{−jω})
		return complex(1-p, 0) / (1 - complex(p, 0)*cmplx.Exp(complex(0, -2*math.Pi*f)))
	}
	checks := []struct {
		name          string
		h             complex128
		tolDB, tolDeg float64
	}{
		// The digital one-pole p = e^{−2π·1000/48000}: AUDIO.md [V];
		// REFERENCES.md §7 gives the one-pole form [V].
		{"p = exp(-w)", onePole(math.Exp(-2 * math.Pi * f)), rigGainTolDB, rigPhaseTolDeg},
		// The plugin's own pole, from ladspa-sdk 1.17 src/plugins/filter.c,
		// runSimpleLowPassFilter [S, read]: c = 2 − cos ω, p = c − √(c²−1),
		// in float32 (LADSPA_Data) — exactly −3.0103 dB at the corner.
		{"ladspa-sdk lpf pole", onePole(float64(ladspaPole(f))), exactTolDB, exactTolDeg},
	}
	for _, c := range checks {
		wantDB, wantDeg := 20*math.Log10(cmplx.Abs(c.h)), cmplx.Phase(c.h)*180/math.Pi
		t.Logf("input 1 / input 2 at 1 kHz: %.4f dB %.3f°; %s: %.4f dB %.3f°", gotDB, gotDeg, c.name, wantDB, wantDeg)
		if math.Abs(gotDB-wantDB) > c.tolDB || math.Abs(gotDeg-wantDeg) > c.tolDeg {
			t.Errorf("response at 1 kHz %.4f dB %.3f°, want %.4f dB %.3f° (%s) within %g dB / %g°", gotDB, gotDeg, wantDB, wantDeg, c.name, c.tolDB, c.tolDeg)
		}
	}
	if a := cmplx.Abs(x1) / float64(n) * 2; a < 0.5*gain*0.5 {
		t.Errorf("input 1 tone amplitude %v: the response path is not receiving the stimulus", a)
	}
	if err := s.Close(); err != nil {
		t.Fatalf("Close: %v", err)
	}
	return ""
}

// loopbackFlat checks that the straight path from output 2 to input 2 is
// flat: the ratio of the spectra of what came back (got) and what was
// played (want), over the aligned noise burst, bin by bin from 50 Hz to
// 15 kHz, within 0.01 dB and 0.1° (the limit; a loopback lead is
// a wire, so anything more is the sound server or our indexing).
func loopbackFlat(t *testing.T, got, want []float64) {
	t.Helper()
	const tolDB, tolDeg = 0.01, 0.1
	fft := fourier.NewFFT(len(want))
	g, w := fft.Coefficients(nil, got), fft.Coefficients(nil, want)
	binHz := float64(rigRate) / float64(len(want))
	var worstDB, worstDeg float64
	bins := 0
	for k := int(math.Ceil(50 / binHz)); float64(k)*binHz <= 15000; k++ {
		h := g[k] / w[k]
		worstDB = max(worstDB, math.Abs(20*math.Log10(cmplx.Abs(h))))
		worstDeg = max(worstDeg, math.Abs(cmplx.Phase(h)*180/math.Pi))
		bins++
	}
	t.Logf("loopback input 2 / output 2 over %d bins 50 Hz–15 kHz: worst %.2g dB, %.2g°", bins, worstDB, worstDeg)
	if worstDB > tolDB || worstDeg > tolDeg {
		t.Errorf("the loopback path is not flat: worst %.4f dB, %.3f° over 50 Hz–15 kHz; want within %g dB, %g°", worstDB, worstDeg, tolDB, tolDeg)
	}
}

// TestPulseRigSeparate opens the rig's output and input as two devices
// with two callbacks: the stimulus must still arrive sample-exact at the
// reference input (one server clock here), at an arbitrary offset.
func TestPulseRigSeparate(t *testing.T) {
	cfg := rigConfig(t)
	cfg.Separate = true
	retryHoles(t, func() string { return rigSeparate(t, cfg) })
}

func rigSeparate(t *testing.T, cfg Config) (hole string) {
	s, err := Open(cfg)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if s.Duplex() {
		t.Fatal("separate stream says duplex")
	}
	stim := rigStimulus()[:rigRate/2]
	gain := math.Pow(10, cfg.Output.LevelDBFS/20)
	time.Sleep(time.Duration(2 * cfg.Output.FadeMS * float64(time.Millisecond))) // let the fade-in pass
	frames := int(s.Stats().CaptureFrames) + len(stim) + rigRate
	in, _ := capture(t, s, stim, -1, frames)
	want := make([]float64, len(stim))
	for i, v := range stim {
		want[i] = float64(float32(v * gain))
	}
	lag := align(t, in[1], want[:rigRate/10], 0, 100)
	if st := s.Stats(); st.Dropped != 0 || st.Underruns != 0 {
		return fmt.Sprintf("dropouts: %+v", st) // counted, as they must be; try again
	}
	if h := findHole(in[1][lag:], want); h != "" {
		return h
	}
	var maxRel float64
	for i, w := range want {
		if r := math.Abs(in[1][lag+i]-w) / math.Max(math.Abs(w), 1e-30); r > maxRel {
			maxRel = r
		}
	}
	t.Logf("separate devices: stimulus at capture frame %d, worst relative error %.3g; stats %+v", lag, maxRel, s.Stats())
	if maxRel > f32Rel {
		t.Errorf("reference input differs by up to %.3g relative", maxRel)
	}
	return ""
}

// TestPulseRigDeviceLost starts a private PulseAudio server with one null
// sink, streams from it, kills the server with SIGKILL and checks Read
// reports audio.ErrDeviceLost within lostWithin and Close returns within
// closeWithin. The shared rig is not touched.
func TestPulseRigDeviceLost(t *testing.T) {
	cfg := rigConfig(t)
	dir := t.TempDir() // mode 0700, as PulseAudio requires
	if err := os.WriteFile(filepath.Join(dir, "daemon.conf"), []byte("enable-remixing = no\ndefault-sample-format = float32le\ndefault-sample-rate = 48000\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	script := "load-module module-native-protocol-unix auth-anonymous=1\n" +
		"load-module module-null-sink sink_name=lost rate=48000 channels=2 format=float32le norewinds=1\n"
	if err := os.WriteFile(filepath.Join(dir, "lost.pa"), []byte(script), 0o600); err != nil {
		t.Fatal(err)
	}
	srv := exec.Command("pulseaudio", "-n", "-F", filepath.Join(dir, "lost.pa"), "--daemonize=no",
		"--exit-idle-time=-1", "--use-pid-file=no", "--log-target=file:"+filepath.Join(dir, "pa.log"))
	srv.Env = append(os.Environ(), "XDG_RUNTIME_DIR="+dir, "PULSE_STATE_PATH="+filepath.Join(dir, "state"),
		"PULSE_CONFIG="+filepath.Join(dir, "daemon.conf"))
	if err := srv.Start(); err != nil {
		t.Fatalf("starting a private pulseaudio: %v", err)
	}
	exited := make(chan error, 1)
	go func() { exited <- srv.Wait() }()
	defer func() {
		_ = srv.Process.Kill()
		<-exited
	}()
	sock := filepath.Join(dir, "pulse", "native")
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		if _, err := os.Stat(sock); err == nil {
			break
		}
		if time.Now().After(deadline) {
			log, _ := os.ReadFile(filepath.Join(dir, "pa.log"))
			t.Fatalf("the private server did not come up:\n%s", log)
		}
	}
	time.Sleep(100 * time.Millisecond) // modules load after the socket appears

	cfg.Server = "unix:" + sock
	cfg.Playback, cfg.Capture = "lost", "lost.monitor"
	s, err := Open(cfg)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 15*time.Second)
	defer cancel()
	buf := [][]float64{make([]float64, 1024), make([]float64, 1024)}
	var got int
	for got < rigRate/4 {
		n, _, err := s.Read(ctx, buf)
		if err != nil {
			t.Fatalf("Read before the kill: %v", err)
		}
		got += n
	}
	if err := srv.Process.Kill(); err != nil {
		t.Fatal(err)
	}
	killed := time.Now()
	var rerr error
	for rerr == nil {
		_, _, rerr = s.Read(ctx, buf)
	}
	took := time.Since(killed)
	t.Logf("Read returned %v %v after SIGKILL; stats %+v", rerr, took.Round(time.Millisecond), s.Stats())
	if !errors.Is(rerr, audio.ErrDeviceLost) || took > lostWithin {
		t.Errorf("Read = %v after %v; want ErrDeviceLost within %v", rerr, took, lostWithin)
	}
	done := make(chan error, 1)
	closeStart := time.Now()
	go func() { done <- s.Close() }()
	select {
	case err := <-done:
		t.Logf("Close after loss took %v (err %v)", time.Since(closeStart).Round(time.Millisecond), err)
	case <-time.After(closeWithin):
		t.Fatalf("Close hangs after the server died (waited %v)", closeWithin)
	}
}

// TestPulseRigList checks the rig's devices are listed by their PulseAudio
// names with the native format the rig script gives them.
func TestPulseRigList(t *testing.T) {
	rigConfig(t)
	devs, err := List(BackendPulseAudio)
	if err != nil {
		t.Fatal(err)
	}
	found := map[string]Info{}
	for _, d := range devs {
		found[d.Kind+" "+d.Name] = d
	}
	for _, key := range []string{"playback " + rigPlayback, "capture " + rigCapture} {
		d, ok := found[key]
		if !ok {
			t.Fatalf("%s not listed; got %v", key, devs)
		}
		if d.Channels != 2 || d.Rate != rigRate || d.Format != "32-bit float" || d.Backend != BackendPulseAudio {
			t.Errorf("%s: %d channels, %d Hz, %q; the rig gives 2, 48000, 32-bit float", key, d.Channels, d.Rate, d.Format)
		}
	}
}

// lockRig holds the rig for the rest of the test. go test runs packages in
// parallel, and two streams playing into the rig's one sink would mix: the
// tests that use the rig (here and in the main package) take an exclusive
// lock on a file in the rig's directory first.
func lockRig(t *testing.T) {
	t.Helper()
	dir := os.Getenv("TONETRACE_PULSE_RIG_DIR")
	if dir == "" {
		return
	}
	f, err := os.OpenFile(filepath.Join(dir, "tests.lock"), os.O_CREATE|os.O_RDWR, 0o600)
	if err != nil {
		t.Fatalf("locking the rig: %v", err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX); err != nil {
		t.Fatalf("locking the rig: %v", err)
	}
	t.Cleanup(func() {
		syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	})
}
