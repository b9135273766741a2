package wavfile

import (
	"bytes"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// FuzzRead feeds arbitrary bytes to Read. It must never panic; on success
// (or truncation) the audio must be consistent; streaming through a
// Decoder that cannot seek must give the same frames; and writing the
// audio back in its own encoding and reading it again must reproduce every
// sample exactly.
func FuzzRead(f *testing.F) {
	// Seeds: a valid file of every encoding, hand-built extensible and
	// odd-chunk files, sox's files from testdata, and a few damaged ones.
	a := &Audio{Rate: 48000, Channels: [][]float64{{0, 0.5, -1, 0.25, -0.125}, {0.75, -0.5, 0.999, -0.001, 0}}}
	for _, enc := range []Encoding{PCM8, PCM16, PCM24, PCM32, Float32, Float64} {
		var buf bytes.Buffer
		if err := Write(&buf, a, enc); err != nil {
			f.Fatal(err)
		}
		f.Add(buf.Bytes())
		f.Add(buf.Bytes()[:buf.Len()-3])
	}
	f.Add(riffWave(chunk{"fmt ", extBody(2, 96000, 24, 20, 3, tagPCM)}, chunk{"data", le24(1, -1, 0x7FFFFF, -0x800000)}))
	f.Add(riffWave(chunk{"fmt ", extBody(1, 44100, 32, 32, 4, tagFloat)}, chunk{"PEAK", []byte{1, 2, 3}}, chunk{"data", []byte{0, 0, 0x80, 0x3F}}))
	f.Add(riffWave(chunk{"LIST", []byte("odd")}, chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 8)}, chunk{"data", []byte{1, 2, 3}}, chunk{"junk", []byte{9}}))
	f.Add(riffWave(chunk{"fmt ", fmtBody(6, 1, 8000, 8)}, chunk{"data", []byte{1, 2}}))
	f.Add([]byte("RF64\xff\xff\xff\xffWAVE"))
	files, _ := filepath.Glob(filepath.Join("testdata", "*.wav"))
	for _, name := range files {
		b, err := os.ReadFile(name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}

	f.Fuzz(func(t *testing.T, data []byte) {
		a, err := Read(bytes.NewReader(data))
		var te *TruncatedError
		truncated := errors.As(err, &te)
		if err != nil && !truncated {
			if a != nil {
				t.Fatalf("audio returned with error %v", err)
			}
			var fe *FormatError
			var ue *UnsupportedError
			if !errors.As(err, &fe) && !errors.As(err, &ue) {
				t.Fatalf("error %T %v is neither a FormatError nor an UnsupportedError", err, err)
			}
			return
		}
		if a == nil || a.Rate < 1 || len(a.Channels) == 0 || !a.Format.Encoding.valid() {
			t.Fatalf("inconsistent audio %+v", a)
		}
		n := a.Frames()
		if truncated && int64(n) != te.Frames {
			t.Fatalf("truncated: %d frames returned, error says %d", n, te.Frames)
		}
		if !truncated && n == 0 {
			t.Fatal("success with no frames")
		}
		for c, ch := range a.Channels {
			if len(ch) != n {
				t.Fatalf("channel %d has %d frames, channel 0 has %d", c, len(ch), n)
			}
			for _, v := range ch {
				if v-v != 0 || (!a.Format.Encoding.IsFloat() && (v < -1 || v >= 1)) {
					t.Fatalf("channel %d: sample %v out of range for %v", c, v, a.Format)
				}
			}
		}

		// Streaming through a non-seeking reader gives the same frames.
		d, err := NewDecoder(plainReader{bytes.NewReader(data)})
		if err != nil {
			t.Fatalf("Read succeeded but NewDecoder failed: %v", err)
		}
		dst := make([][]float64, len(a.Channels))
		for c := range dst {
			dst[c] = make([]float64, 3)
		}
		at := 0
		for {
			k, err := d.ReadFrames(dst)
			for c := range dst {
				for i := range k {
					if at+i >= n || math.Float64bits(dst[c][i]) != math.Float64bits(a.Channels[c][at+i]) {
						t.Fatalf("streamed frame %d of channel %d differs from Read", at+i, c)
					}
				}
			}
			at += k
			if err == io.EOF || errors.As(err, &te) {
				break
			}
			if err != nil {
				t.Fatalf("stream error %v after Read succeeded", err)
			}
		}
		if at != n {
			t.Fatalf("streamed %d frames, Read returned %d", at, n)
		}

		// Writing back in the same encoding reproduces every sample.
		if n == 0 || int64(n)*int64(len(a.Channels))*int64(a.Format.Encoding.Bits()/8) > maxDataBytes {
			return
		}
		var buf bytes.Buffer
		if err := Write(&buf, a, a.Format.Encoding); err != nil {
			t.Fatalf("Write of read audio: %v", err)
		}
		b, err := Read(&buf)
		if err != nil {
			t.Fatalf("Read of written audio: %v", err)
		}
		for c := range a.Channels {
			for i, v := range a.Channels[c] {
				if b.Channels[c][i] != v {
					t.Fatalf("rewrite changed channel %d frame %d: %v -> %v", c, i, v, b.Channels[c][i])
				}
			}
		}
	})
}
