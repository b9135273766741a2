package wavfile

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"tonetrace/config/atomicfile"
)

// maxDataBytes is the largest data chunk a RIFF file can describe once the
// header chunks are counted: sizes are 32-bit.
const maxDataBytes = math.MaxUint32 - 64

// Write writes a as a WAV stream in encoding enc.
//
// Integer encodings scale a sample x by 2^(n−1) for an n-bit code, round
// to the nearest code (ties to even) and clip to [−2^(n−1), 2^(n−1)−1], so
// +1.0 becomes the largest code and anything beyond full scale clips. No
// dither is added: add it to a before writing if the quantisation error
// must be decorrelated from the signal. Float32 rounds each sample to the
// nearest binary32 value; float encodings keep values beyond ±1.
//
// Integer files carry format tag 1 (PCM), float files tag 3 with a fact
// chunk, whatever the number of channels. a.Format is ignored.
//
// Write returns an error, and writes nothing, when a has no channels or
// no frames, channels of different lengths, a rate below 1 Hz, a sample
// that is NaN or infinite, or more data than a WAV file can hold (4 GiB).
func Write(w io.Writer, a *Audio, enc Encoding) error {
	if err := check(a, enc); err != nil {
		return err
	}
	nch := len(a.Channels)
	frames := a.Frames()
	ss := enc.Bits() / 8
	ba := nch * ss
	dataBytes := int64(frames) * int64(ba)

	tag, fmtSize := uint16(tagPCM), uint32(16)
	if enc.IsFloat() {
		tag, fmtSize = tagFloat, 18
	}
	riffSize := 4 + 8 + int64(fmtSize) + 8 + dataBytes + dataBytes&1
	if enc.IsFloat() {
		riffSize += 8 + 4 // fact chunk
	}
	h := make([]byte, 0, 58)
	h = append(h, "RIFF"...)
	h = binary.LittleEndian.AppendUint32(h, uint32(riffSize))
	h = append(h, "WAVEfmt "...)
	h = binary.LittleEndian.AppendUint32(h, fmtSize)
	h = binary.LittleEndian.AppendUint16(h, tag)
	h = binary.LittleEndian.AppendUint16(h, uint16(nch))
	h = binary.LittleEndian.AppendUint32(h, uint32(a.Rate))
	h = binary.LittleEndian.AppendUint32(h, uint32(int64(a.Rate)*int64(ba)))
	h = binary.LittleEndian.AppendUint16(h, uint16(ba))
	h = binary.LittleEndian.AppendUint16(h, uint16(enc.Bits()))
	if enc.IsFloat() {
		h = binary.LittleEndian.AppendUint16(h, 0) // cbSize
		h = append(h, "fact"...)
		h = binary.LittleEndian.AppendUint32(h, 4)
		h = binary.LittleEndian.AppendUint32(h, uint32(frames))
	}
	h = append(h, "data"...)
	h = binary.LittleEndian.AppendUint32(h, uint32(dataBytes))
	if _, err := w.Write(h); err != nil {
		return fmt.Errorf("wavfile: writing header: %w", err)
	}

	buf := make([]byte, max(1, blockBytes/ba)*ba)
	bufFrames := len(buf) / ba
	for at := 0; at < frames; at += bufFrames {
		nf := min(bufFrames, frames-at)
		out := buf[:nf*ba]
		for c, ch := range a.Channels {
			encode(out[c*ss:], ch[at:at+nf], enc, ba)
		}
		if _, err := w.Write(out); err != nil {
			return fmt.Errorf("wavfile: writing samples: %w", err)
		}
	}
	if dataBytes&1 == 1 {
		if _, err := w.Write([]byte{0}); err != nil {
			return fmt.Errorf("wavfile: writing pad byte: %w", err)
		}
	}
	return nil
}

// check validates a for writing in enc.
func check(a *Audio, enc Encoding) error {
	if !enc.valid() {
		return fmt.Errorf("wavfile: cannot write %v; use one of pcm8, pcm16, pcm24, pcm32, float32, float64", enc)
	}
	if a == nil || len(a.Channels) == 0 {
		return errors.New("wavfile: audio has no channels; nothing to write")
	}
	ba := len(a.Channels) * enc.Bits() / 8
	if ba > math.MaxUint16 {
		return fmt.Errorf("wavfile: %d channels of %v need %d bytes per frame, a WAV file holds at most 65535; write fewer channels or a smaller encoding", len(a.Channels), enc, ba)
	}
	if a.Rate < 1 || int64(a.Rate)*int64(ba) > math.MaxUint32 {
		return fmt.Errorf("wavfile: sample rate %d Hz cannot be written; set Audio.Rate to the rate in hertz (for example 48000)", a.Rate)
	}
	frames := a.Frames()
	for c, ch := range a.Channels {
		if len(ch) != frames {
			return fmt.Errorf("wavfile: channel %d has %d samples but channel 1 has %d; all channels must have the same length", c+1, len(ch), frames)
		}
	}
	if frames == 0 {
		return errors.New("wavfile: audio has no frames; nothing to write")
	}
	if int64(frames)*int64(ba) > maxDataBytes {
		return fmt.Errorf("wavfile: %d frames of %d bytes exceed the 4 GiB a WAV file holds; split the audio into shorter files", frames, ba)
	}
	for c, ch := range a.Channels {
		for i, v := range ch {
			if v-v != 0 {
				return fmt.Errorf("wavfile: channel %d, frame %d is %v; only finite samples can be written", c+1, i, v)
			}
		}
	}
	return nil
}

// encode writes the samples of one channel into dst, one every stride
// bytes, starting at dst[0].
func encode(dst []byte, src []float64, enc Encoding, stride int) {
	p := 0
	switch enc {
	case PCM8:
		for _, v := range src {
			dst[p] = byte(quantise(v, 1<<7) + 128)
			p += stride
		}
	case PCM16:
		for _, v := range src {
			binary.LittleEndian.PutUint16(dst[p:], uint16(int16(quantise(v, 1<<15))))
			p += stride
		}
	case PCM24:
		for _, v := range src {
			q := uint32(quantise(v, 1<<23))
			dst[p], dst[p+1], dst[p+2] = byte(q), byte(q>>8), byte(q>>16)
			p += stride
		}
	case PCM32:
		for _, v := range src {
			binary.LittleEndian.PutUint32(dst[p:], uint32(quantise(v, 1<<31)))
			p += stride
		}
	case Float32:
		for _, v := range src {
			binary.LittleEndian.PutUint32(dst[p:], math.Float32bits(float32(v)))
			p += stride
		}
	case Float64:
		for _, v := range src {
			binary.LittleEndian.PutUint64(dst[p:], math.Float64bits(v))
			p += stride
		}
	}
}

// quantise returns round(v·scale) clipped to [−scale, scale−1].
func quantise(v, scale float64) int32 {
	x := math.RoundToEven(v * scale)
	if x > scale-1 {
		x = scale - 1
	} else if x < -scale {
		x = -scale
	}
	return int32(x)
}

// WriteFile writes a to the file at path in encoding enc (see [Write]),
// atomically: it writes a temporary file in the same directory, flushes it
// to disk, and renames it over path. On any error the temporary file is
// removed and an existing file at path is left as it was. The new file
// has permissions 0644.
func WriteFile(path string, a *Audio, enc Encoding) error {
	if err := check(a, enc); err != nil {
		return err
	}
	return atomicfile.Write(path, func(w io.Writer) error { return Write(w, a, enc) })
}
