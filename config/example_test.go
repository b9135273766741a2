package config_test

import (
	"fmt"
	"os"

	"github.com/spf13/pflag"

	"tonetrace/config"
)

func ExampleParseResistance() {
	for _, s := range []string{"4k7", "R47", "1M5", "100", "4.7 kΩ"} {
		ohms, _ := config.ParseResistance(s)
		fmt.Println(s, "=", ohms, "Ω")
	}
	// Output:
	// 4k7 = 4700 Ω
	// R47 = 0.47 Ω
	// 1M5 = 1.5e+06 Ω
	// 100 = 100 Ω
	// 4.7 kΩ = 4700 Ω
}

func ExampleParseCapacitance() {
	for _, s := range []string{"2n2", "10u", "4.7uF", "15 nF"} {
		farads, _ := config.ParseCapacitance(s)
		fmt.Println(s, "=", config.FormatCapacitance(farads))
	}
	// Output:
	// 2n2 = 2.2 nF
	// 10u = 10 µF
	// 4.7uF = 4.7 µF
	// 15 nF = 15 nF
}

func ExampleParseFrequency() {
	hz, _ := config.ParseFrequency("1.5 kHz")
	fmt.Println(hz)
	_, err := config.ParseFrequency("20 kV")
	fmt.Println(err)
	// Output:
	// 1500
	// "20 kV" is not a frequency: unknown unit "kV"; expected a number in Hz, or text with an optional k or M prefix and Hz, e.g. "1.5 kHz", "20kHz", "2.2M" or "20000 Hz"
}

func ExampleParseLevel() {
	dbfs, _ := config.ParseLevel("-20 dBFS")
	fmt.Println(dbfs)
	_, err := config.ParseLevel("-20 dBu")
	fmt.Println(err)
	// Output:
	// -20
	// "-20 dBu" is not a level: unit "dBu" is not accepted: dBu is an analog level that depends on the interface's calibration; give the digital level in dBFS; expected a number in dBFS (0 dBFS = digital full scale), or text such as "-20 dBFS" or "-20dBFS"
}

// A settings file, then flags, then validation, as main does it.
func ExampleSettings_ApplyFlags() {
	s, err := config.Parse([]byte("[audio]\nrate = \"44.1k\"\n"), "config.toml")
	if err != nil {
		fmt.Println(err)
		return
	}
	fs := pflag.NewFlagSet("tonetrace", pflag.ContinueOnError)
	fs.String("to", "20k", config.Doc("sweep.to_hz"))
	fs.String("level", "-20", config.Doc("output.level_dbfs"))
	_ = fs.Parse([]string{"--to", "30k", "--level=-30 dBFS"})
	if err := s.ApplyFlags(fs, map[string]string{"to": "sweep.to_hz", "level": "output.level_dbfs"}); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(s.Output.LevelDBFS, s.Origin("output.level_dbfs"))
	fmt.Println(s.Validate())
	// Output:
	// -30 --level
	// sweep.to_hz = 30000 (from --to): must be at most the Nyquist frequency 22050 Hz (audio.rate 44100 from config.toml:2); lower --to or raise audio.rate
}

func ExampleParse() {
	_, err := config.Parse([]byte("[sweep]\nfrom_hz = 20\ntohz = 20000\n"), "config.toml")
	fmt.Println(err)
	// Output:
	// config.toml:3:1: unknown key "tohz" in [sweep]; known keys there: from_hz, to_hz, points_per_decade, adaptive_db, method; did you mean "to_hz"?
}

func ExampleSettings_Describe() {
	s := config.Defaults()
	_ = s.Set("output.level_dbfs", "-30", "--level")
	_ = s.Describe(os.Stdout)
	// Output:
	// # settings file: none read
	// [audio]
	// rate             = 48000   # default
	// period_ms        = 20      # default
	// backend          = "auto"  # default
	// device           = ""      # default
	// playback         = ""      # default
	// capture          = ""      # default
	// stimulus_outputs = ""      # default
	// ref_input        = 2       # default
	// dut_input        = 1       # default
	//
	// [output]
	// level_dbfs = -30  # --level
	// cap_dbfs   = -6   # default
	// fade_ms    = 20   # default
	//
	// [sweep]
	// from_hz           = 20       # default
	// to_hz             = 20000    # 20 kHz, default
	// points_per_decade = 10       # default
	// adaptive_db       = 0        # default
	// method            = "steps"  # default
	//
	// [analyze]
	// segment           = 8192  # default
	// points_per_decade = 0     # default
	//
	// [fixture]
	// source_ohms = 100    # default
	// load_ohms   = 20000  # 20 kΩ, default
	// load_farads = 1e-10  # 100 pF, default
}
