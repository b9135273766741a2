package wavfile

import (
	"bytes"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// Tests against files written by SoX 14.4.2 (REFERENCES.md §7), an outside
// WAV writer: a 1 kHz sine at half full scale, 48 kHz, from
//
//	sox [-D] -n -r 48000 -c N <encoding> out.wav synth T sine 1000 vol 0.5
//
// sox's synth starts the sine at phase 0, so sample n is
// 0.5·sin(2π·1000·n/48000) (confirmed by running it [V]); -D disables the
// dither sox otherwise adds below 24 bits (REFERENCES.md §7 pitfalls).

const (
	soxRate = 48000
	soxFreq = 1000
	soxAmp  = 0.5
	// soxFloat32Tol is one binary32 ulp at the sine's peak (2^−24 for
	// values in [0.5, 1)): sox converts its 32-bit integer samples to
	// float32 within that (measured 2.9e−8 [V]).
	soxFloat32Tol = 0x1p-24
	// soxIntSlack covers sox's own 32-bit internal quantisation (2^−31)
	// before it rounds to the output width.
	soxIntSlack = 0x1p-30
)

// needSox returns the path of sox, or skips the test when sox is not on
// PATH — unless TONETRACE_REQUIRE_TOOLS=1 (set by CI), which makes a
// missing sox a failure.
func needSox(t *testing.T) string {
	t.Helper()
	sox, err := exec.LookPath("sox")
	if err == nil {
		return sox
	}
	if os.Getenv("TONETRACE_REQUIRE_TOOLS") == "1" {
		t.Fatalf("sox is required (TONETRACE_REQUIRE_TOOLS=1) but not on PATH: %v; install it with apt-get install sox", err)
	}
	t.Skip("sox is not on PATH; install it (apt-get install sox) to compare with files sox writes and reads")
	return ""
}

// soxSine returns sample n of the sox test signal.
func soxSine(n int) float64 { return soxAmp * math.Sin(2*math.Pi*soxFreq*float64(n)/soxRate) }

// checkSoxSine compares every channel of a with the sox test signal.
func checkSoxSine(t *testing.T, name string, a *Audio, nch, frames int, enc Encoding, tol float64) {
	t.Helper()
	if a.Rate != soxRate || len(a.Channels) != nch || a.Frames() != frames || a.Format.Encoding != enc {
		t.Fatalf("%s: %d Hz, %d channels, %d frames, %v; want %d Hz, %d, %d, %v",
			name, a.Rate, len(a.Channels), a.Frames(), a.Format, soxRate, nch, frames, enc)
	}
	for c, ch := range a.Channels {
		for n, v := range ch {
			if d := math.Abs(v - soxSine(n)); d > tol {
				t.Fatalf("%s: channel %d sample %d = %v, want %v (error %g > %g)", name, c, n, v, soxSine(n), d, tol)
			}
		}
	}
}

// TestReadStoredSoxFiles reads the sox files kept in testdata (commands in
// testdata/README.md), so the check runs where sox is not installed.
func TestReadStoredSoxFiles(t *testing.T) {
	cases := []struct {
		file     string
		enc      Encoding
		tol      float64
		extended bool
	}{
		{"sox-pcm16-stereo.wav", PCM16, halfLSB(PCM16) + soxIntSlack, false},
		{"sox-pcm24-stereo.wav", PCM24, halfLSB(PCM24) + soxIntSlack, true}, // sox writes 24-bit as extensible
		{"sox-float32-stereo.wav", Float32, soxFloat32Tol, false},
	}
	for _, tc := range cases {
		a, err := ReadFile(filepath.Join("testdata", tc.file))
		if err != nil {
			t.Fatal(err)
		}
		checkSoxSine(t, tc.file, a, 2, 480, tc.enc, tc.tol)
		if a.Format.Extensible != tc.extended {
			t.Errorf("%s: extensible %v, want %v", tc.file, a.Format.Extensible, tc.extended)
		}
		if tc.extended && a.Format.ChannelMask != 3 {
			t.Errorf("%s: channel mask %#x, want 0x3 (front left and right)", tc.file, a.Format.ChannelMask)
		}
	}
	_, err := ReadFile(filepath.Join("testdata", "sox-alaw-mono.wav"))
	var ue *UnsupportedError
	if !errors.As(err, &ue) {
		t.Errorf("sox A-law file: error %v, want *UnsupportedError", err)
	}
}

// TestWriteMatchesSox writes the samples of sox's 16-bit and float32 files
// and expects sox's bytes exactly: for these encodings sox and Write lay
// out the same header (fmt, [fact,] data) and the same samples.
func TestWriteMatchesSox(t *testing.T) {
	for _, tc := range []struct {
		file string
		enc  Encoding
	}{
		{"sox-pcm16-stereo.wav", PCM16},
		{"sox-float32-stereo.wav", Float32},
	} {
		want, err := os.ReadFile(filepath.Join("testdata", tc.file))
		if err != nil {
			t.Fatal(err)
		}
		a, err := Read(bytes.NewReader(want))
		if err != nil {
			t.Fatal(err)
		}
		var got bytes.Buffer
		if err := Write(&got, a, tc.enc); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want) {
			n := 0
			for n < min(got.Len(), len(want)) && got.Bytes()[n] == want[n] {
				n++
			}
			t.Errorf("%s: written file differs from sox's at byte %d (lengths %d and %d)", tc.file, n, got.Len(), len(want))
		}
	}
}

// TestReadLiveSox runs sox, when it is installed, over every encoding it
// can write into WAV and reads the result.
func TestReadLiveSox(t *testing.T) {
	sox := needSox(t)
	const (
		seconds = "0.1"
		frames  = 4800
	)
	cases := []struct {
		name string
		args []string // output options
		nch  int
		enc  Encoding
		tol  float64
		ext  bool
	}{
		// The brief's commands, with -D and vol 0.5 (REFERENCES.md §7).
		{"pcm16 stereo", []string{"-c", "2", "-b", "16"}, 2, PCM16, halfLSB(PCM16) + soxIntSlack, false},
		{"pcm24 stereo", []string{"-c", "2", "-b", "24"}, 2, PCM24, halfLSB(PCM24) + soxIntSlack, true},
		{"float32 stereo", []string{"-c", "2", "-e", "floating-point", "-b", "32"}, 2, Float32, soxFloat32Tol, false},
		{"pcm8 mono", []string{"-c", "1", "-b", "8"}, 1, PCM8, halfLSB(PCM8) + soxIntSlack, false},
		{"pcm32 stereo", []string{"-c", "2", "-e", "signed-integer", "-b", "32"}, 2, PCM32, halfLSB(PCM32) + soxIntSlack, true},
		{"float64 mono", []string{"-c", "1", "-e", "floating-point", "-b", "64"}, 1, Float64, soxIntSlack, false},
		{"pcm16 six channels", []string{"-c", "6", "-b", "16"}, 6, PCM16, halfLSB(PCM16) + soxIntSlack, true},
	}
	dir := t.TempDir()
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, "x.wav")
			args := append([]string{"-D", "-n", "-r", "48000"}, tc.args...)
			args = append(args, path, "synth", seconds, "sine", "1000", "vol", "0.5")
			if out, err := exec.Command(sox, args...).CombinedOutput(); err != nil {
				t.Fatalf("sox %v: %v\n%s", args, err, out)
			}
			a, err := ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			checkSoxSine(t, tc.name, a, tc.nch, frames, tc.enc, tc.tol)
			if a.Format.Extensible != tc.ext {
				t.Errorf("extensible %v, want %v", a.Format.Extensible, tc.ext)
			}
		})
	}
	for _, enc := range []string{"a-law", "u-law", "ms-adpcm", "ima-adpcm"} {
		t.Run(enc, func(t *testing.T) {
			path := filepath.Join(dir, "c.wav")
			args := []string{"-n", "-r", "8000", "-c", "1", "-e", enc, path, "synth", "0.01", "sine", "1000"}
			if out, err := exec.Command(sox, args...).CombinedOutput(); err != nil {
				t.Fatalf("sox %v: %v\n%s", args, err, out)
			}
			_, err := ReadFile(path)
			var ue *UnsupportedError
			if !errors.As(err, &ue) {
				t.Errorf("error %v, want *UnsupportedError", err)
			}
		})
	}
}

// TestSoxReadsWrite asks sox, when installed, to read what Write produced:
// sox --i reports the encoding and length, and converting our file to
// float32 with sox returns our samples.
func TestSoxReadsWrite(t *testing.T) {
	sox := needSox(t)
	dir := t.TempDir()
	a := &Audio{Rate: 44100, Channels: make([][]float64, 3)}
	for c := range a.Channels {
		a.Channels[c] = make([]float64, 999)
		for n := range a.Channels[c] {
			a.Channels[c][n] = 0.7 * math.Sin(2*math.Pi*float64((c+1)*440*n)/44100)
		}
	}
	for _, enc := range []Encoding{PCM8, PCM16, PCM24, PCM32, Float32, Float64} {
		in := filepath.Join(dir, "in.wav")
		out := filepath.Join(dir, "out.wav")
		if err := WriteFile(in, a, enc); err != nil {
			t.Fatal(err)
		}
		// sox converts integer to float exactly (q/2^(n−1)), float64 to
		// float32 by rounding [V].
		if b, err := exec.Command(sox, "-D", in, "-e", "floating-point", "-b", "32", out).CombinedOutput(); err != nil {
			t.Fatalf("%v: sox could not read our file: %v\n%s", enc, err, b)
		}
		fromSox, err := ReadFile(out)
		if err != nil {
			t.Fatal(err)
		}
		ours, err := ReadFile(in)
		if err != nil {
			t.Fatal(err)
		}
		if fromSox.Rate != 44100 || len(fromSox.Channels) != 3 || fromSox.Frames() != 999 {
			t.Fatalf("%v: sox read %d Hz, %d channels, %d frames", enc, fromSox.Rate, len(fromSox.Channels), fromSox.Frames())
		}
		for c := range ours.Channels {
			for n, v := range ours.Channels[c] {
				if d := math.Abs(fromSox.Channels[c][n] - v); d > soxFloat32Tol {
					t.Fatalf("%v: channel %d sample %d: sox read %v, we wrote %v", enc, c, n, fromSox.Channels[c][n], v)
				}
			}
		}
	}
}
