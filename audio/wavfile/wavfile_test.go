package wavfile

import (
	"bytes"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// lsb returns the size of one integer code of enc as a fraction of full
// scale: 2^−(n−1) for an n-bit container.
func lsb(enc Encoding) float64 { return math.Ldexp(1, -(enc.Bits() - 1)) }

// halfLSB is the largest error of rounding to the nearest code: half a code
// (common practice [CP]: round-to-nearest quantisation).
func halfLSB(enc Encoding) float64 { return lsb(enc) / 2 }

// ---- helpers that build WAV files by hand ----

type chunk struct {
	id   string
	body []byte
}

// riffWave assembles a RIFF/WAVE file from chunks, with correct sizes and
// a pad byte after every odd-sized chunk (Microsoft/IBM RIFF specification,
// 1991 [M]).
func riffWave(chunks ...chunk) []byte {
	var body []byte
	body = append(body, "WAVE"...)
	for _, c := range chunks {
		body = append(body, c.id...)
		body = binary.LittleEndian.AppendUint32(body, uint32(len(c.body)))
		body = append(body, c.body...)
		if len(c.body)%2 == 1 {
			body = append(body, 0)
		}
	}
	out := []byte("RIFF")
	out = binary.LittleEndian.AppendUint32(out, uint32(len(body)))
	return append(out, body...)
}

// fmtBody returns a 16-byte fmt chunk body with consistent byte rate and
// block align.
func fmtBody(tag uint16, nch, rate, bits int) []byte {
	ba := nch * bits / 8
	b := binary.LittleEndian.AppendUint16(nil, tag)
	b = binary.LittleEndian.AppendUint16(b, uint16(nch))
	b = binary.LittleEndian.AppendUint32(b, uint32(rate))
	b = binary.LittleEndian.AppendUint32(b, uint32(rate*ba))
	b = binary.LittleEndian.AppendUint16(b, uint16(ba))
	return binary.LittleEndian.AppendUint16(b, uint16(bits))
}

// extBody returns a 40-byte WAVE_FORMAT_EXTENSIBLE fmt body (layout from
// Microsoft's WAVEFORMATEXTENSIBLE documentation [M], matching the header
// sox writes in testdata/sox-pcm24-stereo.wav).
func extBody(nch, rate, bits, valid int, mask uint32, sub uint16) []byte {
	b := fmtBody(tagExtensible, nch, rate, bits)
	b = binary.LittleEndian.AppendUint16(b, 22)
	b = binary.LittleEndian.AppendUint16(b, uint16(valid))
	b = binary.LittleEndian.AppendUint32(b, mask)
	b = binary.LittleEndian.AppendUint16(b, sub)
	return append(b, guidTail[:]...)
}

func le16(v ...int16) []byte {
	var b []byte
	for _, x := range v {
		b = binary.LittleEndian.AppendUint16(b, uint16(x))
	}
	return b
}

func le24(v ...int32) []byte {
	var b []byte
	for _, x := range v {
		b = append(b, byte(x), byte(x>>8), byte(x>>16))
	}
	return b
}

// plainReader hides every method but Read, as a pipe would.
type plainReader struct{ r io.Reader }

func (p plainReader) Read(b []byte) (int, error) { return p.r.Read(b) }

// randomAudio returns nch channels of n samples uniform in [−1, 1).
func randomAudio(rng *rand.Rand, rate, nch, n int) *Audio {
	a := &Audio{Rate: rate, Channels: make([][]float64, nch)}
	for c := range a.Channels {
		a.Channels[c] = make([]float64, n)
		for i := range a.Channels[c] {
			a.Channels[c][i] = 2*rng.Float64() - 1
		}
	}
	return a
}

// ---- round trips ----

func TestRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, enc := range []Encoding{PCM8, PCM16, PCM24, PCM32, Float32, Float64} {
		for _, nch := range []int{1, 2, 3, 6} {
			for _, frames := range []int{1, 7, 4097} {
				a := randomAudio(rng, 44100, nch, frames)
				if enc == Float32 {
					// Float32 keeps binary32 values exactly.
					for _, ch := range a.Channels {
						for i, v := range ch {
							ch[i] = float64(float32(v))
						}
					}
				}
				var buf bytes.Buffer
				if err := Write(&buf, a, enc); err != nil {
					t.Fatalf("%v %dch %d frames: Write: %v", enc, nch, frames, err)
				}
				if buf.Len()%2 != 0 {
					t.Errorf("%v %dch %d frames: file is %d bytes, RIFF chunks are padded to even sizes", enc, nch, frames, buf.Len())
				}
				got, err := Read(&buf)
				if err != nil {
					t.Fatalf("%v %dch %d frames: Read: %v", enc, nch, frames, err)
				}
				if got.Rate != a.Rate || len(got.Channels) != nch || got.Frames() != frames || got.Format.Encoding != enc {
					t.Fatalf("%v %dch %d frames: read rate %d, %d channels, %d frames, %v", enc, nch, frames, got.Rate, len(got.Channels), got.Frames(), got.Format)
				}
				tol, top := 0.0, math.Inf(1) // float encodings are exact
				if !enc.IsFloat() {
					// Within half a code, after clipping to the largest code.
					tol, top = halfLSB(enc), 1-lsb(enc)
				}
				for c := range a.Channels {
					for i, want := range a.Channels[c] {
						want = min(want, top)
						if d := math.Abs(got.Channels[c][i] - want); d > tol {
							t.Fatalf("%v %dch: channel %d frame %d: got %v, want %v (error %g > %g)", enc, nch, c, i, got.Channels[c][i], want, d, tol)
						}
					}
				}
			}
		}
	}
}

// TestQuantise checks rounding and clipping of every integer encoding:
// round to the nearest code, +1.0 and beyond clip to the largest code
// 1 − 2^−(n−1), −1.0 is the smallest code (two's complement range [CP]).
func TestQuantise(t *testing.T) {
	for _, enc := range []Encoding{PCM8, PCM16, PCM24, PCM32} {
		q := lsb(enc)
		cases := []struct {
			name    string
			in, out float64
		}{
			{"zero", 0, 0},
			{"exact code", 5 * q, 5 * q},
			{"0.4 code rounds down", 5.4 * q, 5 * q},
			{"0.6 code rounds up", 5.6 * q, 6 * q},
			{"negative 0.6 code", -5.6 * q, -6 * q},
			{"tie to even", 5.5 * q, 6 * q},
			{"tie to even below", 4.5 * q, 4 * q},
			{"full scale clips", 1, 1 - q},
			{"beyond full scale clips", 1.7, 1 - q},
			{"minus full scale", -1, -1},
			{"beyond minus full scale clips", -3, -1},
		}
		for _, tc := range cases {
			a := &Audio{Rate: 8000, Channels: [][]float64{{tc.in}}}
			var buf bytes.Buffer
			if err := Write(&buf, a, enc); err != nil {
				t.Fatal(err)
			}
			got, err := Read(&buf)
			if err != nil {
				t.Fatal(err)
			}
			if v := got.Channels[0][0]; v != tc.out {
				t.Errorf("%v %s: %v read back as %v, want %v", enc, tc.name, tc.in, v, tc.out)
			}
		}
	}
}

// TestWriteBytes checks the sample byte layout: little-endian two's
// complement, 8-bit offset by 128, float as IEEE 754 bit patterns
// (Microsoft "Multimedia Programming Interface and Data Specifications 1.0",
// 1991, WAVE data format [M]).
func TestWriteBytes(t *testing.T) {
	cases := []struct {
		enc  Encoding
		want []byte
	}{
		{PCM8, []byte{0xC0, 0x40}},
		{PCM16, []byte{0x00, 0x40, 0x00, 0xC0}},
		{PCM24, []byte{0x00, 0x00, 0x40, 0x00, 0x00, 0xC0}},
		{PCM32, []byte{0, 0, 0, 0x40, 0, 0, 0, 0xC0}},
		{Float32, []byte{0, 0, 0, 0x3F, 0, 0, 0, 0xBF}},
		{Float64, []byte{0, 0, 0, 0, 0, 0, 0xE0, 0x3F, 0, 0, 0, 0, 0, 0, 0xE0, 0xBF}},
	}
	for _, tc := range cases {
		var buf bytes.Buffer
		if err := Write(&buf, &Audio{Rate: 48000, Channels: [][]float64{{0.5}, {-0.5}}}, tc.enc); err != nil {
			t.Fatal(err)
		}
		b := buf.Bytes()
		if got := b[len(b)-len(tc.want):]; !bytes.Equal(got, tc.want) {
			t.Errorf("%v: data bytes % x, want % x", tc.enc, got, tc.want)
		}
	}
}

// ---- hand-built headers ----

func TestReadHandBuilt(t *testing.T) {
	cases := []struct {
		name   string
		file   []byte
		rate   int
		format Format
		want   [][]float64
	}{
		{
			name:   "extensible pcm24 with 20 valid bits and a channel mask",
			file:   riffWave(chunk{"fmt ", extBody(2, 96000, 24, 20, 0x3, tagPCM)}, chunk{"data", le24(0x400000, -0x400000, 0x000010, -0x800000)}),
			rate:   96000,
			format: Format{Encoding: PCM24, ValidBits: 20, Extensible: true, ChannelMask: 3},
			want:   [][]float64{{0.5, 0x10 * math.Ldexp(1, -23)}, {-0.5, -1}},
		},
		{
			name:   "extensible float32 with an unknown chunk before fmt",
			file:   riffWave(chunk{"JUNK", make([]byte, 28)}, chunk{"fmt ", extBody(1, 44100, 32, 32, 0x4, tagFloat)}, chunk{"data", binary.LittleEndian.AppendUint32(nil, math.Float32bits(-0.25))}),
			rate:   44100,
			format: Format{Encoding: Float32, ValidBits: 32, Extensible: true, ChannelMask: 4},
			want:   [][]float64{{-0.25}},
		},
		{
			name: "odd-sized chunks with pad bytes between fmt and data",
			file: riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)},
				chunk{"LIST", []byte("INFOISFT\x03\x00\x00\x00ab\x00")},
				chunk{"PEAK", []byte{1, 2, 3}},
				chunk{"fact", []byte{2, 0, 0, 0}},
				chunk{"data", le16(16384, -32768)}),
			rate:   8000,
			format: Format{Encoding: PCM16, ValidBits: 16},
			want:   [][]float64{{0.5, -1}},
		},
		{
			name: "odd-sized data chunk, pad byte, then a trailing chunk",
			file: riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 11025, 8)},
				chunk{"data", []byte{0x80, 0xC0, 0x00}},
				chunk{"LIST", []byte("xyz")}),
			rate:   11025,
			format: Format{Encoding: PCM8, ValidBits: 8},
			want:   [][]float64{{0, 0.5, -1}},
		},
		{
			name:   "fmt chunk with an 18-byte body (cbSize 0)",
			file:   riffWave(chunk{"fmt ", append(fmtBody(tagFloat, 1, 48000, 64), 0, 0)}, chunk{"data", binary.LittleEndian.AppendUint64(nil, math.Float64bits(1.5))}),
			rate:   48000,
			format: Format{Encoding: Float64, ValidBits: 64},
			want:   [][]float64{{1.5}}, // float samples beyond full scale are kept
		},
		{
			name: "data size a partial frame too long: the partial frame is ignored",
			file: func() []byte {
				b := riffWave(chunk{"fmt ", fmtBody(tagPCM, 2, 8000, 16)}, chunk{"data", append(le16(100, 200), 0, 0)})
				return b
			}(),
			rate:   8000,
			format: Format{Encoding: PCM16, ValidBits: 16},
			want:   [][]float64{{100.0 / 32768}, {200.0 / 32768}},
		},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for _, r := range []io.Reader{bytes.NewReader(tc.file), plainReader{bytes.NewReader(tc.file)}} {
				a, err := Read(r)
				if err != nil {
					t.Fatalf("%T: %v", r, err)
				}
				if a.Rate != tc.rate || a.Format != tc.format {
					t.Errorf("%T: rate %d format %+v, want %d %+v", r, a.Rate, a.Format, tc.rate, tc.format)
				}
				if len(a.Channels) != len(tc.want) {
					t.Fatalf("%T: %d channels, want %d", r, len(a.Channels), len(tc.want))
				}
				for c := range tc.want {
					if len(a.Channels[c]) != len(tc.want[c]) {
						t.Fatalf("%T: channel %d has %d frames, want %d", r, c, len(a.Channels[c]), len(tc.want[c]))
					}
					for i := range tc.want[c] {
						if a.Channels[c][i] != tc.want[c][i] {
							t.Errorf("%T: channel %d frame %d = %v, want %v", r, c, i, a.Channels[c][i], tc.want[c][i])
						}
					}
				}
			}
		})
	}
}

// TestFormatString checks the encoding names used in reports.
func TestFormatString(t *testing.T) {
	cases := []struct {
		f    Format
		want string
	}{
		{Format{Encoding: Float32, ValidBits: 32}, "float32"},
		{Format{Encoding: PCM24, ValidBits: 24, Extensible: true}, "pcm24"},
		{Format{Encoding: PCM24, ValidBits: 20, Extensible: true}, "pcm24 (20 valid bits)"},
		{Format{Encoding: PCM8}, "pcm8"},
		{Format{}, "Encoding(0)"},
	}
	for _, tc := range cases {
		if got := tc.f.String(); got != tc.want {
			t.Errorf("%+v: %q, want %q", tc.f, got, tc.want)
		}
	}
	for e := PCM8; e <= Float64; e++ {
		got, err := ParseEncoding(strings.ToUpper(e.String()))
		if err != nil || got != e {
			t.Errorf("ParseEncoding(%q) = %v, %v", e.String(), got, err)
		}
	}
	if _, err := ParseEncoding("alaw"); err == nil || !strings.Contains(err.Error(), "use one of pcm8") {
		t.Errorf("ParseEncoding(alaw) error %v, want a list of encodings", err)
	}
}

// ---- errors ----

func TestReadErrors(t *testing.T) {
	pcm16 := func(f []byte) []byte { return riffWave(chunk{"fmt ", f}, chunk{"data", le16(1, 2, 3, 4)}) }
	withU16 := func(b []byte, at int, v uint16) []byte {
		b = bytes.Clone(b)
		binary.LittleEndian.PutUint16(b[at:], v)
		return b
	}
	withU32 := func(b []byte, at int, v uint32) []byte {
		b = bytes.Clone(b)
		binary.LittleEndian.PutUint32(b[at:], v)
		return b
	}
	good := pcm16(fmtBody(tagPCM, 2, 48000, 16))
	nanFile := riffWave(chunk{"fmt ", fmtBody(tagFloat, 2, 48000, 32)},
		chunk{"data", binary.LittleEndian.AppendUint32(binary.LittleEndian.AppendUint32(
			binary.LittleEndian.AppendUint32(binary.LittleEndian.AppendUint32(nil, 0), 0), 0), math.Float32bits(float32(math.NaN())))})
	badGUID := extBody(2, 48000, 16, 16, 3, tagPCM)
	badGUID[len(badGUID)-1] ^= 0xFF
	shortExt := fmtBody(tagExtensible, 2, 48000, 16)
	shortExt = append(shortExt, 0, 0)

	const (
		format      = "format"
		unsupported = "unsupported"
		truncated   = "truncated"
	)
	cases := []struct {
		name string
		file []byte
		kind string
		frag string
	}{
		{"empty file", nil, format, "the file is empty (0 bytes)"},
		{"mp3 with ID3 tag", []byte("ID3\x04\x00\x00\x00\x00\x00\x00\x00\x00\x00"), format, `not a WAV file: starts with "ID3" instead of "RIFF" (an MP3 file); convert it to WAV, e.g. with sox in.mp3 out.wav`},
		{"flac", []byte("fLaC\x00\x00\x00\x22\x00\x00\x00\x00"), format, `starts with "fLaC" instead of "RIFF" (a FLAC file)`},
		{"text file", []byte("freq_hz,gain_db\n"), format, `not a WAV file: starts with "freq"`},
		{"riff but avi", append([]byte("RIFF\x04\x00\x00\x00"), "AVI "...), format, `a RIFF file of type "AVI "`},
		{"rf64", append([]byte("RF64\xff\xff\xff\xff"), "WAVE"...), unsupported, "RF64 (64-bit WAV for files over 4 GiB) is not supported"},
		{"rifx big-endian", append([]byte("RIFX\x00\x00\x00\x04"), "WAVE"...), unsupported, "big-endian RIFX"},
		{"header cut short", []byte("RIFF\x00\x00"), format, "ends inside the RIFF header (6 of 12 bytes)"},
		{"no fmt and no data", riffWave(chunk{"LIST", []byte("abcd")}), format, "no fmt chunk and no data chunk"},
		{"fmt but no data", riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}), format, "no data chunk before the end of the file"},
		{"data before fmt", riffWave(chunk{"data", le16(1)}, chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}), format, "the data chunk comes before any fmt chunk"},
		{"second fmt", riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}, chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}, chunk{"data", le16(1)}), format, "a second fmt chunk"},
		{"fmt too short", pcm16(fmtBody(tagPCM, 2, 48000, 16)[:14]), format, "fmt chunk is 14 bytes, at least 16 are needed"},
		{"file ends in fmt", good[:30], format, "the file ends inside the fmt chunk (10 of 16 bytes)"},
		{"file ends in chunk header", good[:40], format, "ends inside a chunk header (4 of 8 bytes)"},
		{"file ends in unknown chunk", riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}, chunk{"LIST", make([]byte, 100)})[:60], format, `ends inside the "LIST" chunk (declared 100 bytes) before any data chunk`},
		{"zero channels", pcm16(withU16(fmtBody(tagPCM, 2, 48000, 16), 2, 0)), format, "byte 22: fmt chunk declares 0 channels"},
		{"rate zero", pcm16(fmtBody(tagPCM, 2, 0, 16)), format, "byte 24: fmt chunk declares a sample rate of 0 Hz"},
		{"rate beyond int32", pcm16(withU32(fmtBody(tagPCM, 2, 48000, 16), 4, 0xF0000000)), format, "sample rate of 4026531840 Hz"},
		{"byte rate overflow", pcm16(fmtBody(tagPCM, 8, 0x7FFF0000, 32)), format, "sample rate 2147418112 Hz at 32 bytes per frame is more bytes per second than a WAV header can state"},
		{"block align mismatch", pcm16(withU16(fmtBody(tagPCM, 2, 48000, 16), 12, 3)), format, "byte 32: block align is 3 bytes but 2 channels of 16 bits need 4 bytes per frame"},
		{"A-law", pcm16(fmtBody(6, 2, 8000, 8)), unsupported, "A-law encoding is not supported (integer PCM and IEEE float are); convert it to PCM or float, e.g. with sox in.wav -e floating-point -b 32 out.wav"},
		{"µ-law", pcm16(fmtBody(7, 1, 8000, 8)), unsupported, "µ-law encoding is not supported"},
		{"IMA ADPCM", pcm16(fmtBody(0x11, 1, 8000, 4)), unsupported, "IMA ADPCM encoding is not supported"},
		{"unknown tag", pcm16(fmtBody(0x1234, 1, 8000, 16)), unsupported, "format tag 0x1234 encoding is not supported"},
		{"12-bit PCM", pcm16(withU16(fmtBody(tagPCM, 2, 48000, 16), 14, 12)), unsupported, "12-bit integer PCM is not supported (8, 16, 24 and 32 are)"},
		{"16-bit float", pcm16(fmtBody(tagFloat, 2, 48000, 16)), unsupported, "16-bit float is not supported (32 and 64 are)"},
		{"extensible unknown GUID", pcm16(badGUID), unsupported, "extensible sub-format GUID 01000000000010008000"},
		{"extensible A-law sub-format", pcm16(extBody(2, 48000, 16, 16, 3, 6)), unsupported, "A-law encoding is not supported"},
		{"extensible too short", pcm16(shortExt), format, "extensible fmt chunk is 18 bytes with 0 extension bytes, need 40 and 22"},
		{"extensible valid bits exceed container", pcm16(extBody(2, 48000, 16, 20, 3, tagPCM)), format, "declares 20 valid bits in a 16-bit container"},
		{"empty data chunk", riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}, chunk{"data", nil}), format, "the data chunk holds no frames"},
		{"truncated data", good[:len(good)-5], truncated, "data chunk is truncated: 0 of 2 declared frames present; the file was cut short — use the frames present, or rewrite the header with sox --ignore-length in.wav out.wav"},
		{"truncated data keeps whole frames", withU32(good, 40, 40), truncated, "2 of 10 declared frames present"},
		{"NaN sample", nanFile, format, "frame 1, channel 2 holds NaN, not a finite sample"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for _, r := range []io.Reader{bytes.NewReader(tc.file), plainReader{bytes.NewReader(tc.file)}} {
				a, err := Read(r)
				if err == nil {
					t.Fatalf("%T: no error, want %s error containing %q", r, tc.kind, tc.frag)
				}
				msg := err.Error()
				if !strings.Contains(msg, tc.frag) {
					t.Errorf("%T: error %q\n  does not contain %q", r, msg, tc.frag)
				}
				if strings.Contains(msg, "\n") || !strings.HasPrefix(msg, "wavfile: ") {
					t.Errorf("%T: error %q is not one line starting wavfile:", r, msg)
				}
				var fe *FormatError
				var ue *UnsupportedError
				var te *TruncatedError
				switch tc.kind {
				case format:
					if !errors.As(err, &fe) {
						t.Errorf("%T: error %T, want *FormatError", r, err)
					}
				case unsupported:
					if !errors.As(err, &ue) {
						t.Errorf("%T: error %T, want *UnsupportedError", r, err)
					}
				case truncated:
					if !errors.As(err, &te) {
						t.Fatalf("%T: error %T, want *TruncatedError", r, err)
					}
					if a == nil || int64(a.Frames()) != te.Frames {
						t.Errorf("%T: truncated read returned %v, want the %d frames present", r, a, te.Frames)
					}
					continue
				}
				if a != nil {
					t.Errorf("%T: audio returned with error %v", r, err)
				}
			}
		})
	}
}

// TestReadTruncatedFrames checks that a truncated file yields exactly the
// complete frames it holds, equal to the start of the original.
func TestReadTruncatedFrames(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	a := randomAudio(rng, 48000, 2, 1000)
	var buf bytes.Buffer
	if err := Write(&buf, a, PCM24); err != nil {
		t.Fatal(err)
	}
	const headerBytes = 44
	cut := buf.Bytes()[:headerBytes+6*400+4] // 400 frames and part of one
	got, err := Read(bytes.NewReader(cut))
	var te *TruncatedError
	if !errors.As(err, &te) || te.Frames != 400 || te.Declared != 1000 {
		t.Fatalf("error %v, want 400 of 1000 frames", err)
	}
	if got.Frames() != 400 {
		t.Fatalf("%d frames returned, want 400", got.Frames())
	}
	for c := range got.Channels {
		for i, v := range got.Channels[c] {
			if math.Abs(v-a.Channels[c][i]) > halfLSB(PCM24) {
				t.Fatalf("channel %d frame %d: %v, want %v", c, i, v, a.Channels[c][i])
			}
		}
	}
}

func TestReadFileErrorNamesFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "take1.wav")
	if err := os.WriteFile(path, []byte("OggS\x00\x02"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := ReadFile(path)
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Path != path || !strings.Contains(err.Error(), path+": not a WAV file") || !strings.Contains(err.Error(), "sox in.ogg out.wav") {
		t.Errorf("error %v, want a FormatError naming %s and suggesting sox in.ogg", err, path)
	}
	if _, err := ReadFile(filepath.Join(t.TempDir(), "missing.wav")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: error %v, want os.ErrNotExist", err)
	}
}

func TestWriteErrors(t *testing.T) {
	cases := []struct {
		name string
		a    *Audio
		enc  Encoding
		frag string
	}{
		{"nil audio", nil, PCM16, "audio has no channels"},
		{"no channels", &Audio{Rate: 48000}, PCM16, "audio has no channels"},
		{"no frames", &Audio{Rate: 48000, Channels: [][]float64{{}, {}}}, PCM16, "audio has no frames"},
		{"rate zero", &Audio{Rate: 0, Channels: [][]float64{{0}}}, PCM16, "sample rate 0 Hz cannot be written"},
		{"unequal channels", &Audio{Rate: 48000, Channels: [][]float64{{0, 0}, {0}}}, PCM16, "channel 2 has 1 samples but channel 1 has 2"},
		{"NaN", &Audio{Rate: 48000, Channels: [][]float64{{0, math.NaN()}}}, Float32, "channel 1, frame 1 is NaN"},
		{"infinity", &Audio{Rate: 48000, Channels: [][]float64{{math.Inf(-1)}}}, PCM24, "channel 1, frame 0 is -Inf"},
		{"invalid encoding", &Audio{Rate: 48000, Channels: [][]float64{{0}}}, 0, "cannot write Encoding(0)"},
		{"too many channels", &Audio{Rate: 48000, Channels: make([][]float64, 20000)}, PCM32, "20000 channels of pcm32 need 80000 bytes per frame"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			err := Write(&buf, tc.a, tc.enc)
			if err == nil || !strings.Contains(err.Error(), tc.frag) {
				t.Fatalf("error %v, want one containing %q", err, tc.frag)
			}
			if buf.Len() != 0 {
				t.Errorf("%d bytes written before the error", buf.Len())
			}
		})
	}
}

// ---- streaming ----

func TestDecoderStreams(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	a := randomAudio(rng, 32000, 3, 10007)
	var buf bytes.Buffer
	if err := Write(&buf, a, PCM16); err != nil {
		t.Fatal(err)
	}
	whole, err := Read(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	d, err := NewDecoder(plainReader{bytes.NewReader(buf.Bytes())})
	if err != nil {
		t.Fatal(err)
	}
	if d.Rate() != 32000 || d.NumChannels() != 3 || d.DeclaredFrames() != 10007 || d.Format().Encoding != PCM16 {
		t.Fatalf("decoder %d Hz, %d channels, %d frames, %v", d.Rate(), d.NumChannels(), d.DeclaredFrames(), d.Format())
	}
	const block = 333 // not a divisor of the length, nor of the internal buffer
	dst := [][]float64{make([]float64, block), make([]float64, block), make([]float64, block+5)}
	at := 0
	for {
		n, err := d.ReadFrames(dst)
		for c := range dst {
			for i := range n {
				if dst[c][i] != whole.Channels[c][at+i] {
					t.Fatalf("channel %d frame %d: streamed %v, whole %v", c, at+i, dst[c][i], whole.Channels[c][at+i])
				}
			}
		}
		at += n
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if n == 0 {
			t.Fatal("ReadFrames returned 0 frames and no error")
		}
	}
	if at != 10007 || d.FramesRead() != 10007 {
		t.Errorf("streamed %d frames (FramesRead %d), want 10007", at, d.FramesRead())
	}
	if n, err := d.ReadFrames(dst); n != 0 || err != io.EOF {
		t.Errorf("after the end: %d, %v; want 0, EOF", n, err)
	}
}

// TestDecoderUnknownLength reads a stream whose data size is 0xFFFFFFFF
// (left open by a streaming writer): all frames up to the end.
func TestDecoderUnknownLength(t *testing.T) {
	file := riffWave(chunk{"fmt ", fmtBody(tagPCM, 1, 8000, 16)}, chunk{"data", le16(1, 2, 3)})
	binary.LittleEndian.PutUint32(file[40:], unknownLength)
	file = append(file, 0x04) // a partial frame at the end is dropped
	for _, r := range []io.Reader{bytes.NewReader(file), plainReader{bytes.NewReader(file)}} {
		d, err := NewDecoder(r)
		if err != nil {
			t.Fatal(err)
		}
		if d.DeclaredFrames() != -1 {
			t.Errorf("DeclaredFrames %d, want -1", d.DeclaredFrames())
		}
	}
	a, err := Read(bytes.NewReader(file))
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{1.0 / 32768, 2.0 / 32768, 3.0 / 32768}
	if a.Frames() != len(want) {
		t.Fatalf("%d frames, want %d", a.Frames(), len(want))
	}
	for i, v := range want {
		if a.Channels[0][i] != v {
			t.Errorf("frame %d: %v, want %v", i, a.Channels[0][i], v)
		}
	}
}

func TestReadFramesPanicsOnChannelMismatch(t *testing.T) {
	var buf bytes.Buffer
	if err := Write(&buf, &Audio{Rate: 8000, Channels: [][]float64{{0}, {0}}}, PCM16); err != nil {
		t.Fatal(err)
	}
	d, err := NewDecoder(&buf)
	if err != nil {
		t.Fatal(err)
	}
	defer func() {
		if r := recover(); r == nil || !strings.Contains(r.(string), "1 destination channels for a 2-channel stream") {
			t.Errorf("recovered %v, want a channel-count panic", r)
		}
	}()
	d.ReadFrames([][]float64{make([]float64, 4)})
}

// TestReadHugeDeclaredSizes checks that header values alone do not size
// allocations: a file declaring 4 GiB of data and 65535 channels but
// holding a few bytes reads (as truncated) with a small allocation.
func TestReadHugeDeclaredSizes(t *testing.T) {
	file := riffWave(chunk{"fmt ", fmtBody(tagPCM, 65535, 8000, 8)}, chunk{"data", make([]byte, 70000)})
	binary.LittleEndian.PutUint32(file[40:], 0xFFFFFFF0)
	for _, r := range []func() io.Reader{
		func() io.Reader { return bytes.NewReader(file) },
		func() io.Reader { return plainReader{bytes.NewReader(file)} },
	} {
		const maxBytes = 64 << 20 // far below the 32 GiB the header asks for
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		a, err := Read(r())
		runtime.ReadMemStats(&after)
		var te *TruncatedError
		if !errors.As(err, &te) || te.Frames != 1 || te.Declared != 0xFFFFFFF0/65535 {
			t.Fatalf("error %v, want 1 frame of %d declared", err, 0xFFFFFFF0/65535)
		}
		if a.Frames() != 1 || len(a.Channels) != 65535 {
			t.Errorf("%d frames of %d channels, want 1 of 65535", a.Frames(), len(a.Channels))
		}
		if n := after.TotalAlloc - before.TotalAlloc; n > maxBytes {
			t.Errorf("%T: %d bytes allocated, want at most %d", r(), n, maxBytes)
		}
	}
}

// ---- atomic files ----

func TestWriteFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.wav")
	a := &Audio{Rate: 48000, Channels: [][]float64{{0.25, -0.5}, {0.125, 0}}}
	if err := WriteFile(path, a, Float32); err != nil {
		t.Fatal(err)
	}
	got, err := ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if got.Channels[0][1] != -0.5 || got.Channels[1][0] != 0.125 {
		t.Errorf("read back %v", got.Channels)
	}
	before, _ := os.ReadFile(path)

	// A failed write leaves the old file alone and no temporary file.
	bad := &Audio{Rate: 48000, Channels: [][]float64{{math.NaN()}}}
	if err := WriteFile(path, bad, PCM16); err == nil {
		t.Fatal("NaN audio written")
	}
	// Renaming over a directory fails after the data is written.
	if err := os.Mkdir(filepath.Join(dir, "sub.wav"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "sub.wav", "x"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := WriteFile(filepath.Join(dir, "sub.wav"), a, PCM16); err == nil || !strings.Contains(err.Error(), "sub.wav") {
		t.Errorf("rename over a directory: error %v, want one naming sub.wav", err)
	}
	if err := WriteFile(filepath.Join(dir, "no", "such", "dir.wav"), a, PCM16); err == nil {
		t.Error("write into a missing directory succeeded")
	}
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Error("a failed WriteFile changed the existing file")
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.Name() != "out.wav" && e.Name() != "sub.wav" {
			t.Errorf("left behind %s", e.Name())
		}
	}
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, %v; want 0644", fi.Mode(), err)
	}
}
