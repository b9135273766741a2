package device

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"sync"

	"tonetrace/audio"
)

// maxLogLines is how many of miniaudio's last log lines a stream keeps.
const maxLogLines = 256

// logBook collects miniaudio's log lines: the last maxLogLines in memory,
// every line to an optional writer. miniaudio calls add from its own
// threads during init, enumeration and on errors — never from a data
// callback of ours.
type logBook struct {
	mu   sync.Mutex
	w    io.Writer
	buf  []string
	next int // slot of the next line once the book is full
}

func newLogBook(w io.Writer) *logBook { return &logBook{w: w} }

// add records one message.
func (b *logBook) add(msg string) {
	line := strings.TrimRight(msg, "\r\n")
	b.mu.Lock()
	defer b.mu.Unlock()
	if len(b.buf) < maxLogLines {
		b.buf = append(b.buf, line)
	} else {
		b.buf[b.next] = line
		b.next = (b.next + 1) % maxLogLines
	}
	if b.w != nil {
		_, _ = io.WriteString(b.w, line+"\n")
	}
}

// lines returns the kept lines, oldest first.
func (b *logBook) lines() []string {
	b.mu.Lock()
	defer b.mu.Unlock()
	out := make([]string, 0, len(b.buf))
	out = append(out, b.buf[b.next:]...)
	return append(out, b.buf[:b.next]...)
}

// lastError returns "; miniaudio said: …" with the last line that reports
// a failure, or "".
func (b *logBook) lastError() string {
	ls := b.lines()
	for i := len(ls) - 1; i >= 0; i-- {
		l := strings.ToLower(ls[i])
		if strings.Contains(l, "fail") || strings.Contains(l, "error") || strings.Contains(l, "invalid") {
			return "; miniaudio said: " + strings.TrimSpace(ls[i])
		}
	}
	return ""
}

// side is what miniaudio's init report says about one direction: the
// device side ("internal") format and buffer, and the converters it put in.
type side struct {
	found           bool
	name            string
	format          string // plain words
	channels, rate  int
	period, periods int
	resampling      bool
	channelRouting  bool
}

// setup is miniaudio's init report for a stream.
type setup struct {
	play, capt side
}

// parseSetup reads the device report miniaudio logs after initializing a
// device (miniaudio.h, ma_device_init: "  NAME (Capture)" then
// "    Format:      internal -> client", "    Channels: …", "    Sample
// Rate: …", "    Buffer Size: period*periods (total)", converter flags;
// for playback the arrows run client -> internal).
func parseSetup(lines []string) setup {
	var st setup
	var cur *side
	capture := false
	for _, l := range lines {
		t := strings.TrimSpace(l)
		switch {
		case strings.HasSuffix(t, "(Capture)"):
			st.capt = side{found: true, name: strings.TrimSpace(strings.TrimSuffix(t, "(Capture)"))}
			cur, capture = &st.capt, true
			continue
		case strings.HasSuffix(t, "(Playback)"):
			st.play = side{found: true, name: strings.TrimSpace(strings.TrimSuffix(t, "(Playback)"))}
			cur, capture = &st.play, false
			continue
		case cur == nil:
			continue
		}
		key, val, ok := strings.Cut(t, ":")
		if !ok {
			continue
		}
		val = strings.TrimSpace(val)
		internal := val
		if a, b, arrow := strings.Cut(val, "->"); arrow {
			internal = strings.TrimSpace(a)
			if !capture {
				internal = strings.TrimSpace(b)
			}
		}
		switch key {
		case "Format":
			cur.format = plainFormat(internal)
		case "Channels":
			cur.channels, _ = strconv.Atoi(internal)
		case "Sample Rate":
			cur.rate, _ = strconv.Atoi(internal)
		case "Buffer Size":
			size, _, _ := strings.Cut(val, " ")
			p, n, _ := strings.Cut(size, "*")
			cur.period, _ = strconv.Atoi(p)
			cur.periods, _ = strconv.Atoi(n)
		case "Resampling":
			cur.resampling = val == "YES"
		case "Channel Routing":
			cur.channelRouting = val == "YES"
		}
	}
	return st
}

// plainFormat turns miniaudio's format name into the words Info uses.
func plainFormat(s string) string {
	switch {
	case strings.HasPrefix(s, "8-bit Unsigned"):
		return "8-bit unsigned integer"
	case strings.HasPrefix(s, "16-bit Signed"):
		return "16-bit integer"
	case strings.HasPrefix(s, "24-bit Signed"):
		return "24-bit integer"
	case strings.HasPrefix(s, "32-bit Signed"):
		return "32-bit integer"
	case strings.HasPrefix(s, "32-bit IEEE"):
		return "32-bit float"
	}
	return strings.ToLower(s)
}

// conversions explains in plain words every conversion between the
// program's 32-bit float stream and the devices: by miniaudio (from its
// init report) and by the sound server (the device's own format differs
// from the stream's).
func conversions(st setup, play, capt Info, core *audio.Core) []string {
	in, out := core.Channels()
	rate := core.Rate()
	var r []string
	if st.capt.found {
		r = append(r, sideConversions("capture", st.capt, capt, in, rate)...)
	}
	if st.play.found {
		r = append(r, sideConversions("playback", st.play, play, out, rate)...)
	}
	return r
}

func sideConversions(kind string, sd side, dev Info, channels, rate int) []string {
	var r []string
	say := func(format string, args ...any) { r = append(r, kind+": "+fmt.Sprintf(format, args...)) }
	capture := kind == "capture"
	if sd.format != "" && sd.format != "32-bit float" {
		if capture {
			say("miniaudio converts the device's %s samples to 32-bit float", sd.format)
		} else {
			say("miniaudio converts 32-bit float samples to the device's %s", sd.format)
		}
	}
	if sd.channels != 0 && sd.channels != channels {
		if capture {
			say("the device delivers %d channels and miniaudio maps them to %d: inputs may be mixed together; ask for %d channels", sd.channels, channels, sd.channels)
		} else {
			say("miniaudio maps %d channels to the device's %d: outputs may be mixed together; ask for %d channels", channels, sd.channels, sd.channels)
		}
	} else if sd.channelRouting {
		say("miniaudio reorders or mixes channels (its channel maps differ)")
	}
	if sd.rate != 0 && sd.rate != rate {
		if capture {
			say("miniaudio resamples from the device's %d Hz to %d Hz", sd.rate, rate)
		} else {
			say("miniaudio resamples %d Hz to the device's %d Hz", rate, sd.rate)
		}
	} else if sd.resampling {
		say("miniaudio resamples (it reports a resampler in the path)")
	}
	// The sound server's own conversions: the device's single native
	// format (PulseAudio reports its sink or source format) differs from
	// what the stream gets.
	streamRate, streamCh, streamFmt := rate, channels, "32-bit float"
	if sd.rate != 0 {
		streamRate = sd.rate
	}
	if sd.channels != 0 {
		streamCh = sd.channels
	}
	if sd.format != "" {
		streamFmt = sd.format
	}
	if dev.natives == 1 {
		if dev.Rate != 0 && dev.Rate != streamRate {
			say("the device runs at %d Hz; the sound server resamples to %d Hz", dev.Rate, streamRate)
		}
		if dev.Channels != 0 && dev.Channels != streamCh {
			say("the device has %d channels; the sound server maps them to %d", dev.Channels, streamCh)
		}
		if dev.Format != "" && dev.Format != streamFmt {
			say("the device uses %s samples; the sound server converts them to %s", dev.Format, streamFmt)
		}
	}
	return r
}
