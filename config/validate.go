package config

import (
	"errors"
	"fmt"
	"slices"
	"strconv"
	"strings"
)

// SettingError is one problem with one setting: a value of the wrong form
// (from [Settings.Set] or the settings file) or out of range (from
// [Settings.Validate]). Its message is one line:
//
//	sweep.to_hz = 30000 (from --to): must be at most the Nyquist frequency 24000 Hz (audio.rate 48000 from default); lower --to or raise audio.rate
type SettingError struct {
	// Key is the setting's dotted key, e.g. "sweep.to_hz".
	Key string
	// Value is the offending value as written: numbers bare in the
	// setting's base unit, text quoted.
	Value string
	// Origin is where the value came from: "default", "path:line" or a
	// flag such as "--to".
	Origin string
	// Allowed says what the value must be, e.g. "must be between 8000 and
	// 384000 Hz" or the accepted forms for a value that did not parse.
	Allowed string
	// Hint suggests a fix; may be empty.
	Hint string
	// Err is the underlying parse error, if any (often a *[ParseError]).
	Err error
}

// Error returns the one-line message "key = value (from origin): reason;
// allowed; hint".
func (e *SettingError) Error() string {
	var b strings.Builder
	b.WriteString(e.Key)
	if e.Value != "" {
		b.WriteString(" = ")
		b.WriteString(e.Value)
	}
	if e.Origin != "" {
		fmt.Fprintf(&b, " (from %s)", e.Origin)
	}
	b.WriteString(": ")
	if e.Err != nil {
		var pe *ParseError
		if errors.As(e.Err, &pe) {
			b.WriteString(pe.Reason)
		} else {
			b.WriteString(e.Err.Error())
		}
		b.WriteString("; ")
	}
	b.WriteString(e.Allowed)
	if e.Hint != "" {
		b.WriteString("; ")
		b.WriteString(e.Hint)
	}
	return b.String()
}

// Unwrap returns Err.
func (e *SettingError) Unwrap() error { return e.Err }

// Validate checks every setting's range and the rules between settings,
// and returns every problem found, joined with [errors.Join]: each is a
// *[SettingError] naming the setting, its value, what is allowed and where
// the value came from. It returns nil when the settings are usable.
//
// Rules beyond each field's own range: audio.ref_input ≠ audio.dut_input;
// output.level_dbfs ≤ output.cap_dbfs; sweep.to_hz > sweep.from_hz and
// sweep.to_hz ≤ audio.rate/2 (the Nyquist frequency). A rule that involves
// a setting that is itself out of range is skipped, so each mistake is
// reported once.
func (s *Settings) Validate() error {
	var errs []error
	bad := map[string]bool{}
	for i := range specs {
		sp := &specs[i]
		if e := sp.check(s); e != nil {
			errs = append(errs, e)
			bad[sp.key] = true
		}
	}
	fail := func(key string, value any, allowed, hint string) {
		var v string
		switch x := value.(type) {
		case float64:
			v = num(x)
		case int:
			v = fmt.Sprint(x)
		}
		errs = append(errs, &SettingError{Key: key, Value: v, Origin: s.Origin(key), Allowed: allowed, Hint: hint})
		bad[key] = true
	}
	a, o, w := &s.Audio, &s.Output, &s.Sweep

	if _, err := ParseChannels(a.StimulusOutputs); err != nil {
		errs = append(errs, &SettingError{Key: "audio.stimulus_outputs", Value: strconvQuote(a.StimulusOutputs),
			Origin: s.Origin("audio.stimulus_outputs"), Allowed: "1-based output numbers from 1 to 32, comma-separated, or empty for every output",
			Hint: err.Error()})
		bad["audio.stimulus_outputs"] = true
	}
	if !bad["audio.ref_input"] && !bad["audio.dut_input"] && a.RefInput == a.DUTInput {
		fail("audio.dut_input", a.DUTInput,
			fmt.Sprintf("must differ from audio.ref_input %d (from %s)", a.RefInput, s.Origin("audio.ref_input")),
			"the reference input takes the loopback cable, the response input the circuit's output")
	}
	if !bad["output.level_dbfs"] && !bad["output.cap_dbfs"] && o.LevelDBFS > o.CapDBFS {
		fail("output.level_dbfs", o.LevelDBFS,
			fmt.Sprintf("must be at most output.cap_dbfs %s dBFS (from %s)", num(o.CapDBFS), s.Origin("output.cap_dbfs")),
			fmt.Sprintf("lower %s or raise %s", s.fixName("output.level_dbfs"), s.fixName("output.cap_dbfs")))
	}
	if !bad["sweep.to_hz"] && !bad["sweep.from_hz"] && w.ToHz <= w.FromHz {
		fail("sweep.to_hz", w.ToHz,
			fmt.Sprintf("must be above sweep.from_hz %s Hz (from %s)", num(w.FromHz), s.Origin("sweep.from_hz")),
			fmt.Sprintf("raise %s or lower %s", s.fixName("sweep.to_hz"), s.fixName("sweep.from_hz")))
	}
	if nyq := float64(a.Rate) / 2; !bad["sweep.to_hz"] && !bad["audio.rate"] && w.ToHz > nyq {
		fail("sweep.to_hz", w.ToHz,
			fmt.Sprintf("must be at most the Nyquist frequency %s Hz (audio.rate %d from %s)", num(nyq), a.Rate, s.Origin("audio.rate")),
			fmt.Sprintf("lower %s or raise %s", s.fixName("sweep.to_hz"), s.fixName("audio.rate")))
	}
	return errors.Join(errs...)
}

// fixName names a setting in a hint the way the user set it: the flag
// when it came from one, else the key.
func (s *Settings) fixName(key string) string {
	if o := s.Origin(key); strings.HasPrefix(o, "-") {
		return o
	}
	return key
}

// check tests sp's own range or choices in s.
func (sp *spec) check(s *Settings) *SettingError {
	switch sp.kind {
	case kindName:
		return nil
	case kindChoice:
		v := *sp.str(s)
		if slices.Contains(sp.choices, v) {
			return nil
		}
		e := &SettingError{Key: sp.key, Value: quoteTOML(v), Origin: s.Origin(sp.key),
			Allowed: "must be one of " + strings.Join(sp.choices, ", ")}
		if m := closest(v, sp.choices); m != "" {
			e.Hint = fmt.Sprintf("did you mean %q?", m)
		}
		return e
	}
	v := sp.number(s)
	if (v >= sp.lo && v <= sp.hi) || (sp.offZero && v == 0) {
		return nil
	}
	e := &SettingError{Key: sp.key, Value: num(v), Origin: s.Origin(sp.key), Allowed: "must be " + sp.between()}
	switch sp.key {
	case "audio.rate":
		e.Hint = "common rates are 44100, 48000, 96000 and 192000"
	case "output.cap_dbfs":
		if v > 0 {
			e.Hint = "0 dBFS is digital full scale; nothing can be louder"
		}
	case "audio.ref_input", "audio.dut_input":
		e.Hint = "inputs are counted from 1"
	}
	return e
}

// between describes the range for an error message: "between 8000 and
// 384000 Hz", "0 (off) or between 0.01 and 10 dB".
func (sp *spec) between() string {
	lo, hi := sp.bounds()
	r := fmt.Sprintf("between %s and %s", lo, hi)
	if sp.offZero {
		r = "0 (off) or " + r
	}
	return r
}

// MaxOutputChannel is the highest output channel audio.stimulus_outputs
// may name.
const MaxOutputChannel = 32

// ParseChannels reads a comma-separated list of 1-based channel numbers
// ("1,2", "2"); "" is an empty list, meaning every channel. Numbers must
// lie between 1 and [MaxOutputChannel] and appear once.
func ParseChannels(s string) ([]int, error) {
	if strings.TrimSpace(s) == "" {
		return nil, nil
	}
	var out []int
	for _, f := range strings.Split(s, ",") {
		f = strings.TrimSpace(f)
		n, err := strconv.Atoi(f)
		if err != nil || n < 1 || n > MaxOutputChannel {
			return nil, fmt.Errorf("%q is not a channel number from 1 to %d; write e.g. \"1,2\"", f, MaxOutputChannel)
		}
		if slices.Contains(out, n) {
			return nil, fmt.Errorf("channel %d is named twice", n)
		}
		out = append(out, n)
	}
	return out, nil
}

func strconvQuote(s string) string { return strconv.Quote(s) }
