package config

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Backend names accepted by audio.backend.
const (
	BackendAuto       = "auto"       // the first backend that opens
	BackendPulseAudio = "pulseaudio" // PulseAudio or PipeWire's PulseAudio server
	BackendALSA       = "alsa"       // ALSA directly
	BackendJACK       = "jack"       // JACK (or PipeWire's JACK server)
	BackendNull       = "null"       // no device: silence in, output discarded
)

// Sweep methods accepted by sweep.method.
const (
	MethodSteps     = "steps"     // stepped sine, one frequency at a time
	MethodMultitone = "multitone" // periodic multitone, the whole band at once
)

// Origin of a value that nothing has set.
const OriginDefault = "default"

// Settings are tonetrace's settings: the defaults, overlaid with the
// settings file, overlaid with command-line flags. Every field is one key
// of the settings file, named in its doc ("audio.rate"); the same name is
// used by [Settings.Set], [Settings.Origin] and in error messages.
//
// Settings remember where each value came from (see [Settings.Origin]).
// Assigning a field directly keeps the previous origin; use
// [Settings.Set] to record one.
//
// The zero value has every field zero and is not valid; start from
// [Defaults] or [Load].
type Settings struct {
	Audio   Audio   // the [audio] table: interface, rate, channels
	Output  Output  // the [output] table: stimulus level and protections
	Sweep   Sweep   // the [sweep] table: frequencies and method
	Analyze Analyze // the [analyze] table: estimates from recordings
	Fixture Fixture // the [fixture] table: source and load impedances

	// file is the settings file read by Load or Parse, "" if none.
	file string
	// origins maps a key to where its value came from; a missing key came
	// from the defaults.
	origins map[string]string
}

// Audio are the settings of the [audio] table: the interface and its
// channels.
type Audio struct {
	// Rate is audio.rate, the sample rate in Hz. Default 48000; 8000 to
	// 384000, and a whole number. Text such as "96k" or "44.1 kHz" is
	// accepted.
	Rate int
	// PeriodMS is audio.period_ms, the device period (the block the
	// device hands over at a time) in milliseconds. Default 20; 5 to 500.
	PeriodMS float64
	// Backend is audio.backend: "auto" (default), "pulseaudio", "alsa",
	// "jack" or "null" (see the Backend constants).
	Backend string
	// Device is audio.device, the name of the device for both playback and
	// capture; "" (default) means the system's default device.
	Device string
	// Playback is audio.playback, the playback device name when it differs
	// from Device; "" (default) means Device.
	Playback string
	// Capture is audio.capture, the capture device name when it differs
	// from Device; "" (default) means Device.
	Capture string
	// RefInput is audio.ref_input, the 1-based input channel that receives
	// the looped-back stimulus (the reference). Default 2; 1 to 64; must
	// differ from DUTInput.
	RefInput int
	// StimulusOutputs is audio.stimulus_outputs, the 1-based output
	// channels that carry the stimulus, comma-separated ("1,2"); ""
	// (default) means every output. Parse it with [ParseChannels].
	StimulusOutputs string
	// DUTInput is audio.dut_input, the 1-based input channel behind the
	// circuit (the response). Default 1; 1 to 64; must differ from
	// RefInput.
	DUTInput int
}

// Output are the settings of the [output] table: the stimulus level and
// its protections.
type Output struct {
	// LevelDBFS is output.level_dbfs, the stimulus level in dBFS (peak of
	// the stimulus relative to digital full scale). Default −20; −120 to
	// CapDBFS.
	LevelDBFS float64
	// CapDBFS is output.cap_dbfs, the hard cap on the output level in
	// dBFS; no command or key may raise the level above it. Default −6;
	// −120 to 0.
	CapDBFS float64
	// FadeMS is output.fade_ms, the fade-in and fade-out time at start,
	// stop and mute, in milliseconds. Default 20; 0 to 2000.
	FadeMS float64
}

// Sweep are the settings of the [sweep] table: which frequencies to
// measure and how.
type Sweep struct {
	// FromHz is sweep.from_hz, the lowest frequency in Hz. Default 20;
	// 1 to 192000, and below ToHz.
	FromHz float64
	// ToHz is sweep.to_hz, the highest frequency in Hz. Default 20000;
	// above FromHz and at most the Nyquist frequency Audio.Rate/2.
	ToHz float64
	// PointsPerDecade is sweep.points_per_decade, the density of the
	// starting log-spaced grid. Default 10; 1 to 200.
	PointsPerDecade int
	// AdaptiveDB is sweep.adaptive_db: 0 (default) measures the grid as
	// is; otherwise the tolerance in dB of the adaptive plan, which adds
	// points where the curve departs from a straight line between its
	// neighbours by more than this, 0.01 to 10. "off" means 0.
	AdaptiveDB float64
	// Method is sweep.method: "steps" (default; stepped sine) or
	// "multitone" (periodic multitone); see the Method constants.
	Method string
}

// Analyze are the settings of the [analyze] table: the estimate from a
// recording or any broadband signal.
type Analyze struct {
	// Segment is analyze.segment, the length in samples of one averaged
	// segment. Default 8192; 64 to 1048576. Powers of two are fastest.
	Segment int
	// PointsPerDecade is analyze.points_per_decade: 0 keeps every
	// frequency bin; otherwise the result is reduced to this many points
	// per decade, 1 to 200. Default 0.
	PointsPerDecade int
}

// Fixture are the settings of the [fixture] table: the impedances around
// the circuit, used when predicting its response.
type Fixture struct {
	// SourceOhms is fixture.source_ohms, the output impedance of the
	// driving output in Ω. Default 100 (a typical line output); 0 (an
	// ideal source) to 1 MΩ.
	SourceOhms float64
	// LoadOhms is fixture.load_ohms, the input resistance of the measuring
	// input in Ω. Default 20 kΩ (line inputs are 10–50 kΩ, common
	// practice); 1 Ω to 1 TΩ.
	LoadOhms float64
	// LoadFarads is fixture.load_farads, the capacitance across the
	// measuring input (input and cable) in F. Default 100 pF; 0 to 1 µF.
	LoadFarads float64
}

// Defaults returns the default settings, every origin "default".
func Defaults() *Settings {
	return &Settings{
		Audio: Audio{
			Rate:     48000,
			PeriodMS: 20,
			Backend:  BackendAuto,
			RefInput: 2,
			DUTInput: 1,
		},
		Output: Output{
			LevelDBFS: -20,
			CapDBFS:   -6,
			FadeMS:    20,
		},
		Sweep: Sweep{
			FromHz:          20,
			ToHz:            20000,
			PointsPerDecade: 10,
			AdaptiveDB:      0,
			Method:          MethodSteps,
		},
		Analyze: Analyze{
			Segment:         8192,
			PointsPerDecade: 0,
		},
		Fixture: Fixture{
			SourceOhms: 100,
			LoadOhms:   20e3,
			LoadFarads: 100e-12,
		},
	}
}

// kind says how a setting's value is written and stored.
type kind int

const (
	kindFrequency   kind = iota // float64 Hz; ParseFrequency
	kindRate                    // int Hz; ParseFrequency, whole number
	kindLevel                   // float64 dBFS; ParseLevel
	kindTolerance               // float64 dB; number, "0.5 dB" or "off"
	kindDuration                // float64 ms; number or "20 ms"
	kindCount                   // int; decimal whole number
	kindName                    // string, verbatim
	kindChoice                  // string, one of choices
	kindResistance              // float64 Ω; ParseResistance
	kindCapacitance             // float64 F; ParseCapacitance
)

// spec describes one setting: its key, how it is written, its limits and
// where it lives in Settings.
type spec struct {
	key  string // "table.name"
	kind kind
	desc string // what the setting is, one sentence
	unit string // unit for messages ("Hz"), "" for none
	// lo and hi bound the value (inclusive); offZero also allows 0
	// meaning "off". Unused for kindName and kindChoice.
	lo, hi  float64
	offZero bool
	choices []string
	// Exactly one of f, n, str is set.
	f   func(*Settings) *float64
	n   func(*Settings) *int
	str func(*Settings) *string
}

// specs lists every setting in file order. It is never modified.
var specs = []spec{
	{key: "audio.rate", kind: kindRate, unit: "Hz", lo: 8000, hi: 384000,
		desc: "Sample rate of the interface, in Hz; a whole number. Text such as \"96k\" works.",
		n:    func(s *Settings) *int { return &s.Audio.Rate }},
	{key: "audio.period_ms", kind: kindDuration, unit: "ms", lo: 5, hi: 500,
		desc: "Device period (the block the device hands over at a time), in ms.",
		f:    func(s *Settings) *float64 { return &s.Audio.PeriodMS }},
	{key: "audio.backend", kind: kindChoice,
		choices: []string{BackendAuto, BackendPulseAudio, BackendALSA, BackendJACK, BackendNull},
		desc:    "Audio system to use.",
		str:     func(s *Settings) *string { return &s.Audio.Backend }},
	{key: "audio.device", kind: kindName,
		desc: "Device for playback and capture; empty means the system default.",
		str:  func(s *Settings) *string { return &s.Audio.Device }},
	{key: "audio.playback", kind: kindName,
		desc: "Playback device when it differs from device; empty means device.",
		str:  func(s *Settings) *string { return &s.Audio.Playback }},
	{key: "audio.capture", kind: kindName,
		desc: "Capture device when it differs from device; empty means device.",
		str:  func(s *Settings) *string { return &s.Audio.Capture }},
	{key: "audio.stimulus_outputs", kind: kindName,
		desc: "Output channels (1-based, comma-separated, e.g. \"1,2\") that carry the stimulus; empty means every output.",
		str:  func(s *Settings) *string { return &s.Audio.StimulusOutputs }},
	{key: "audio.ref_input", kind: kindCount, lo: 1, hi: 64,
		desc: "Input channel (1-based) that receives the looped-back stimulus, the reference.",
		n:    func(s *Settings) *int { return &s.Audio.RefInput }},
	{key: "audio.dut_input", kind: kindCount, lo: 1, hi: 64,
		desc: "Input channel (1-based) behind the circuit, the response; must differ from ref_input.",
		n:    func(s *Settings) *int { return &s.Audio.DUTInput }},

	{key: "output.level_dbfs", kind: kindLevel, unit: "dBFS", lo: -120, hi: 0,
		desc: "Stimulus level, in dBFS; at most cap_dbfs.",
		f:    func(s *Settings) *float64 { return &s.Output.LevelDBFS }},
	{key: "output.cap_dbfs", kind: kindLevel, unit: "dBFS", lo: -120, hi: 0,
		desc: "Hard cap on the output level, in dBFS; nothing raises the level above it.",
		f:    func(s *Settings) *float64 { return &s.Output.CapDBFS }},
	{key: "output.fade_ms", kind: kindDuration, unit: "ms", lo: 0, hi: 2000,
		desc: "Fade in and out at start, stop and mute, in ms.",
		f:    func(s *Settings) *float64 { return &s.Output.FadeMS }},

	{key: "sweep.from_hz", kind: kindFrequency, unit: "Hz", lo: 1, hi: 192000,
		desc: "Lowest frequency, in Hz; below to_hz.",
		f:    func(s *Settings) *float64 { return &s.Sweep.FromHz }},
	{key: "sweep.to_hz", kind: kindFrequency, unit: "Hz", lo: 1, hi: 192000,
		desc: "Highest frequency, in Hz; above from_hz and at most half of audio.rate (Nyquist).",
		f:    func(s *Settings) *float64 { return &s.Sweep.ToHz }},
	{key: "sweep.points_per_decade", kind: kindCount, lo: 1, hi: 200,
		desc: "Density of the starting log-spaced frequency grid, in points per decade.",
		n:    func(s *Settings) *int { return &s.Sweep.PointsPerDecade }},
	{key: "sweep.adaptive_db", kind: kindTolerance, unit: "dB", lo: 0.01, hi: 10, offZero: true,
		desc: "Adaptive plan: add points where the curve departs from a straight line by more than this many dB; 0 is off.",
		f:    func(s *Settings) *float64 { return &s.Sweep.AdaptiveDB }},
	{key: "sweep.method", kind: kindChoice,
		choices: []string{MethodSteps, MethodMultitone},
		desc:    "Stimulus: stepped sine (best SNR) or periodic multitone (whole band at once, for live views).",
		str:     func(s *Settings) *string { return &s.Sweep.Method }},

	{key: "analyze.segment", kind: kindCount, lo: 64, hi: 1 << 20,
		desc: "Length of one averaged segment, in samples; powers of two are fastest.",
		n:    func(s *Settings) *int { return &s.Analyze.Segment }},
	{key: "analyze.points_per_decade", kind: kindCount, lo: 1, hi: 200, offZero: true,
		desc: "Reduce the result to this many points per decade; 0 keeps every frequency bin.",
		n:    func(s *Settings) *int { return &s.Analyze.PointsPerDecade }},

	{key: "fixture.source_ohms", kind: kindResistance, unit: "Ω", lo: 0, hi: 1e6,
		desc: "Output impedance of the driving output, in Ω; 0 is an ideal source.",
		f:    func(s *Settings) *float64 { return &s.Fixture.SourceOhms }},
	{key: "fixture.load_ohms", kind: kindResistance, unit: "Ω", lo: 1, hi: 1e12,
		desc: "Input resistance of the measuring input, in Ω (line inputs are 10k to 50k).",
		f:    func(s *Settings) *float64 { return &s.Fixture.LoadOhms }},
	{key: "fixture.load_farads", kind: kindCapacitance, unit: "F", lo: 0, hi: 1e-6,
		desc: "Capacitance across the measuring input (input and cable), in F.",
		f:    func(s *Settings) *float64 { return &s.Fixture.LoadFarads }},
}

// tables lists the table names in file order.
var tables = []string{"audio", "output", "sweep", "analyze", "fixture"}

// lookup returns the spec of key.
func lookup(key string) (*spec, bool) {
	for i := range specs {
		if specs[i].key == key {
			return &specs[i], true
		}
	}
	return nil, false
}

// table returns the table part of a key.
func (sp *spec) table() string { t, _, _ := strings.Cut(sp.key, "."); return t }

// name returns the name part of a key.
func (sp *spec) name() string { _, n, _ := strings.Cut(sp.key, "."); return n }

// Keys returns every setting's key ("audio.rate", …) in file order.
func Keys() []string {
	keys := make([]string, len(specs))
	for i := range specs {
		keys[i] = specs[i].key
	}
	return keys
}

// Doc returns a one-line description of key with its unit, default and
// limits, suitable as a flag's usage text; "" for an unknown key.
func Doc(key string) string {
	sp, ok := lookup(key)
	if !ok {
		return ""
	}
	return sp.desc + " " + sp.limits(Defaults())
}

// limits describes the default and the allowed values, e.g.
// "Default 48000; 8000 to 384000 Hz.".
func (sp *spec) limits(def *Settings) string {
	switch sp.kind {
	case kindName:
		return fmt.Sprintf("Default %s.", sp.text(def))
	case kindChoice:
		return fmt.Sprintf("Default %s; one of %s.", sp.text(def), strings.Join(sp.choices, ", "))
	}
	lo, hi := sp.bounds()
	r := fmt.Sprintf("%s to %s", lo, hi)
	if sp.offZero {
		r = "0 (off) or " + r
	}
	return fmt.Sprintf("Default %s; %s.", sp.show(sp.number(def), true), r)
}

// bounds returns lo and hi as text, the unit written once after hi where
// it has no prefixes ("8000", "384000 Hz") and after each where it does
// ("0 Ω", "1 MΩ").
func (sp *spec) bounds() (lo, hi string) {
	switch sp.kind {
	case kindResistance, kindCapacitance:
		return sp.show(sp.lo, true), sp.show(sp.hi, true)
	}
	return sp.show(sp.lo, false), sp.show(sp.hi, true)
}

// show writes a number of sp's kind for people: resistances and
// capacitances with an SI prefix, other numbers plainly, with the unit
// when withUnit is set.
func (sp *spec) show(v float64, withUnit bool) string {
	switch sp.kind {
	case kindResistance:
		return FormatResistance(v)
	case kindCapacitance:
		return FormatCapacitance(v)
	}
	t := strconv.FormatFloat(v, 'f', -1, 64)
	if withUnit && sp.unit != "" {
		t += " " + sp.unit
	}
	return t
}

// num writes a float in the shortest form that parses back exactly, and
// that is also a TOML number: plain decimals ("2000000", "0.47") from 1e-4
// to 1e15, exponent form ("1e-10") outside, and TOML's nan and inf.
func num(v float64) string {
	switch {
	case math.IsNaN(v):
		return "nan"
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	case v == 0 && math.Signbit(v):
		return "-0.0" // TOML's negative zero; "-0" would read as integer 0
	}
	if a := math.Abs(v); a == 0 || (a >= 1e-4 && a < 1e15) {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// number returns a numeric setting's value as a float64.
func (sp *spec) number(s *Settings) float64 {
	if sp.n != nil {
		return float64(*sp.n(s))
	}
	return *sp.f(s)
}

// text returns the value of sp in s as TOML: numbers bare, strings quoted.
func (sp *spec) text(s *Settings) string {
	switch {
	case sp.str != nil:
		return quoteTOML(*sp.str(s))
	case sp.n != nil:
		return strconv.Itoa(*sp.n(s))
	}
	return num(*sp.f(s))
}

// Origin returns where the value of key came from: "default", a file
// position "path:line", or whatever origin [Settings.Set] was given (a
// flag such as "--to"). It returns "" for an unknown key.
func (s *Settings) Origin(key string) string {
	if _, ok := lookup(key); !ok {
		return ""
	}
	if o, ok := s.origins[key]; ok {
		return o
	}
	return OriginDefault
}

// Clone returns a deep copy of s, origins included.
func (s *Settings) Clone() *Settings {
	c := *s
	if s.origins != nil {
		c.origins = make(map[string]string, len(s.origins))
		for k, v := range s.origins {
			c.origins[k] = v
		}
	}
	return &c
}

// File returns the settings file that was read, or "" when none was.
func (s *Settings) File() string { return s.file }

// Get returns the value of key as it would be written in the settings
// file: numbers in the setting's base unit (Hz, ms, dBFS, dB, Ω, F),
// strings quoted.
func (s *Settings) Get(key string) (string, error) {
	sp, ok := lookup(key)
	if !ok {
		return "", unknownKey(key, "")
	}
	return sp.text(s), nil
}

// Set parses value for key and records origin as where it came from.
// Keys are dotted: "sweep.to_hz". Values take the setting's units:
// "20k" or "20 kHz" for frequencies, "-20 dBFS" for levels, "20 ms" for
// durations, "4k7" for resistances, "100p" for capacitances (see
// [ParseFrequency] and friends); names are taken verbatim.
//
// origin should say where the value came from, e.g. "--to" for a flag;
// "" is recorded as "Set". Set checks the form of the value only; range
// and cross-setting checks happen in [Settings.Validate], after every
// source has been applied. Errors are *[SettingError].
func (s *Settings) Set(key, value, origin string) error {
	if origin == "" {
		origin = "Set"
	}
	sp, ok := lookup(key)
	if !ok {
		return unknownKey(key, origin)
	}
	if err := sp.setText(s, value); err != nil {
		return &SettingError{Key: key, Value: strconv.Quote(value), Origin: origin, Allowed: "expected " + sp.accepted(), Err: err}
	}
	s.setOrigin(key, origin)
	return nil
}

func (s *Settings) setOrigin(key, origin string) {
	if s.origins == nil {
		s.origins = make(map[string]string)
	}
	s.origins[key] = origin
}

// unknownKey reports a key that is not a setting.
func unknownKey(key, origin string) error {
	e := &SettingError{Key: key, Origin: origin, Allowed: "no such setting; known settings: " + strings.Join(Keys(), ", ")}
	if m := closest(key, Keys()); m != "" {
		e.Hint = fmt.Sprintf("did you mean %s?", m)
	}
	return e
}

// accepted describes the accepted forms of sp's values.
func (sp *spec) accepted() string {
	switch sp.kind {
	case kindFrequency:
		return qFrequency.accepted
	case kindRate:
		return `a whole number of Hz, or text such as "48k" or "44.1 kHz"`
	case kindLevel:
		return qLevel.accepted
	case kindTolerance:
		return `0 or "off", a number in dB, or text such as "0.5 dB"`
	case kindDuration:
		return qDuration.accepted
	case kindCount:
		return "a whole number"
	case kindResistance:
		return qResistance.accepted
	case kindCapacitance:
		return qCapacitance.accepted
	case kindChoice:
		return "one of " + strings.Join(sp.choices, ", ")
	}
	return `text in quotes, e.g. "hw:1"`
}

// setText parses text for sp and stores it.
func (sp *spec) setText(s *Settings, text string) error {
	var v float64
	var err error
	switch sp.kind {
	case kindName, kindChoice:
		*sp.str(s) = text
		return nil
	case kindCount:
		n, err := strconv.Atoi(strings.TrimSpace(text))
		if errors.Is(err, strconv.ErrRange) {
			return fmt.Errorf("%q is too large", text)
		}
		if err != nil {
			return fmt.Errorf("%q is not a whole number", text)
		}
		*sp.n(s) = n
		return nil
	case kindRate, kindFrequency:
		v, err = ParseFrequency(text)
	case kindLevel:
		v, err = ParseLevel(text)
	case kindTolerance:
		v, err = parseTolerance(text)
	case kindDuration:
		v, err = parseMillis(text)
	case kindResistance:
		v, err = ParseResistance(text)
	case kindCapacitance:
		v, err = ParseCapacitance(text)
	}
	if err != nil {
		return err
	}
	return sp.setNumber(s, v)
}

// setNumber stores a number for a numeric sp.
func (sp *spec) setNumber(s *Settings, v float64) error {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("%s is not a finite number", num(v))
	}
	if sp.n != nil {
		if v != math.Trunc(v) {
			return fmt.Errorf("%s is not a whole number", num(v))
		}
		if math.Abs(v) > 1<<53 {
			return fmt.Errorf("%s is too large", num(v))
		}
		*sp.n(s) = int(v)
		return nil
	}
	*sp.f(s) = v
	return nil
}

// closest returns the candidate nearest to word when it is near enough to
// be a likely typo (edit distance at most 2, or word a prefix of at least
// three letters), else "". Case is ignored.
func closest(word string, candidates []string) string {
	w := strings.ToLower(word)
	best, bestD := "", 3
	for _, c := range candidates {
		lc := strings.ToLower(c)
		d := editDistance(w, lc)
		if len(w) >= 3 && strings.HasPrefix(lc, w) {
			d = min(d, 1)
		}
		if d < bestD {
			best, bestD = c, d
		}
	}
	if bestD > 0 && 2*bestD >= len(w) {
		return "" // too short to tell a typo from another word
	}
	return best
}

// editDistance is the Levenshtein distance between a and b, in bytes.
func editDistance(a, b string) int {
	if len(a) > 64 || len(b) > 64 {
		return 64 // long words are never typos of a key
	}
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// quoteTOML writes s as a TOML basic string: printable characters as they
// are, quotes, backslashes and control characters escaped.
func quoteTOML(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch {
		case r == '"':
			b.WriteString(`\"`)
		case r == '\\':
			b.WriteString(`\\`)
		case r == '\n':
			b.WriteString(`\n`)
		case r == '\t':
			b.WriteString(`\t`)
		case r == '\r':
			b.WriteString(`\r`)
		case r < 0x20 || r == 0x7f:
			fmt.Fprintf(&b, `\u%04X`, r)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('"')
	return b.String()
}
