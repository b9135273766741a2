// Package wavfile reads and writes RIFF/WAVE audio files.
//
// A WAV file is a RIFF container: the 12-byte header "RIFF", a little-endian
// uint32 size and the form type "WAVE", followed by chunks. Each chunk is a
// four-character id, a uint32 size and that many bytes, plus one pad byte
// when the size is odd. Two chunks matter:
//
//	"fmt "  format tag (1 PCM, 3 IEEE float, 0xFFFE extensible), channels,
//	        sample rate, byte rate, block align (bytes per frame), bits per
//	        sample, and for extensible files the valid bits, channel mask and
//	        a sub-format GUID whose first two bytes repeat the format tag
//	"data"  the frames: one sample per channel, interleaved, little-endian
//
// Every other chunk (LIST, fact, PEAK, cue, bext, junk, …) is skipped.
// The RIFF size and the fmt chunk's byte rate are not relied on (writers
// often get them wrong); a data chunk size of 0xFFFFFFFF, left by a
// streaming writer, means "to the end of the file"; bytes of a final
// partial frame are ignored.
//
// The reader accepts 8-bit (unsigned, offset 128), 16-, 24- and 32-bit
// signed integer PCM and 32- and 64-bit IEEE float, in plain or extensible
// form, with any number of channels. It returns samples as float64: integer
// codes q of an n-bit container map to q/2^(n−1), in [−1, 1); float samples
// are returned as stored (they may exceed ±1, but must be finite). RF64,
// big-endian RIFX and compressed encodings (A-law, µ-law, ADPCM, MP3) are
// reported as [*UnsupportedError]; damaged headers as [*FormatError]; a data
// chunk shorter than its header declares as [*TruncatedError].
//
// Header values never size an allocation on their own: buffers grow with
// the data actually present, so a damaged or hostile header cannot make the
// reader allocate more than the file holds.
//
// The writer produces plain PCM (format tag 1) or IEEE float (tag 3, with a
// fact chunk) files in 8-, 16-, 24- or 32-bit integer or 32- or 64-bit float
// encodings. Integer encodings round to the nearest code and clip; no dither
// is added.
package wavfile

import (
	"fmt"
	"strconv"
	"strings"
)

// Encoding is how one sample is stored.
type Encoding uint8

// Sample encodings. The zero Encoding is invalid.
const (
	PCM8    Encoding = iota + 1 // unsigned 8-bit integer, offset 128
	PCM16                       // signed 16-bit integer
	PCM24                       // signed 24-bit integer
	PCM32                       // signed 32-bit integer
	Float32                     // IEEE 754 binary32
	Float64                     // IEEE 754 binary64
)

var encodingNames = [...]string{
	PCM8:    "pcm8",
	PCM16:   "pcm16",
	PCM24:   "pcm24",
	PCM32:   "pcm32",
	Float32: "float32",
	Float64: "float64",
}

// String returns the encoding's name as accepted by [ParseEncoding]:
// "pcm8", "pcm16", "pcm24", "pcm32", "float32" or "float64".
func (e Encoding) String() string {
	if e.valid() {
		return encodingNames[e]
	}
	return "Encoding(" + strconv.Itoa(int(e)) + ")"
}

func (e Encoding) valid() bool { return e >= PCM8 && e <= Float64 }

// Bits returns the container size of one sample in bits (8 to 64), or 0
// for an invalid encoding.
func (e Encoding) Bits() int {
	switch e {
	case PCM8:
		return 8
	case PCM16:
		return 16
	case PCM24:
		return 24
	case PCM32, Float32:
		return 32
	case Float64:
		return 64
	}
	return 0
}

// IsFloat reports whether e is an IEEE float encoding.
func (e Encoding) IsFloat() bool { return e == Float32 || e == Float64 }

// ParseEncoding returns the encoding named s (case-insensitive), one of
// the names listed at [Encoding.String].
func ParseEncoding(s string) (Encoding, error) {
	for e := PCM8; e <= Float64; e++ {
		if strings.EqualFold(s, encodingNames[e]) {
			return e, nil
		}
	}
	return 0, fmt.Errorf("wavfile: unknown sample encoding %q; use one of pcm8, pcm16, pcm24, pcm32, float32, float64", s)
}

// Format describes how a file stores its samples.
type Format struct {
	// Encoding is the sample container.
	Encoding Encoding
	// ValidBits is the number of significant bits per sample: the
	// container size, or fewer when an extensible header says so (for
	// example 20 valid bits in a 24-bit container). Samples are scaled by
	// the container size either way.
	ValidBits int
	// Extensible reports a WAVE_FORMAT_EXTENSIBLE (0xFFFE) header.
	Extensible bool
	// ChannelMask is the extensible header's speaker mask (0 when absent).
	ChannelMask uint32
}

// String returns the encoding's name, followed by the number of valid
// bits when it is less than the container size: "pcm24", "pcm24 (20 valid
// bits)".
func (f Format) String() string {
	s := f.Encoding.String()
	if f.ValidBits != 0 && f.ValidBits != f.Encoding.Bits() {
		s += " (" + strconv.Itoa(f.ValidBits) + " valid bits)"
	}
	return s
}

// Audio is a whole recording held in memory.
type Audio struct {
	// Rate is the sample rate in hertz (frames per second), at least 1.
	Rate int
	// Channels holds one slice of samples per channel, all of the same
	// length. Integer encodings read as values in [−1, 1); float encodings
	// as stored.
	Channels [][]float64
	// Format describes the encoding the samples were read from. [Write]
	// ignores it and uses its own enc argument.
	Format Format
}

// Frames returns the number of frames (samples per channel): the length of
// the first channel, or 0 when there is none.
func (a *Audio) Frames() int {
	if len(a.Channels) == 0 {
		return 0
	}
	return len(a.Channels[0])
}

// FormatError reports a file that is not a valid WAV file, or whose header
// holds impossible values. Msg says what is wrong and how to fix it.
type FormatError struct {
	// Path is the file name, empty when reading a stream.
	Path string
	// Offset is the byte offset in the file of the offending field or
	// chunk, or −1 when it does not apply.
	Offset int64
	// Msg describes the problem and the fix.
	Msg string
}

func (e *FormatError) Error() string { return prefix(e.Path, e.Offset) + e.Msg }

// UnsupportedError reports a valid WAV file in an encoding or container
// this package does not read (RF64, RIFX, A-law, µ-law, ADPCM, 12-bit PCM,
// 16-bit float, …). Msg names it and says how to convert the file.
type UnsupportedError struct {
	// Path is the file name, empty when reading a stream.
	Path string
	// Msg describes the encoding and the conversion.
	Msg string
}

func (e *UnsupportedError) Error() string { return prefix(e.Path, -1) + e.Msg }

// TruncatedError reports a data chunk that ends before the number of
// frames its header declares: the file was cut short (a recording that was
// not closed properly, an interrupted copy). [Read] and [ReadFile] return
// the complete frames present together with this error.
type TruncatedError struct {
	// Path is the file name, empty when reading a stream.
	Path string
	// Frames is the number of complete frames present.
	Frames int64
	// Declared is the number of frames the data chunk header declares.
	Declared int64
}

func (e *TruncatedError) Error() string {
	return prefix(e.Path, -1) + fmt.Sprintf("data chunk is truncated: %d of %d declared frames present; "+
		"the file was cut short — use the frames present, or rewrite the header with sox --ignore-length in.wav out.wav",
		e.Frames, e.Declared)
}

func prefix(path string, off int64) string {
	s := "wavfile: "
	if path != "" {
		s += path + ": "
	}
	if off >= 0 {
		s += "byte " + strconv.FormatInt(off, 10) + ": "
	}
	return s
}
