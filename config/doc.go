// Package config holds tonetrace's settings: the defaults, a TOML settings
// file in the user's configuration directory, and command-line flags on
// top, with validation whose messages name the setting, its value, what is
// allowed and where the value came from.
//
// The settings file is TOML with one table per area; every key is optional:
//
//	# ~/.config/tonetrace/config.toml
//	[audio]
//	rate = "96k"          # Hz; text with a k or M prefix works too
//	ref_input = 2         # the loopback input (1-based)
//	dut_input = 1         # the input behind the circuit
//
//	[output]
//	level_dbfs = "-30 dBFS"
//
//	[sweep]
//	from_hz = 10
//	to_hz = "40 kHz"
//
//	[fixture]
//	load_ohms = "47k"     # IEC 60062 codes such as 4k7 and R47 work too
//	load_farads = "150p"
//
// Numbers are in each setting's base unit (Hz, ms, dBFS, dB, Ω, F); text
// may carry a unit and an SI prefix. [Settings.WriteTOML] and
// [WriteDefault] write the complete file with every key's meaning, default
// and limits.
//
// A program reads the file, applies its flags, then validates:
//
//	s, err := config.Load(configFlag) // "" reads DefaultPath, if present
//	if err != nil { … }
//	if err := s.ApplyFlags(cmd.Flags(), map[string]string{"to": "sweep.to_hz"}); err != nil { … }
//	if err := s.Validate(); err != nil { … }
//
// Every problem is reported, one line each, such as
//
//	sweep.to_hz = 30000 (from --to): must be at most the Nyquist frequency 24000 Hz (audio.rate 48000 from default); lower --to or raise audio.rate
//	config.toml:7:1: unknown key "rat" in [audio]; known keys there: rate, period_ms, …; did you mean "rate"?
//
// Values from the file carry the origin "path:line"; [Settings.Describe]
// prints the effective settings with their origins.
package config
