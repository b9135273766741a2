package wavfile

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
)

// Limits applied while reading.
const (
	// maxRate is the largest sample rate accepted, in hertz: the largest
	// value an int holds on every platform.
	maxRate = math.MaxInt32
	// unknownSizePrealloc caps, in samples over all channels, what Read
	// reserves ahead when it cannot learn how many bytes remain; beyond
	// it the channels grow with the data actually read.
	unknownSizePrealloc = 1 << 20
	// growSamples is the least growth, in samples over all channels, of
	// Read's channel buffers when they fill up.
	growSamples = 1 << 16
	// blockBytes is the size of the decoder's read buffer (rounded to whole
	// frames, at least one frame).
	blockBytes = 1 << 15
	// unknownLength is the data chunk size a streaming writer leaves when it
	// cannot go back to patch the header: read to the end of the stream.
	unknownLength = 0xFFFFFFFF
)

// Format tags of the fmt chunk.
const (
	tagPCM        = 0x0001
	tagFloat      = 0x0003
	tagExtensible = 0xFFFE
)

// guidTail is bytes 2..15 of the KSDATAFORMAT_SUBTYPE_* GUIDs of an
// extensible header; bytes 0..1 hold the format tag (1 PCM, 3 float).
var guidTail = [14]byte{0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71}

// convertHint is the fix suggested for an encoding this package cannot read.
const convertHint = "convert it to PCM or float, e.g. with sox in.wav -e floating-point -b 32 out.wav"

// Decoder reads the frames of a WAV stream into caller-owned buffers.
//
// [NewDecoder] reads the header up to the start of the data chunk; then
// [Decoder.ReadFrames] decodes frames block by block, so a recording of any
// length can be processed in constant memory.
type Decoder struct {
	r      io.Reader
	seeker io.Seeker // nil when r cannot seek
	path   string

	rate       int
	nch        int
	format     Format
	blockAlign int
	sampleSize int

	dataOff   int64 // byte offset of the first frame
	declared  int64 // frames declared by the data chunk, −1 when unknown
	remaining int64 // frames still to read, −1 when unknown
	read      int64 // frames decoded so far
	off       int64 // byte offset of the next byte of r

	buf []byte
	err error // sticky: io.EOF or the first error
}

// NewDecoder reads a WAV header from r up to the start of the data chunk,
// skipping every chunk it does not need. When r is also an [io.Seeker],
// skipped chunks are sought over rather than read.
//
// Errors are [*FormatError], [*UnsupportedError] or an I/O error from r.
func NewDecoder(r io.Reader) (*Decoder, error) {
	return newDecoder(r, "")
}

func newDecoder(r io.Reader, path string) (*Decoder, error) {
	d := &Decoder{r: r, path: path}
	if s, ok := r.(io.Seeker); ok {
		d.seeker = s
	}
	if err := d.readHeader(); err != nil {
		return nil, err
	}
	return d, nil
}

// Rate returns the sample rate in hertz.
func (d *Decoder) Rate() int { return d.rate }

// NumChannels returns the number of channels, at least 1.
func (d *Decoder) NumChannels() int { return d.nch }

// Format returns the sample encoding of the stream.
func (d *Decoder) Format() Format { return d.format }

// DeclaredFrames returns the number of frames the data chunk header
// declares, or −1 when the header leaves the length open (size 0xFFFFFFFF,
// written by a streaming writer); the stream is then read to its end.
func (d *Decoder) DeclaredFrames() int64 { return d.declared }

// FramesRead returns the number of frames decoded so far.
func (d *Decoder) FramesRead() int64 { return d.read }

// ReadFrames decodes up to len(dst[c]) frames (the shortest of the
// channels) into dst[c][:n] for each channel c and returns n.
//
// At the end of the data it returns 0, [io.EOF]. When the stream ends
// before the declared number of frames it returns the complete frames
// decoded so far and a [*TruncatedError]; a trailing partial frame is
// dropped. Errors are sticky. ReadFrames panics if len(dst) is not the
// number of channels.
func (d *Decoder) ReadFrames(dst [][]float64) (int, error) {
	if len(dst) != d.nch {
		panic(fmt.Sprintf("wavfile: ReadFrames: %d destination channels for a %d-channel stream", len(dst), d.nch))
	}
	if d.err != nil {
		return 0, d.err
	}
	want := len(dst[0])
	for _, c := range dst[1:] {
		want = min(want, len(c))
	}
	if d.buf == nil {
		d.buf = make([]byte, max(1, blockBytes/d.blockAlign)*d.blockAlign)
	}
	bufFrames := len(d.buf) / d.blockAlign
	n := 0
	for n < want {
		nf := min(want-n, bufFrames)
		if d.remaining >= 0 {
			if d.remaining == 0 {
				d.err = io.EOF
				break
			}
			nf = int(min(int64(nf), d.remaining))
		}
		nb, err := io.ReadFull(d.r, d.buf[:nf*d.blockAlign])
		got := nb / d.blockAlign
		if bad, ferr := d.decode(d.buf[:got*d.blockAlign], dst, n); ferr != nil {
			n += bad
			d.read += int64(bad)
			d.err = ferr
			return n, ferr
		}
		n += got
		d.read += int64(got)
		d.off += int64(nb)
		if d.remaining >= 0 {
			d.remaining -= int64(got)
		}
		if err == nil {
			continue
		}
		switch {
		case errors.Is(err, io.EOF), errors.Is(err, io.ErrUnexpectedEOF):
			if d.remaining < 0 {
				d.err = io.EOF
			} else {
				d.err = &TruncatedError{Path: d.path, Frames: d.read, Declared: d.declared}
				return n, d.err
			}
		default:
			d.err = d.ioError(err)
			return n, d.err
		}
		break
	}
	if n == 0 && d.err != nil {
		return 0, d.err
	}
	return n, nil
}

// decode converts whole frames from src into dst[c][at:]. It returns the
// number of leading frames that are valid and a *FormatError when a float
// sample is not finite.
func (d *Decoder) decode(src []byte, dst [][]float64, at int) (int, error) {
	nf := len(src) / d.blockAlign
	ba, ss := d.blockAlign, d.sampleSize
	bad := false // a float sample is NaN or infinite
	for c := range dst {
		out := dst[c][at : at+nf]
		p := c * ss
		switch d.format.Encoding {
		case PCM8:
			for i := range out {
				out[i] = float64(int(src[p])-128) * (1.0 / (1 << 7))
				p += ba
			}
		case PCM16:
			for i := range out {
				out[i] = float64(int16(binary.LittleEndian.Uint16(src[p:]))) * (1.0 / (1 << 15))
				p += ba
			}
		case PCM24:
			for i := range out {
				b := src[p : p+3]
				v := int32(uint32(b[0])<<8|uint32(b[1])<<16|uint32(b[2])<<24) >> 8
				out[i] = float64(v) * (1.0 / (1 << 23))
				p += ba
			}
		case PCM32:
			for i := range out {
				out[i] = float64(int32(binary.LittleEndian.Uint32(src[p:]))) * (1.0 / (1 << 31))
				p += ba
			}
		case Float32:
			for i := range out {
				v := float64(math.Float32frombits(binary.LittleEndian.Uint32(src[p:])))
				bad = bad || v-v != 0
				out[i] = v
				p += ba
			}
		case Float64:
			for i := range out {
				v := math.Float64frombits(binary.LittleEndian.Uint64(src[p:]))
				bad = bad || v-v != 0
				out[i] = v
				p += ba
			}
		}
	}
	if bad {
		return d.nonFinite(dst, at, nf)
	}
	return nf, nil
}

// nonFinite locates the first frame of dst[·][at:at+nf] holding a NaN or an
// infinity and reports it.
func (d *Decoder) nonFinite(dst [][]float64, at, nf int) (int, error) {
	for i := range nf {
		for c := range dst {
			if v := dst[c][at+i]; v-v != 0 {
				frame := d.read + int64(i)
				off := d.dataOff + frame*int64(d.blockAlign) + int64(c*d.sampleSize)
				return i, &FormatError{Path: d.path, Offset: off, Msg: fmt.Sprintf(
					"frame %d, channel %d holds %v, not a finite sample; the file is damaged — re-export it from its source",
					frame, c+1, v)}
			}
		}
	}
	return nf, nil // unreachable when called after a bad sample was seen
}

func (d *Decoder) ioError(err error) error {
	if d.path != "" {
		return fmt.Errorf("wavfile: reading %s: %w", d.path, err)
	}
	return fmt.Errorf("wavfile: reading: %w", err)
}

func (d *Decoder) formatErr(off int64, format string, args ...any) error {
	return &FormatError{Path: d.path, Offset: off, Msg: fmt.Sprintf(format, args...)}
}

func (d *Decoder) unsupported(format string, args ...any) error {
	return &UnsupportedError{Path: d.path, Msg: fmt.Sprintf(format, args...)}
}

// readFull reads len(b) bytes and advances the offset; it returns the
// number of bytes read and io.EOF, io.ErrUnexpectedEOF or an I/O error.
func (d *Decoder) readFull(b []byte) (int, error) {
	n, err := io.ReadFull(d.r, b)
	d.off += int64(n)
	return n, err
}

// skip advances n bytes, seeking when it can. It reports whether all n
// bytes were there.
func (d *Decoder) skip(n int64) (bool, error) {
	if n == 0 {
		return true, nil
	}
	if d.seeker != nil {
		// Seek to the chunk's last byte and read it, to learn whether the
		// chunk is complete (a seek past the end succeeds silently).
		if _, err := d.seeker.Seek(n-1, io.SeekCurrent); err == nil {
			d.off += n - 1
			var last [1]byte
			got, err := d.readFull(last[:])
			if err != nil && !errors.Is(err, io.EOF) {
				return false, d.ioError(err)
			}
			return got == 1, nil
		}
		d.seeker = nil // a pipe behind an *os.File: read instead
	}
	m, err := io.CopyN(io.Discard, d.r, n)
	d.off += m
	if err != nil && !errors.Is(err, io.EOF) {
		return false, d.ioError(err)
	}
	return m == n, nil
}

func (d *Decoder) readHeader() error {
	var hdr [12]byte
	n, err := d.readFull(hdr[:])
	if err != nil && n == 0 && errors.Is(err, io.EOF) {
		return d.formatErr(-1, "the file is empty (0 bytes), not a WAV file; record or export the audio again")
	}
	if err != nil && !errors.Is(err, io.ErrUnexpectedEOF) {
		return d.ioError(err)
	}
	if err := d.checkMagic(hdr[:n]); err != nil {
		return err
	}
	var fmtSeen bool
	for {
		var ch [8]byte
		chunkOff := d.off
		n, err := d.readFull(ch[:])
		switch {
		case err == nil:
		case n == 0 && errors.Is(err, io.EOF):
			if !fmtSeen {
				return d.formatErr(-1, "no fmt chunk and no data chunk before the end of the file at byte %d; the file holds no audio — export it again", chunkOff)
			}
			return d.formatErr(-1, "no data chunk before the end of the file at byte %d; the file holds no audio — export it again", chunkOff)
		case errors.Is(err, io.ErrUnexpectedEOF):
			return d.formatErr(chunkOff, "the file ends inside a chunk header (%d of 8 bytes); the file is truncated — export it again", n)
		default:
			return d.ioError(err)
		}
		id := string(ch[:4])
		size := binary.LittleEndian.Uint32(ch[4:])
		switch id {
		case "fmt ":
			if fmtSeen {
				return d.formatErr(chunkOff, "a second fmt chunk; the header is damaged — re-export the file")
			}
			fmtSeen = true
			if err := d.readFmt(chunkOff, size); err != nil {
				return err
			}
		case "data":
			if !fmtSeen {
				return d.formatErr(chunkOff, "the data chunk comes before any fmt chunk, so its encoding is unknown; re-export the file (sox in.wav out.wav puts fmt first)")
			}
			d.dataOff = d.off
			if size == unknownLength {
				d.declared, d.remaining = -1, -1
			} else {
				d.declared = int64(size) / int64(d.blockAlign)
				d.remaining = d.declared
			}
			return nil
		default:
			ok, err := d.skip(int64(size) + int64(size&1))
			if err != nil {
				return err
			}
			if !ok {
				return d.formatErr(chunkOff, "the file ends inside the %q chunk (declared %d bytes) before any data chunk; the file is truncated — export it again", id, size)
			}
		}
	}
}

// checkMagic validates the 12-byte RIFF header, or names what the file
// seems to be instead.
func (d *Decoder) checkMagic(h []byte) error {
	has := func(p string) bool { return len(h) >= len(p) && string(h[:len(p)]) == p }
	switch {
	case has("RIFF") && len(h) == 12 && string(h[8:12]) == "WAVE":
		return nil
	case has("RIFF") && len(h) < 12:
		return d.formatErr(-1, "the file ends inside the RIFF header (%d of 12 bytes); the file is truncated — export it again", len(h))
	case has("RIFF"):
		return d.formatErr(8, "a RIFF file of type %q, not \"WAVE\" (an AVI or WebP file?); convert it to WAV, e.g. with sox in.xxx out.wav", h[8:12])
	case has("RF64"), has("BW64"):
		return d.unsupported("%s (64-bit WAV for files over 4 GiB) is not supported; convert it to an ordinary WAV under 4 GiB, e.g. with sox in.wav out.wav trim 0 <seconds>", h[:4])
	case has("RIFX"):
		return d.unsupported("big-endian RIFX WAV is not supported; convert it to little-endian WAV, e.g. with sox in.wav out.wav")
	}
	what, ext := "", "xxx"
	switch {
	case has("ID3"):
		what, ext = " (an MP3 file)", "mp3"
	case len(h) >= 2 && h[0] == 0xFF && h[1]&0xE0 == 0xE0:
		what, ext = " (an MPEG audio file)", "mp3"
	case has("fLaC"):
		what, ext = " (a FLAC file)", "flac"
	case has("OggS"):
		what, ext = " (an Ogg file)", "ogg"
	case has("FORM"):
		what, ext = " (an AIFF file)", "aiff"
	case has("caff"):
		what, ext = " (a Core Audio file)", "caf"
	}
	start := h[:min(len(h), 4)]
	if has("ID3") {
		start = h[:3]
	}
	return d.formatErr(-1, "not a WAV file: starts with %q instead of \"RIFF\"%s; convert it to WAV, e.g. with sox in.%s out.wav", start, what, ext)
}

// readFmt reads and checks a fmt chunk of the given size whose header began
// at chunkOff.
func (d *Decoder) readFmt(chunkOff int64, size uint32) error {
	body := chunkOff + 8
	if size < 16 {
		return d.formatErr(chunkOff, "fmt chunk is %d bytes, at least 16 are needed; the header is damaged — re-export the file", size)
	}
	var b [40]byte
	n := int(min(size, uint32(len(b))))
	if got, err := d.readFull(b[:n]); err != nil {
		if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
			return d.formatErr(chunkOff, "the file ends inside the fmt chunk (%d of %d bytes); the file is truncated — export it again", got, size)
		}
		return d.ioError(err)
	}
	if ok, err := d.skip(int64(size) - int64(n) + int64(size&1)); err != nil {
		return err
	} else if !ok {
		return d.formatErr(chunkOff, "the file ends inside the fmt chunk (declared %d bytes); the file is truncated — export it again", size)
	}

	tag := binary.LittleEndian.Uint16(b[0:])
	nch := int(binary.LittleEndian.Uint16(b[2:]))
	rate := binary.LittleEndian.Uint32(b[4:])
	blockAlign := int(binary.LittleEndian.Uint16(b[12:]))
	bits := int(binary.LittleEndian.Uint16(b[14:]))

	if nch == 0 {
		return d.formatErr(body+2, "fmt chunk declares 0 channels; the header is damaged — re-export the file")
	}
	if rate == 0 {
		return d.formatErr(body+4, "fmt chunk declares a sample rate of 0 Hz; the header is damaged — re-export the file, or set the rate with sox -r 48000 in.wav out.wav")
	}
	if rate > maxRate {
		return d.formatErr(body+4, "fmt chunk declares a sample rate of %d Hz, beyond any real recording; the header is damaged — re-export the file", rate)
	}

	f := Format{}
	sub := tag
	if tag == tagExtensible {
		cb := binary.LittleEndian.Uint16(b[16:])
		if size < 40 || cb < 22 {
			return d.formatErr(chunkOff, "extensible fmt chunk is %d bytes with %d extension bytes, need 40 and 22; the header is damaged — re-export the file", size, cb)
		}
		f.Extensible = true
		f.ValidBits = int(binary.LittleEndian.Uint16(b[18:]))
		f.ChannelMask = binary.LittleEndian.Uint32(b[20:])
		sub = binary.LittleEndian.Uint16(b[24:])
		if [14]byte(b[26:40]) != guidTail {
			return d.unsupported("extensible sub-format GUID %x is not PCM or IEEE float; %s", b[24:40], convertHint)
		}
	}
	switch sub {
	case tagPCM:
		switch bits {
		case 8:
			f.Encoding = PCM8
		case 16:
			f.Encoding = PCM16
		case 24:
			f.Encoding = PCM24
		case 32:
			f.Encoding = PCM32
		default:
			return d.unsupported("%d-bit integer PCM is not supported (8, 16, 24 and 32 are); %s", bits, convertHint)
		}
	case tagFloat:
		switch bits {
		case 32:
			f.Encoding = Float32
		case 64:
			f.Encoding = Float64
		default:
			return d.unsupported("%d-bit float is not supported (32 and 64 are); %s", bits, convertHint)
		}
	default:
		return d.unsupported("%s encoding is not supported (integer PCM and IEEE float are); %s", tagName(sub), convertHint)
	}
	if f.ValidBits == 0 {
		f.ValidBits = bits
	}
	if f.ValidBits > bits {
		return d.formatErr(body+18, "extensible fmt chunk declares %d valid bits in a %d-bit container; the header is damaged — re-export the file", f.ValidBits, bits)
	}
	if want := nch * bits / 8; blockAlign != want {
		return d.formatErr(body+12, "block align is %d bytes but %d channels of %d bits need %d bytes per frame; the header is damaged — re-export the file", blockAlign, nch, bits, want)
	}
	if uint64(rate)*uint64(blockAlign) > math.MaxUint32 {
		return d.formatErr(body+4, "sample rate %d Hz at %d bytes per frame is more bytes per second than a WAV header can state; the header is damaged — re-export the file", rate, blockAlign)
	}
	d.rate = int(rate)
	d.nch = nch
	d.format = f
	d.blockAlign = blockAlign
	d.sampleSize = bits / 8
	return nil
}

// tagName names a WAVE format tag.
func tagName(tag uint16) string {
	switch tag {
	case 0x0002:
		return "Microsoft ADPCM"
	case 0x0006:
		return "A-law"
	case 0x0007:
		return "µ-law"
	case 0x0011:
		return "IMA ADPCM"
	case 0x0031:
		return "GSM 6.10"
	case 0x0050:
		return "MPEG"
	case 0x0055:
		return "MP3"
	}
	return fmt.Sprintf("format tag 0x%04X", tag)
}

// Read reads a whole WAV stream into memory.
//
// When the data chunk is shorter than declared, Read returns the complete
// frames present together with a [*TruncatedError]; every other error
// returns a nil *Audio. A data chunk with no frames is a [*FormatError].
// Memory grows with the data actually read, never with header values
// alone; when r reports how many bytes remain (a Len method, as
// bytes.Reader has, or an [io.Seeker]), the channels are allocated once.
func Read(r io.Reader) (*Audio, error) { return read(r, "") }

// ReadFile reads the WAV file at path into memory; see [Read]. Errors name
// the file.
func ReadFile(path string) (*Audio, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("wavfile: %w", err)
	}
	defer f.Close()
	return read(f, path)
}

func read(r io.Reader, path string) (*Audio, error) {
	d, err := newDecoder(r, path)
	if err != nil {
		return nil, err
	}
	limit := int64(unknownSizePrealloc / d.nch)
	if rem := remainingBytes(r); rem >= 0 {
		limit = rem / int64(d.blockAlign)
	}
	reserve := limit
	if d.declared >= 0 {
		reserve = min(reserve, d.declared)
	}
	chans := make([][]float64, d.nch)
	for c := range chans {
		chans[c] = make([]float64, 0, reserve)
	}
	dst := make([][]float64, d.nch)
	n := 0
	var rerr error
	for {
		room := cap(chans[0])
		for _, c := range chans {
			room = min(room, cap(c))
		}
		if room == n {
			if d.remaining == 0 {
				break // all declared frames read: no need to grow
			}
			// Grow with the data: double, but by at least growSamples
			// samples over all channels.
			step := max(n, growSamples/d.nch, 1)
			for c := range chans {
				chans[c] = slices.Grow(chans[c][:n], step)
			}
			continue
		}
		for c := range chans {
			dst[c] = chans[c][n:room]
		}
		k, err := d.ReadFrames(dst)
		n += k
		if err == io.EOF {
			break
		}
		if err != nil {
			var te *TruncatedError
			if !errors.As(err, &te) {
				return nil, err
			}
			rerr = err
			break
		}
	}
	if n == 0 && rerr == nil {
		return nil, d.formatErr(d.dataOff-8, "the data chunk holds no frames; record or export the audio again (a recording that was not closed properly can be recovered with sox --ignore-length in.wav out.wav)")
	}
	for c := range chans {
		chans[c] = chans[c][:n:n]
	}
	return &Audio{Rate: d.rate, Channels: chans, Format: d.format}, rerr
}

// remainingBytes returns how many bytes remain to be read from r, or −1
// when r cannot tell.
func remainingBytes(r io.Reader) int64 {
	switch v := r.(type) {
	case interface{ Len() int }:
		return int64(v.Len())
	case io.Seeker:
		cur, err := v.Seek(0, io.SeekCurrent)
		if err != nil {
			return -1
		}
		end, err := v.Seek(0, io.SeekEnd)
		if err != nil {
			return -1
		}
		if _, err := v.Seek(cur, io.SeekStart); err != nil {
			return -1
		}
		return max(end-cur, 0)
	}
	return -1
}
