// Package device opens real sound devices for tonetrace through miniaudio
// (github.com/gen2brain/malgo). It is the only package that imports the
// audio library; everything above it sees an [audio.Stream].
//
// Devices are chosen by name, the way the sound system names them
// (PulseAudio: "alsa_output.usb-…analog-stereo", "out", "cap.monitor";
// ALSA: "hw:1,0"), by description, or by index in [List]'s order. Settings
// should store names: indices change when a device is plugged in.
//
//	devs, _ := device.List("pulseaudio")
//	cfg := device.DefaultConfig()
//	cfg.Backend, cfg.Playback, cfg.Capture = "pulseaudio", "out", "cap.monitor"
//	s, err := device.Open(cfg)
//	…
//	defer s.Close()
//
// By default one duplex device serves output and input with one callback:
// capture frame k and output frame k share a clock and an origin, which
// gives the engine sample-exact latency. With Config.Separate the playback
// and the capture device run apart, each with its own callback — needed
// when they are two interfaces, whose clocks differ: expect drift between
// the two indices, which the engine's monitors report.
//
// miniaudio converts sample format, rate and channel count silently when the
// device does not take what was asked for; [Stream.Conversions] says in
// plain words what it (or the sound server) does. Its log goes to
// Config.Log, never to the terminal.
package device

import (
	"errors"
	"fmt"
	"io"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"
	"unsafe"

	"github.com/gen2brain/malgo"

	"tonetrace/audio"
)

// backendNull is miniaudio's null backend — silence in, output discarded,
// paced at the nominal rate. malgo v0.11.24's BackendNull constant is off by
// one: it selects miniaudio's "custom" backend, which fails with "No
// backend"; the real null backend is the next value.
const backendNull = malgo.BackendNull + 1

// Backend names accepted by Config.Backend and List.
const (
	BackendAuto       = ""
	BackendPulseAudio = "pulseaudio"
	BackendALSA       = "alsa"
	BackendJACK       = "jack"
	BackendCoreAudio  = "coreaudio"
	BackendWASAPI     = "wasapi"
	BackendNull       = "null"
)

// backendID returns miniaudio's number for a backend name.
func backendID(name string) (malgo.Backend, bool) {
	switch name {
	case "wasapi":
		return malgo.BackendWasapi, true
	case "dsound":
		return malgo.BackendDsound, true
	case "winmm":
		return malgo.BackendWinmm, true
	case "coreaudio":
		return malgo.BackendCoreaudio, true
	case "sndio":
		return malgo.BackendSndio, true
	case "audio4":
		return malgo.BackendAudio4, true
	case "oss":
		return malgo.BackendOss, true
	case "pulseaudio":
		return malgo.BackendPulseaudio, true
	case "alsa":
		return malgo.BackendAlsa, true
	case "jack":
		return malgo.BackendJack, true
	case "null":
		return backendNull, true
	}
	return 0, false
}

// Backends returns the backend names Config.Backend accepts.
func Backends() []string {
	return []string{"pulseaudio", "alsa", "jack", "coreaudio", "wasapi", "dsound", "winmm", "sndio", "audio4", "oss", "null"}
}

// autoBackends is the order tried when no backend is named: the platform's
// usual sound systems, never the null backend.
func autoBackends() []string {
	switch runtime.GOOS {
	case "linux":
		return []string{"pulseaudio", "alsa", "jack"}
	case "darwin", "ios":
		return []string{"coreaudio"}
	case "windows":
		return []string{"wasapi", "dsound", "winmm"}
	case "openbsd":
		return []string{"sndio", "audio4"}
	case "netbsd":
		return []string{"audio4", "oss"}
	default:
		return []string{"oss", "pulseaudio", "alsa", "jack"}
	}
}

// Info describes one device as the sound system reports it.
type Info struct {
	// Index is the position among the devices of the same Kind, from 0.
	Index int
	// Kind is "playback" or "capture".
	Kind string
	// Backend is the sound system, e.g. "pulseaudio".
	Backend string
	// Name is the sound system's own name for the device (PulseAudio's
	// sink or source name, ALSA's "hw:1,0"); the description when the
	// backend has no names. Store this in settings.
	Name string
	// Description is the human-readable name.
	Description string
	// Default reports the system's default device of its kind.
	Default bool
	// Channels, Rate and Format are the device's native channel count,
	// sample rate in hertz and sample format in plain words, from its first
	// native format; zero or "" when the backend does not say.
	Channels int
	Rate     int
	Format   string

	natives int // how many native formats the backend reported
}

func (i Info) String() string {
	return fmt.Sprintf("%s %s #%d %q (%s)", i.Backend, i.Kind, i.Index, i.Name, i.Description)
}

// formatName returns a sample format in plain words.
func formatName(f malgo.FormatType) string {
	switch f {
	case malgo.FormatU8:
		return "8-bit unsigned integer"
	case malgo.FormatS16:
		return "16-bit integer"
	case malgo.FormatS24:
		return "24-bit integer"
	case malgo.FormatS32:
		return "32-bit integer"
	case malgo.FormatF32:
		return "32-bit float"
	}
	return ""
}

// deviceName returns the name held in a device ID: the NUL-terminated
// text PulseAudio and ALSA keep there, or "" when the ID is not text.
func deviceName(id *malgo.DeviceID) string {
	n := 0
	for n < len(id) && id[n] != 0 {
		if id[n] < 0x20 || id[n] == 0x7f {
			return ""
		}
		n++
	}
	return string(id[:n])
}

// session is an initialized miniaudio context and its backend's name.
type session struct {
	mctx    *malgo.AllocatedContext
	backend string
}

// openContext initializes a miniaudio context for the named backend, or
// the first of autoBackends that works. server, if not empty, is the
// PulseAudio server address. Log lines go to book.
func openContext(backend, server string, book *logBook) (*session, error) {
	names := []string{backend}
	if backend == BackendAuto {
		names = autoBackends()
	}
	var errs []error
	var last error
	for _, name := range names {
		id, ok := backendID(name)
		if !ok {
			return nil, fmt.Errorf("device: unknown backend %q; use one of %s, or \"\" to pick automatically", name, strings.Join(Backends(), ", "))
		}
		var pin runtime.Pinner
		cfg := malgo.ContextConfig{}
		app := []byte("tonetrace\x00")
		pin.Pin(&app[0])
		cfg.Pulse.PApplicationName = &app[0]
		if server != "" {
			srv := append([]byte(server), 0)
			pin.Pin(&srv[0])
			cfg.Pulse.PServerName = &srv[0]
		}
		mctx, err := malgo.InitContext([]malgo.Backend{id}, cfg, book.add)
		pin.Unpin() // miniaudio copies both strings
		if err == nil {
			return &session{mctx: mctx, backend: name}, nil
		}
		last = err
		errs = append(errs, fmt.Errorf("%s: %w", name, err))
	}
	if backend == BackendAuto {
		return nil, fmt.Errorf("device: no sound system answered (%w); name one with the backend setting, or check that the sound server runs", errors.Join(errs...))
	}
	return nil, fmt.Errorf("device: cannot use the %s backend (%w)%s; start its sound server or choose another backend", backend, last, book.lastError())
}

func (c *session) close() {
	_ = c.mctx.Uninit()
	c.mctx.Free()
}

// devices lists the devices of one kind with their native formats.
func (c *session) devices(kind malgo.DeviceType) ([]Info, []malgo.DeviceInfo, error) {
	raw, err := c.mctx.Devices(kind)
	if err != nil {
		return nil, nil, err
	}
	kindName := "playback"
	if kind == malgo.Capture {
		kindName = "capture"
	}
	infos := make([]Info, len(raw))
	for i := range raw {
		d := &raw[i]
		info := Info{Index: i, Kind: kindName, Backend: c.backend, Name: deviceName(&d.ID),
			Description: d.Name(), Default: d.IsDefault != 0}
		if info.Name == "" {
			info.Name = info.Description
		}
		formats := d.Formats
		if full, err := c.mctx.DeviceInfo(kind, d.ID, malgo.Shared); err == nil && len(full.Formats) > 0 {
			formats = full.Formats
			info.Default = info.Default || full.IsDefault != 0
		}
		info.natives = len(formats)
		if len(formats) > 0 {
			info.Channels = int(formats[0].Channels)
			info.Rate = int(formats[0].SampleRate)
			info.Format = formatName(formats[0].Format)
		}
		infos[i] = info
	}
	return infos, raw, nil
}

// List returns the playback devices, then the capture devices, of the named
// backend ("" picks the first sound system that answers). What the sound
// libraries print on standard error while probing (ALSA's plugins, a JACK
// client looking for its server) is kept off the terminal.
func List(backend string) (infos []Info, err error) {
	captureStderr(func() { infos, err = list(backend) })
	return infos, err
}

func list(backend string) ([]Info, error) {
	book := newLogBook(nil)
	c, err := openContext(backend, "", book)
	if err != nil {
		return nil, err
	}
	defer c.close()
	play, _, err := c.devices(malgo.Playback)
	if err != nil {
		return nil, fmt.Errorf("device: listing %s playback devices: %w", c.backend, err)
	}
	capt, _, err := c.devices(malgo.Capture)
	if err != nil {
		return nil, fmt.Errorf("device: listing %s capture devices: %w", c.backend, err)
	}
	return append(play, capt...), nil
}

// find picks the device named want: by Name, then by Description, then by
// index when want is a number. "" is the system default (ok, nil).
func find(infos []Info, want, kind, backend string) (int, error) {
	if want == "" {
		return -1, nil
	}
	for i, d := range infos {
		if d.Name == want {
			return i, nil
		}
	}
	for i, d := range infos {
		if d.Description == want {
			return i, nil
		}
	}
	if n, err := strconv.Atoi(want); err == nil && n >= 0 && n < len(infos) {
		return n, nil
	}
	names := make([]string, len(infos))
	for i, d := range infos {
		names[i] = strconv.Quote(d.Name)
	}
	return 0, fmt.Errorf("device: no %s %s device named %q; available: %s (by name, description or index)", backend, kind, want, strings.Join(names, ", "))
}

// Config chooses and sets up the devices. Start from [DefaultConfig]; zero
// numeric fields take the defaults stated.
type Config struct {
	// Backend is the sound system: "pulseaudio", "alsa", "jack", "null"
	// (no hardware: silence in, output discarded) and the others of
	// [Backends]; "" tries the platform's usual ones in turn.
	Backend string
	// Server is the PulseAudio server address ("unix:/path/native",
	// "tcp:host"); "" is the default server.
	Server string
	// Device names the device for both directions; Playback and Capture,
	// when set, override it. A name is the sound system's name, the
	// description or an index of [List]; "" is the system default.
	Device, Playback, Capture string
	// Separate opens playback and capture as two devices with two callbacks
	// and two clocks (two interfaces). Default false: one duplex device.
	Separate bool
	// Rate is the sample rate in hertz; 8000…384000. Default 48000.
	Rate int
	// PeriodMS is the callback period in milliseconds; 5…500. Default
	// 20: shorter periods drop samples on a busy machine.
	PeriodMS int
	// Periods is the number of periods in the device buffer; 0 leaves
	// miniaudio's default (3); at most 16.
	Periods int
	// InChannels and OutChannels are the channel counts to open; 1…32.
	// Default 2 each. Ask for the device's native count: miniaudio
	// down-mixing averages reference and response together.
	InChannels, OutChannels int
	// Routing chooses the stimulus outputs and the response and reference
	// inputs (zero value: stimulus on all outputs, response input 1,
	// reference input 2).
	Routing audio.Routing
	// Output sets level, cap, fades and mute (zero value:
	// audio.DefaultOutputConfig, −20 dBFS capped at −6 dBFS).
	Output audio.OutputConfig
	// CaptureMS is how far, in milliseconds, the engine may fall behind
	// before captured frames are dropped. Default 2000.
	CaptureMS int
	// PlayoutMS is how far ahead, in milliseconds, the engine may queue
	// the stimulus. Default 500.
	PlayoutMS int
	// StallTimeout is how long Read and Write wait for any frame before
	// they report audio.ErrDeviceLost. Default the larger of 1 s and 10
	// periods.
	StallTimeout time.Duration
	// Log receives miniaudio's log, one line per Write, from miniaudio's
	// threads; it must not block. nil discards it (the last lines are
	// kept in [Stream.Log] either way).
	Log io.Writer
}

// DefaultConfig returns the defaults: automatic backend, default devices,
// duplex, 48 kHz, 20 ms periods, stereo in and out, default routing and
// output stage.
func DefaultConfig() Config {
	return Config{Rate: 48000, PeriodMS: 20, InChannels: 2, OutChannels: 2,
		Output: audio.DefaultOutputConfig(), CaptureMS: 2000, PlayoutMS: 500}
}

// withDefaults fills zero fields and checks ranges.
func (c Config) withDefaults() (Config, error) {
	d := DefaultConfig()
	if c.Rate == 0 {
		c.Rate = d.Rate
	}
	if c.PeriodMS == 0 {
		c.PeriodMS = d.PeriodMS
	}
	if c.InChannels == 0 {
		c.InChannels = d.InChannels
	}
	if c.OutChannels == 0 {
		c.OutChannels = d.OutChannels
	}
	if c.CaptureMS == 0 {
		c.CaptureMS = d.CaptureMS
	}
	if c.PlayoutMS == 0 {
		c.PlayoutMS = d.PlayoutMS
	}
	switch {
	case c.Rate < 8000 || c.Rate > 384000:
		return c, fmt.Errorf("device: sample rate %d Hz is out of range; use 8000…384000 Hz (default 48000)", c.Rate)
	case c.PeriodMS < 5 || c.PeriodMS > 500:
		return c, fmt.Errorf("device: period %d ms is out of range; use 5…500 ms (default 20)", c.PeriodMS)
	case c.Periods < 0 || c.Periods > 16:
		return c, fmt.Errorf("device: %d periods is out of range; use 0 (miniaudio's default) to 16", c.Periods)
	case c.CaptureMS < 2*c.PeriodMS || c.CaptureMS > 60000:
		return c, fmt.Errorf("device: capture buffer of %d ms is out of range; use %d…60000 ms (default 2000)", c.CaptureMS, 2*c.PeriodMS)
	case c.PlayoutMS < 4*c.PeriodMS || c.PlayoutMS > 60000:
		return c, fmt.Errorf("device: playout buffer of %d ms is out of range; use %d…60000 ms (default 500)", c.PlayoutMS, 4*c.PeriodMS)
	}
	if c.Playback == "" {
		c.Playback = c.Device
	}
	if c.Capture == "" {
		c.Capture = c.Device
	}
	return c, nil
}

// Stream is an open device stream. It implements [audio.Stream]; its
// methods come from the embedded [audio.Core], plus Close and the reports
// below.
type Stream struct {
	*audio.Core

	ctx      *session
	devs     []*malgo.Device // duplex: one; separate: capture, playback
	pin      runtime.Pinner  // device IDs handed to miniaudio
	book     *logBook
	playback Info
	capture  Info
	setup    setup
	duplex   bool
	period   time.Duration
	closing  atomic.Bool

	closeOnce sync.Once
	closeErr  error
}

var _ audio.Stream = (*Stream)(nil)

// Open opens and starts the devices cfg names. The output fades in from
// silence to cfg.Output.LevelDBFS. Close the stream when done.
func Open(cfg Config) (*Stream, error) {
	cfg, err := cfg.withDefaults()
	if err != nil {
		return nil, err
	}
	periodFrames := cfg.Rate * cfg.PeriodMS / 1000
	core, err := audio.NewCore(audio.CoreConfig{
		Rate: cfg.Rate, InChannels: cfg.InChannels, OutChannels: cfg.OutChannels,
		PeriodFrames:  periodFrames,
		CaptureFrames: cfg.Rate * cfg.CaptureMS / 1000,
		PlayoutFrames: cfg.Rate * cfg.PlayoutMS / 1000,
		Routing:       cfg.Routing, Output: cfg.Output, StallTimeout: cfg.StallTimeout,
	})
	if err != nil {
		return nil, err
	}
	s := &Stream{Core: core, book: newLogBook(cfg.Log), period: time.Duration(cfg.PeriodMS) * time.Millisecond}
	// What the sound libraries print while the devices open goes to the
	// stream's log, not the terminal.
	chatter := captureStderr(func() {
		s.ctx, err = openContext(cfg.Backend, cfg.Server, s.book)
		if err == nil {
			if err = s.open(cfg, periodFrames); err != nil {
				s.release()
			}
		}
	})
	for _, l := range chatter {
		s.book.add("stderr: " + l)
	}
	if err != nil {
		return nil, err
	}
	return s, nil
}

// open resolves the devices, initializes and starts them.
func (s *Stream) open(cfg Config, periodFrames int) error {
	be := s.ctx.backend
	playInfos, playRaw, err := s.ctx.devices(malgo.Playback)
	if err != nil {
		return fmt.Errorf("device: listing %s playback devices: %w", be, err)
	}
	capInfos, capRaw, err := s.ctx.devices(malgo.Capture)
	if err != nil {
		return fmt.Errorf("device: listing %s capture devices: %w", be, err)
	}
	pi, err := find(playInfos, cfg.Playback, "playback", be)
	if err != nil {
		return err
	}
	ci, err := find(capInfos, cfg.Capture, "capture", be)
	if err != nil {
		return err
	}
	s.playback = Info{Kind: "playback", Backend: be, Name: "(default)", Index: -1}
	s.capture = Info{Kind: "capture", Backend: be, Name: "(default)", Index: -1}
	var playID, capID unsafe.Pointer
	if pi >= 0 {
		s.playback = playInfos[pi]
		playID = s.pinID(playRaw[pi].ID)
	}
	if ci >= 0 {
		s.capture = capInfos[ci]
		capID = s.pinID(capRaw[ci].ID)
	}

	base := malgo.DefaultDeviceConfig(malgo.Duplex)
	base.SampleRate = uint32(cfg.Rate)
	base.PeriodSizeInFrames = uint32(periodFrames)
	base.Periods = uint32(cfg.Periods)
	base.Playback = malgo.SubConfig{DeviceID: playID, Format: malgo.FormatF32, Channels: uint32(cfg.OutChannels)}
	base.Capture = malgo.SubConfig{DeviceID: capID, Format: malgo.FormatF32, Channels: uint32(cfg.InChannels)}
	base.Pulse.StreamNamePlayback = "tonetrace stimulus"
	base.Pulse.StreamNameCapture = "tonetrace capture"
	stop := func() {
		if !s.closing.Load() {
			s.Core.SetLost()
		}
	}
	core := s.Core
	what := fmt.Sprintf("%s duplex device (playback %q, capture %q)", be, s.playback.Name, s.capture.Name)
	var kinds []malgo.DeviceType
	var procs []malgo.DataProc
	if cfg.Separate {
		what = fmt.Sprintf("%s capture device %q and playback device %q", be, s.capture.Name, s.playback.Name)
		kinds = []malgo.DeviceType{malgo.Capture, malgo.Playback}
		procs = []malgo.DataProc{
			func(_, in []byte, frames uint32) { processBytes(core, nil, in, frames) },
			func(out, _ []byte, frames uint32) { processBytes(core, out, nil, frames) },
		}
	} else {
		s.duplex = true
		kinds = []malgo.DeviceType{malgo.Duplex}
		procs = []malgo.DataProc{func(out, in []byte, frames uint32) { processBytes(core, out, in, frames) }}
	}
	for i, kind := range kinds {
		dc := base
		dc.DeviceType = kind
		dev, err := malgo.InitDevice(s.ctx.mctx.Context, dc, malgo.DeviceCallbacks{Data: procs[i], Stop: stop})
		if err != nil {
			return fmt.Errorf("device: cannot open the %s: %w%s", what, err, s.book.lastError())
		}
		s.devs = append(s.devs, dev)
		if err := checkClientFormat(dev, kind, cfg); err != nil {
			return err
		}
	}
	s.setup = parseSetup(s.book.lines())
	s.Core.Start()
	for _, dev := range s.devs {
		if err := dev.Start(); err != nil {
			return fmt.Errorf("device: cannot start the %s: %w%s", what, err, s.book.lastError())
		}
	}
	return nil
}

// pinID copies a device ID to pinned memory that miniaudio may read until
// Close.
func (s *Stream) pinID(id malgo.DeviceID) unsafe.Pointer {
	p := new(malgo.DeviceID)
	*p = id
	s.pin.Pin(p)
	return unsafe.Pointer(p)
}

// checkClientFormat verifies miniaudio hands the callback what it was asked
// for: 32-bit float, the channel counts and the rate.
func checkClientFormat(dev *malgo.Device, kind malgo.DeviceType, cfg Config) error {
	if kind != malgo.Capture {
		if dev.PlaybackFormat() != malgo.FormatF32 || int(dev.PlaybackChannels()) != cfg.OutChannels {
			return fmt.Errorf("device: playback opened as %s ×%d instead of 32-bit float ×%d", formatName(dev.PlaybackFormat()), dev.PlaybackChannels(), cfg.OutChannels)
		}
	}
	if kind != malgo.Playback {
		if dev.CaptureFormat() != malgo.FormatF32 || int(dev.CaptureChannels()) != cfg.InChannels {
			return fmt.Errorf("device: capture opened as %s ×%d instead of 32-bit float ×%d", formatName(dev.CaptureFormat()), dev.CaptureChannels(), cfg.InChannels)
		}
	}
	if int(dev.SampleRate()) != cfg.Rate {
		return fmt.Errorf("device: opened at %d Hz instead of %d Hz", dev.SampleRate(), cfg.Rate)
	}
	return nil
}

// processBytes is the body of every device callback: it views miniaudio's
// byte buffers as 32-bit float samples (the format Open asks for) and hands
// them to the core — duplex when both are present. It never allocates,
// locks or blocks.
func processBytes(c *audio.Core, out, in []byte, frames uint32) {
	n := int(frames)
	switch {
	case len(out) > 0 && len(in) > 0:
		c.ProcessDuplex(floats(out), floats(in), n)
	case len(in) > 0:
		c.ProcessCapture(floats(in), n)
	case len(out) > 0:
		c.ProcessPlayback(floats(out), n)
	}
}

// floats views b as float32 samples without copying. miniaudio's buffers
// are aligned for their sample format.
func floats(b []byte) []float32 {
	return unsafe.Slice((*float32)(unsafe.Pointer(unsafe.SliceData(b))), len(b)/4)
}

// Backend returns the sound system in use, e.g. "pulseaudio".
func (s *Stream) Backend() string { return s.ctx.backend }

// Duplex reports whether one device serves both directions (one clock).
func (s *Stream) Duplex() bool { return s.duplex }

// Playback returns the playback device; Name is "(default)" and Index −1
// for the system default.
func (s *Stream) Playback() Info { return s.playback }

// Capture returns the capture device, like Playback.
func (s *Stream) Capture() Info { return s.capture }

// Conversions returns, in plain words, every conversion between the
// program and the devices — format, rate or channel count changed by
// miniaudio or the sound server — one sentence each; none when the path is
// clean.
func (s *Stream) Conversions() []string {
	return conversions(s.setup, s.playback, s.capture, s.Core)
}

// DeviceBuffers returns the device-side buffer miniaudio got, in frames:
// period size times number of periods, for playback and capture (0 when
// not reported).
func (s *Stream) DeviceBuffers() (playPeriod, playPeriods, capPeriod, capPeriods int) {
	return s.setup.play.period, s.setup.play.periods, s.setup.capt.period, s.setup.capt.periods
}

// Log returns the last lines miniaudio logged for this stream.
func (s *Stream) Log() []string { return s.book.lines() }

// Close fades the output to silence (unless the device is lost), stops the
// devices, releases them and the miniaudio context, in that order. Read and
// Write then return audio.ErrClosed. Close is safe to call more than once
// and from any goroutine but the device callback; later calls return the
// first result.
func (s *Stream) Close() error {
	s.closeOnce.Do(func() {
		if !s.Core.Lost() {
			s.Core.FadeOut(s.Output().Fade() + 4*s.period + 250*time.Millisecond)
		}
		s.closeErr = s.release()
	})
	return s.closeErr
}

// release stops and frees whatever open got to.
func (s *Stream) release() error {
	s.closing.Store(true)
	var errs []error
	lost := s.Core.Lost()
	for _, dev := range s.devs {
		if dev.IsStarted() {
			if err := dev.Stop(); err != nil && !lost {
				errs = append(errs, fmt.Errorf("device: stop: %w", err))
			}
		}
	}
	for _, dev := range s.devs {
		dev.Uninit()
	}
	s.devs = s.devs[:0:0]
	if s.ctx != nil {
		s.ctx.close()
	}
	s.pin.Unpin()
	s.Core.Shut()
	return errors.Join(errs...)
}
