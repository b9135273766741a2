// Command tonetrace measures the frequency response of analog networks with
// a stereo audio interface: one output drives the network into the response
// input, the other loops straight back into the reference input, and the
// ratio of the two inputs is the network's gain and phase.
//
// Output rules: data goes to files (or stdout where a command says so);
// every message on stderr is one line starting "tonetrace: ", lowercase,
// saying what happened and, for errors, how to fix it. Exit status 0 on
// success, 1 for an unexpected failure, 2 for bad usage or bad input (no
// output file is left behind), 3 for a measurement that ran but is invalid.
package main

import (
	"cmp"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	iofs "io/fs"
	"log/slog"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"runtime/debug"
	"runtime/pprof"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/x/term"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"tonetrace/audio"
	"tonetrace/audio/bench"
	"tonetrace/audio/device"
	"tonetrace/audio/wavfile"
	"tonetrace/config"
	"tonetrace/dsp/engine"
	"tonetrace/dsp/extract"
	"tonetrace/dsp/fit"
	"tonetrace/dsp/mna"
	"tonetrace/dsp/multitone"
	"tonetrace/dsp/netlist"
	"tonetrace/dsp/plan"
	"tonetrace/dsp/spectral"
	"tonetrace/dsp/stimulus"
	"tonetrace/dsp/trace"
	"tonetrace/tui"
	"tonetrace/tui/picture"
	"tonetrace/tui/plot"
)

// version is set at release time with -ldflags "-X main.version=…";
// otherwise it comes from the module's build information.
var version = ""

// Exit statuses.
const (
	exitOK      = 0
	exitFailure = 1
	exitUsage   = 2
	exitInvalid = 3
	programName = "tonetrace"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// usageError marks an error caused by the user's input: exit status 2.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

// usagef returns a usage error with a formatted message.
func usagef(format string, args ...any) error {
	return usageError{fmt.Errorf(format, args...)}
}

// run executes one command line and returns the exit status. It is main
// without the process: tests call it directly.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	app := &app{stdout: stdout, stderr: stderr, args: args}
	root := app.rootCommand()
	root.SetArgs(args)
	root.SetOut(stdout)
	root.SetErr(stderr)
	err := root.ExecuteContext(ctx)
	if err == nil {
		return exitOK
	}
	msg := strings.ReplaceAll(err.Error(), "\n", "; ")
	fmt.Fprintf(stderr, "%s: %s\n", programName, msg)
	var ue usageError
	switch {
	case errors.As(err, &ue), isFlagError(err):
		return exitUsage
	case errors.Is(err, errInvalidMeasurement):
		return exitInvalid
	}
	return exitFailure
}

// errInvalidMeasurement marks a measurement that ran but must not be trusted.
var errInvalidMeasurement = errors.New("invalid measurement")

// isFlagError reports errors cobra returns for bad flags and arguments.
func isFlagError(err error) bool {
	s := err.Error()
	for _, p := range []string{"unknown flag", "unknown shorthand", "flag needs an argument", "invalid argument", "unknown command", "accepts ", "requires at least", "required flag"} {
		if strings.Contains(s, p) {
			return true
		}
	}
	return false
}

// app holds what every command shares: the output streams and the command
// line (for the metadata of written files).
type app struct {
	stdout, stderr io.Writer
	args           []string
	configPath     string
	plot           bool // analyze --plot
	rootSim        simOptions
	model          string // --model netlist for the live screen
	noColor        bool
	cpuProfile     string
	profileFile    *os.File
	plotSize       string
	plotASCII      bool
}

func (a *app) rootCommand() *cobra.Command {
	root := &cobra.Command{
		Use:   programName,
		Short: "two-channel gain/phase analyzer for analog networks, on a stereo audio interface",
		Long: `tonetrace measures the frequency response (gain and phase) of analog
networks with a stereo audio interface. One output drives the network into
input 1 (the response); the other loops straight back into input 2 (the
reference). The ratio of the two inputs is the network's response.`,
		SilenceErrors: true,
		SilenceUsage:  true,
		Version:       programVersion(),
		Args:          exactArgs(0, "run 'tonetrace --help' for the commands"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			return a.live(cmd.Context(), cmd.Flags(), a.rootSim)
		},
	}
	a.liveFlags(root.Flags(), &a.rootSim)
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		return usageError{fmt.Errorf("%s: %w; see '%s --help'", c.Name(), err, c.CommandPath())}
	})
	root.PersistentFlags().StringVar(&a.configPath, "config", "", "settings file (default: the user's config directory, tonetrace/config.toml)")
	root.PersistentFlags().StringVar(&a.cpuProfile, "cpuprofile", "", "write a Go CPU profile to this file (for developers)")
	root.PersistentFlags().Lookup("cpuprofile").Hidden = true
	root.PersistentPreRunE = func(*cobra.Command, []string) error {
		if a.cpuProfile == "" {
			return nil
		}
		f, err := os.Create(a.cpuProfile)
		if err != nil {
			return usagef("--cpuprofile: %v", err)
		}
		a.profileFile = f
		return pprof.StartCPUProfile(f)
	}
	root.PersistentPostRun = func(*cobra.Command, []string) {
		if a.profileFile != nil {
			pprof.StopCPUProfile()
			a.profileFile.Close()
		}
	}
	root.AddCommand(a.analyzeCommand(), a.stimulusCommand(), a.predictCommand(), a.fitCommand(), a.plotCommand(), a.sweepCommand(), a.demoCommand(), a.devicesCommand(), a.configCommand(), a.versionCommand())
	return root
}

// programVersion returns the release version, or the module version from
// the build information, or "devel".
func programVersion() string {
	if version != "" {
		return version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" && bi.Main.Version != "(devel)" {
		return bi.Main.Version
	}
	return "devel"
}

func (a *app) versionCommand() *cobra.Command {
	return &cobra.Command{
		Use:   "version",
		Short: "print the version",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			fmt.Fprintf(a.stdout, "%s %s\n", programName, programVersion())
			return nil
		},
	}
}

// settings loads the settings file and applies the command's changed
// flags, bound to setting keys. Validation is left to the caller, which may
// first fill in values it learns (such as a recording's sample rate).
func (a *app) settings(fs *pflag.FlagSet, bind map[string]string) (*config.Settings, error) {
	s, err := config.Load(a.configPath)
	if err != nil {
		return nil, usageError{err}
	}
	return a.applyFlags(s, fs, bind)
}

func (a *app) applyFlags(s *config.Settings, fs *pflag.FlagSet, bind map[string]string) (*config.Settings, error) {
	if err := s.ApplyFlags(fs, bind); err != nil {
		return nil, usageError{err}
	}
	return s, nil
}

// validate checks the settings, reporting every problem at once.
func validate(s *config.Settings) error {
	if err := s.Validate(); err != nil {
		return usageError{err}
	}
	return nil
}

// commandLine returns the command as typed, for file metadata.
func (a *app) commandLine() string {
	parts := make([]string, 0, len(a.args)+1)
	parts = append(parts, programName)
	for _, s := range a.args {
		if s == "" || strings.ContainsAny(s, " \t'\"\\$") {
			s = strconv.Quote(s)
		}
		parts = append(parts, s)
	}
	return strings.Join(parts, " ")
}

// stampMeta puts the common metadata at the head of a trace.
func (a *app) stampMeta(t *trace.Trace) {
	head := []trace.MetaItem{
		{Key: "tool", Value: programName + " " + programVersion()},
		{Key: "command", Value: a.commandLine()},
		{Key: "date", Value: time.Now().UTC().Format(time.RFC3339)},
	}
	t.Meta = append(head, t.Meta...)
}

// checkWritable fails early, before any work, when the output file cannot
// be created in its directory.
func checkWritable(path string) error {
	if path == "" {
		return usagef("no output file: give one with -o FILE")
	}
	dir := filepath.Dir(path)
	st, err := os.Stat(dir)
	if err != nil {
		return usagef("cannot write %s: directory %s does not exist; create it or choose another -o", path, dir)
	}
	if !st.IsDir() {
		return usagef("cannot write %s: %s is not a directory; choose another -o", path, dir)
	}
	if fi, err := os.Stat(path); err == nil && fi.IsDir() {
		return usagef("cannot write %s: it is a directory; give a file name with -o", path)
	}
	f, err := os.CreateTemp(dir, ".tonetrace-probe-*")
	if err != nil {
		return usagef("cannot write in %s (%v); choose a writable place with -o", dir, errors.Unwrap(err))
	}
	name := f.Name()
	f.Close()
	os.Remove(name)
	return nil
}

// ---- analyze ----------------------------------------------------------------

func (a *app) analyzeCommand() *cobra.Command {
	var out string
	cmd := &cobra.Command{
		Use:   "analyze REC.wav -o OUT.csv",
		Short: "transfer function from a two-channel recording of any broadband signal",
		Long: `analyze reads a recording with the reference (looped-back stimulus) on one
channel and the network's response on another, and writes the transfer
function response/reference: gain, phase, their standard uncertainties and
the coherence, by Welch-averaged cross spectra (H1 estimator, Hann window,
50% overlap). Any broadband stimulus works: white or pink noise, a sweep,
or programme material with enough level across the band.`,
		Example: `  tonetrace analyze bench.wav -o bench.csv
  tonetrace analyze field.wav -o field.csv --ref 1 --dut 2 --ppd 24 --from 40 --to 16k`,
		Args: exactArgs(1, "give one recording: tonetrace analyze REC.wav -o OUT.csv"),
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.analyze(cmd.Context(), cmd.Flags(), args[0], out)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "trace file to write (CSV)")
	f.Int("ref", 2, "1-based channel holding the reference (the looped-back stimulus)")
	f.Int("dut", 1, "1-based channel holding the network's response")
	f.String("seg", "8192", "analysis segment length in samples")
	f.String("from", "20", "lowest frequency to write, Hz (SI suffixes allowed: 20, 1k)")
	f.String("to", "20k", "highest frequency to write, Hz; at most half the sample rate")
	f.Int("ppd", 0, "average into N log-spaced points per decade (0: every bin)")
	a.plotFlags(f)
	f.BoolVar(&a.plot, "plot", false, "also draw the response as a text Bode plot on stdout")
	return cmd
}

var analyzeFlags = map[string]string{
	"ref":  "audio.ref_input",
	"dut":  "audio.dut_input",
	"seg":  "analyze.segment",
	"from": "sweep.from_hz",
	"to":   "sweep.to_hz",
	"ppd":  "analyze.points_per_decade",
}

func (a *app) analyze(ctx context.Context, fs *pflag.FlagSet, in, out string) error {
	if err := checkWritable(out); err != nil {
		return err
	}
	s, err := a.settings(fs, analyzeFlags)
	if err != nil {
		return err
	}
	rec, err := wavfile.ReadFile(in)
	if errors.Is(err, iofs.ErrNotExist) {
		return usagef("cannot read %s: no such file; check the path", in)
	}
	if err != nil {
		return usageError{err}
	}
	nch := len(rec.Channels)
	if nch < 2 {
		return usagef("%s has %d channel; analyze needs two: the reference and the response, recorded together", in, nch)
	}
	// The recording's rate decides the Nyquist limit of the range.
	if err := s.Set("audio.rate", strconv.Itoa(rec.Rate), in); err != nil {
		return usageError{err}
	}
	if err := validate(s); err != nil {
		return err
	}
	ref, dut := s.Audio.RefInput, s.Audio.DUTInput
	for _, c := range []struct {
		name string
		ch   int
		flag string
	}{{"reference", ref, "--ref"}, {"response", dut, "--dut"}} {
		if c.ch > nch {
			return usagef("%s channel %d (from %s) is out of range: %s has %d channels; use %s 1 to %d", c.name, c.ch, s.Origin(keyOfFlag(c.flag)), in, nch, c.flag, nch)
		}
	}
	seg := s.Analyze.Segment
	if rec.Frames() < seg {
		return usagef("%s holds %d frames, fewer than one analysis segment of %d; record longer or use a shorter --seg", in, rec.Frames(), seg)
	}
	w, err := spectral.NewWelch(seg, float64(rec.Rate))
	if err != nil {
		return usageError{err}
	}
	// Feed in blocks so a long file can be cancelled with ctrl+c.
	x, y := rec.Channels[ref-1], rec.Channels[dut-1]
	const block = 1 << 16
	for i := 0; i < len(x); i += block {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("analyze interrupted; nothing written")
		}
		j := min(i+block, len(x))
		w.Add(x[i:j], y[i:j])
	}
	t, err := w.Trace(s.Sweep.FromHz, s.Sweep.ToHz, s.Analyze.PointsPerDecade)
	if err != nil {
		return usageError{err}
	}
	t.Meta = append([]trace.MetaItem{
		{Key: "input", Value: filepath.Base(in)},
		{Key: "input_format", Value: rec.Format.String()},
		{Key: "reference_channel", Value: strconv.Itoa(ref)},
		{Key: "response_channel", Value: strconv.Itoa(dut)},
	}, t.Meta...)
	a.stampMeta(&t)
	if err := trace.SaveFile(out, &t, trace.ColCoherence); err != nil {
		return err
	}
	a.summarize("analyze", out, &t, float64(rec.Frames())/float64(rec.Rate), w.Segments())
	if a.plot {
		a.drawBode(s.Sweep.FromHz, s.Sweep.ToHz, namedTrace{filepath.Base(out), &t})
	}
	return nil
}

// keyOfFlag maps an analyze flag to its setting key, for messages.
func keyOfFlag(flag string) string { return analyzeFlags[strings.TrimPrefix(flag, "--")] }

// summarize prints a short account of a written trace on stderr: its span,
// its quality and the parameters read off it.
func (a *app) summarize(cmd, out string, t *trace.Trace, seconds float64, segments int) {
	pts := t.Points
	first, last := pts[0].Freq, pts[len(pts)-1].Freq
	fmt.Fprintf(a.stderr, "%s: %s: wrote %s: %d points, %s to %s, from %.1f s of audio (%d segments)\n",
		programName, cmd, out, len(pts), formatHz(first), formatHz(last), seconds, segments)
	coh := make([]float64, 0, len(pts))
	for _, p := range pts {
		if !math.IsNaN(p.Coherence) {
			coh = append(coh, p.Coherence)
		}
	}
	if len(coh) > 0 {
		sort.Float64s(coh)
		low := 0
		for _, c := range coh {
			if c < 0.9 {
				low++
			}
		}
		fmt.Fprintf(a.stderr, "%s: %s: coherence median %.4f, lowest %.4f; %d of %d points below 0.9\n",
			programName, cmd, coh[len(coh)/2], coh[0], low, len(coh))
		if low > len(coh)/4 {
			fmt.Fprintf(a.stderr, "%s: %s: hint: low coherence means noise, hum or a nonlinear or time-varying network; raise the stimulus level or record longer\n", programName, cmd)
		}
	}
	params, err := extract.Analyze(pts)
	if err != nil {
		return
	}
	for _, line := range params.Lines() {
		fmt.Fprintf(a.stderr, "%s: %s: %s\n", programName, cmd, line)
	}
}

// formatHz writes a frequency with four significant digits: "23.44 Hz",
// "2.801 kHz".
func formatHz(f float64) string {
	if f >= 1000 {
		return strconv.FormatFloat(f/1000, 'g', 4, 64) + " kHz"
	}
	return strconv.FormatFloat(f, 'g', 4, 64) + " Hz"
}

// exactArgs is cobra.ExactArgs with a message that says what to type.
func exactArgs(n int, hint string) cobra.PositionalArgs {
	return func(cmd *cobra.Command, args []string) error {
		if len(args) != n {
			return usagef("%s: expected %d argument(s), got %d; %s", cmd.Name(), n, len(args), hint)
		}
		return nil
	}
}

// ---- stimulus ---------------------------------------------------------------

func (a *app) stimulusCommand() *cobra.Command {
	var (
		out, kind, enc string
		seconds        float64
		seed           uint64
	)
	cmd := &cobra.Command{
		Use:   "stimulus -o OUT.wav --kind KIND",
		Short: "write a test signal as a stereo WAV file (the same signal on both channels)",
		Long: `stimulus writes a test signal with the same samples on both channels, so a
measurement can be recorded with any player and recorder and then read with
'tonetrace analyze'. Kinds: ` + strings.Join(kindNames(), ", ") + `.

The level is the peak sample level in dBFS. It can never exceed the
configured cap (output.cap_dbfs, default -6 dBFS).

Caution: test signals are loud and steady. Turn monitors down, take
headphones off, and never feed speaker-level or mains-referenced signals
back into the interface without an attenuator or isolation.`,
		Example: `  tonetrace stimulus -o pink.wav --kind pink --seconds 20
  tonetrace stimulus -o tones.wav --kind multitone --level -24 --from 20 --to 20k`,
		Args: exactArgs(0, "give the output with -o and the kind with --kind"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			return a.stimulus(cmd.Flags(), out, kind, enc, seconds, seed)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "WAV file to write")
	f.StringVar(&kind, "kind", "", "signal: "+strings.Join(kindNames(), ", "))
	f.Float64Var(&seconds, "seconds", 10, "duration in seconds (multitone: whole periods)")
	f.String("rate", "48k", "sample rate in Hz")
	f.String("level", "-20", "peak level in dBFS, at most the cap")
	f.String("from", "20", "lowest frequency, Hz")
	f.String("to", "20k", "highest frequency, Hz")
	f.StringVar(&enc, "encoding", "float32", "sample encoding: float32, pcm24, pcm16")
	f.Uint64Var(&seed, "seed", 1, "seed of the noise generators (same seed, same file)")
	return cmd
}

var stimulusFlags = map[string]string{
	"rate":  "audio.rate",
	"level": "output.level_dbfs",
	"from":  "sweep.from_hz",
	"to":    "sweep.to_hz",
}

func kindNames() []string { return stimulus.Kinds() }

func (a *app) stimulus(fs *pflag.FlagSet, out, kind, encName string, seconds float64, seed uint64) error {
	if kind == "" {
		return usagef("no --kind given; choose one of %s", strings.Join(kindNames(), ", "))
	}
	if !slices.Contains(kindNames(), kind) {
		return usagef("unknown --kind %q; choose one of %s", kind, strings.Join(kindNames(), ", "))
	}
	enc, err := wavfile.ParseEncoding(encName)
	if err != nil {
		return usageError{err}
	}
	if !slices.Contains([]wavfile.Encoding{wavfile.Float32, wavfile.PCM24, wavfile.PCM16}, enc) {
		return usagef("--encoding %s is not offered for stimuli; use float32, pcm24 or pcm16", encName)
	}
	if !(seconds > 0 && seconds <= 3600) {
		return usagef("--seconds %g is out of range; give a duration from just above 0 to 3600", seconds)
	}
	if err := checkWritable(out); err != nil {
		return err
	}
	s, err := a.settings(fs, stimulusFlags)
	if err != nil {
		return err
	}
	if err := validate(s); err != nil {
		return err
	}
	rate := float64(s.Audio.Rate)
	var x []float64
	var note string
	if kind == stimulus.KindMultitone {
		x, note, err = renderMultitone(s, seconds, seed)
	} else {
		x, err = stimulus.Render(kind, stimulus.Options{
			Rate: rate, Seconds: seconds, LevelDBFS: s.Output.LevelDBFS, CapDBFS: s.Output.CapDBFS,
			From: s.Sweep.FromHz, To: s.Sweep.ToHz, Seed: seed, FadeSeconds: s.Output.FadeMS / 1000,
		})
	}
	if err != nil {
		return usageError{err}
	}
	rec := &wavfile.Audio{Rate: s.Audio.Rate, Channels: [][]float64{x, x}}
	if err := wavfile.WriteFile(out, rec, enc); err != nil {
		return err
	}
	fmt.Fprintf(a.stderr, "%s: stimulus: wrote %s: %s, %.2f s at %d Hz, %s, peak %.2f dBFS, crest factor %.2f dB%s\n",
		programName, out, kind, float64(len(x))/rate, s.Audio.Rate, enc, peakDBFS(x), stimulus.CrestFactorDB(x), note)
	return nil
}

// renderMultitone loops whole periods of a periodic multitone to fill the
// requested duration (rounded up to whole periods).
func renderMultitone(s *config.Settings, seconds float64, seed uint64) ([]float64, string, error) {
	rate := float64(s.Audio.Rate)
	period := 1 << 14
	if rate > 96000 {
		period = 1 << 16
	} else if rate > 48000 {
		period = 1 << 15
	}
	m, err := multitone.Design(multitone.Options{
		Rate: rate, Period: period, From: s.Sweep.FromHz, To: s.Sweep.ToHz, PerDecade: 24,
		LevelDBFS: s.Output.LevelDBFS, CapDBFS: s.Output.CapDBFS, Seed: seed,
	})
	if err != nil {
		return nil, "", err
	}
	one := m.Period()
	n := int(math.Ceil(seconds * rate / float64(period)))
	x := make([]float64, 0, n*period)
	for range n {
		x = append(x, one...)
	}
	return x, fmt.Sprintf(", %d tones, period %d samples", len(m.Tones()), period), nil
}

func peakDBFS(x []float64) float64 {
	p := 0.0
	for _, v := range x {
		p = max(p, math.Abs(v))
	}
	return 20 * math.Log10(p)
}

// ---- config -----------------------------------------------------------------

func (a *app) configCommand() *cobra.Command {
	cmd := &cobra.Command{
		Use:   "config",
		Short: "show the settings or write a default settings file",
	}
	show := &cobra.Command{
		Use:   "show",
		Short: "print every setting with its value and where the value came from",
		Args:  exactArgs(0, "tonetrace config show takes no arguments"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			s, err := a.settings(cmd.Flags(), nil)
			if err != nil {
				return err
			}
			s.Describe(a.stdout)
			return validate(s)
		},
	}
	var force bool
	initCmd := &cobra.Command{
		Use:   "init",
		Short: "write a commented settings file with the defaults",
		Args:  exactArgs(0, "tonetrace config init takes no arguments; choose the file with --config"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			path := a.configPath
			if path == "" {
				p, err := config.DefaultPath()
				if err != nil {
					return usagef("no user config directory (%v); give a file with --config", err)
				}
				path = p
			}
			if _, err := os.Stat(path); err == nil && !force {
				return usagef("%s already exists; use --force to replace it with the defaults", path)
			}
			if err := config.WriteDefault(path); err != nil {
				return err
			}
			fmt.Fprintf(a.stderr, "%s: config: wrote %s\n", programName, path)
			return nil
		},
	}
	initCmd.Flags().BoolVar(&force, "force", false, "replace an existing file")
	cmd.AddCommand(show, initCmd)
	return cmd
}

// ---- plot -------------------------------------------------------------------

func (a *app) plotCommand() *cobra.Command {
	var from, to, out string
	cmd := &cobra.Command{
		Use:   "plot TRACE.csv [TRACE.csv ...]",
		Short: "draw saved traces as a text Bode plot (gain above phase) on stdout",
		Long: `plot draws one or more trace files as a Bode plot made of braille
characters, gain above phase on one logarithmic frequency axis: a quick look
over SSH, in a log, or in a report pasted as text. Up to four traces.`,
		Example: `  tonetrace plot bench.csv
  tonetrace plot before.csv after.csv --size 120x36 --from 20 --to 20k
  tonetrace plot before.csv after.csv -o compare.svg`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) < 1 || len(args) > 4 {
				return usagef("plot: give one to four trace files, e.g. tonetrace plot bench.csv")
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			var traces []namedTrace
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, path := range args {
				t, err := trace.LoadFile(path)
				if err != nil {
					return usageError{err}
				}
				if len(t.Points) == 0 {
					return usagef("%s holds no points; nothing to draw", path)
				}
				lo = min(lo, t.Points[0].Freq)
				hi = max(hi, t.Points[len(t.Points)-1].Freq)
				traces = append(traces, namedTrace{filepath.Base(path), t})
			}
			f0, f1 := lo, hi
			var err error
			if from != "" {
				if f0, err = config.ParseFrequency(from); err != nil {
					return usagef("--from: %v", err)
				}
			}
			if to != "" {
				if f1, err = config.ParseFrequency(to); err != nil {
					return usagef("--to: %v", err)
				}
			}
			if !(f0 > 0 && f1 > f0) {
				return usagef("plot range %g to %g Hz is empty; give --from below --to, both above 0", f0, f1)
			}
			if out != "" {
				if err := checkWritable(out); err != nil {
					return err
				}
				series := make([]picture.Series, len(traces))
				for i, nt := range traces {
					series[i] = picture.Series{Name: nt.name, Trace: nt.t, Dashed: i > 0}
				}
				if err := picture.WriteFile(out, picture.Options{From: f0, To: f1}, series...); err != nil {
					return usageError{err}
				}
				fmt.Fprintf(a.stderr, "%s: plot: wrote %s\n", programName, out)
				return nil
			}
			return a.drawBode(f0, f1, traces...)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "write a picture instead (.svg or .png) rather than drawing on stdout")
	f.StringVar(&from, "from", "", "lowest frequency drawn, Hz (default: the traces' lowest)")
	f.StringVar(&to, "to", "", "highest frequency drawn, Hz (default: the traces' highest)")
	a.plotFlags(f)
	return cmd
}

// plotFlags adds the flags every text plot shares.
func (a *app) plotFlags(f *pflag.FlagSet) {
	f.StringVar(&a.plotSize, "size", "", "plot size in characters, WIDTHxHEIGHT (default: 100x32)")
	f.BoolVar(&a.plotASCII, "ascii", false, "draw with ASCII characters only (for terminals without braille)")
}

// namedTrace is a trace with the name its legend shows.
type namedTrace struct {
	name string
	t    *trace.Trace
}

// drawBode writes a text Bode plot of the traces to stdout.
func (a *app) drawBode(from, to float64, traces ...namedTrace) error {
	w, h := 100, 32
	if a.plotSize != "" {
		if _, err := fmt.Sscanf(a.plotSize, "%dx%d", &w, &h); err != nil || w < 20 || h < 8 || w > 1000 || h > 1000 {
			return usagef("--size %q: give WIDTHxHEIGHT in characters, from 20x8 to 1000x1000, e.g. 120x36", a.plotSize)
		}
	}
	curves := make([]plot.Curve, len(traces))
	for i, nt := range traces {
		curves[i] = plot.CurveFromPoints(plot.Curve{}, nt.t.Points)
		curves[i].Name = nt.name
		curves[i].Style = i
	}
	gain := plot.Axis{Auto: true, MinSpan: 6, Unit: "dB"}
	phase := plot.Axis{Auto: true, MinSpan: 90, Step: 45, Unit: "deg"}
	g := plot.Bode(w, h, plot.Options{From: from, To: to, ASCII: a.plotASCII, MarkClip: true}, gain, phase, curves...)
	_, err := fmt.Fprintln(a.stdout, g.String())
	return err
}

// ---- predict ----------------------------------------------------------------

// fixtureFlags are the flags that describe the bench around a network.
var fixtureFlags = map[string]string{
	"source-r": "fixture.source_ohms",
	"load-r":   "fixture.load_ohms",
	"load-c":   "fixture.load_farads",
}

// addNetworkFlags adds the flags that choose a netlist's input and output
// nodes and the fixture; it returns where the node names land.
func addNetworkFlags(f *pflag.FlagSet, nodes *netlist.Options) {
	f.StringVar(&nodes.In, "in", "", "input node of the netlist (default: its .io line, else \"in\")")
	f.StringVar(&nodes.Out, "out", "", "output node of the netlist (default: its .io line, else \"out\")")
	f.String("source-r", "100", "output resistance of the driving output, ohms (0: ideal source)")
	f.String("load-r", "20k", "input resistance of the measuring input, ohms")
	f.String("load-c", "100p", "capacitance across the measuring input and its cable, farads")
}

// fixture returns the settings' fixture in the form package mna takes.
func fixture(s *config.Settings) mna.Fixture {
	return mna.Fixture{SourceOhms: s.Fixture.SourceOhms, LoadOhms: s.Fixture.LoadOhms, LoadFarads: s.Fixture.LoadFarads}
}

// fixtureText says which fixture a prediction used, for messages.
func fixtureText(fx mna.Fixture) string {
	return fmt.Sprintf("source %s, load %s ∥ %s", config.FormatResistance(fx.SourceOhms),
		config.FormatResistance(fx.LoadOhms), config.FormatCapacitance(fx.LoadFarads))
}

func mergeFlags(maps ...map[string]string) map[string]string {
	out := map[string]string{}
	for _, m := range maps {
		for k, v := range m {
			out[k] = v
		}
	}
	return out
}

func (a *app) predictCommand() *cobra.Command {
	var (
		out   string
		nodes netlist.Options
	)
	cmd := &cobra.Command{
		Use:   "predict NET.cir -o OUT.csv",
		Short: "predict a network's response from its netlist, including the bench fixture",
		Long: `predict solves a netlist by modified nodal analysis at log-spaced frequencies
and writes the response V(out)/V(source) as a trace. The fixture is part of
the model: the driving output's resistance (--source-r) and the measuring
input's resistance and capacitance (--load-r, --load-c). Leaving them out of
a prediction is a classic systematic error: a 100 Ω output and a 10 kΩ input
move a 10 kΩ/15 nF corner from 1.06 kHz to 2.1 kHz.

Netlist lines: R/C/L name node node value; E name out+ out- in+ in- gain;
U name out in+ in- (ideal op-amp); node 0 is ground; values like 4k7, 2n2,
15nF, 10mH.`,
		Example: `  tonetrace predict filter.cir -o predicted.csv
  tonetrace predict filter.cir -o ideal.csv --source-r 0 --load-r 1e12 --load-c 0 --ppd 50`,
		Args: exactArgs(1, "give one netlist: tonetrace predict NET.cir -o OUT.csv"),
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.predict(cmd.Flags(), args[0], out, nodes)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "trace file to write (CSV)")
	f.String("from", "20", "lowest frequency, Hz")
	f.String("to", "20k", "highest frequency, Hz")
	f.Int("ppd", 10, "points per decade")
	addNetworkFlags(f, &nodes)
	a.plotFlags(f)
	f.BoolVar(&a.plot, "plot", false, "also draw the prediction as a text Bode plot on stdout")
	return cmd
}

var predictFlags = mergeFlags(fixtureFlags, map[string]string{
	"from": "sweep.from_hz",
	"to":   "sweep.to_hz",
	"ppd":  "sweep.points_per_decade",
})

func (a *app) predict(fs *pflag.FlagSet, in, out string, nodes netlist.Options) error {
	if err := checkWritable(out); err != nil {
		return err
	}
	s, err := a.settings(fs, predictFlags)
	if err != nil {
		return err
	}
	// A prediction is not tied to a sample rate; only the measured range
	// is, so check the range against the highest rate we support.
	if err := s.Set("audio.rate", "384000", "predict"); err != nil {
		return err
	}
	if err := validate(s); err != nil {
		return err
	}
	n, err := nodes.ParseFile(in)
	if err != nil {
		return usageError{err}
	}
	freqs, err := plan.PerDecade(s.Sweep.FromHz, s.Sweep.ToHz, s.Sweep.PointsPerDecade)
	if err != nil {
		return usageError{err}
	}
	fx := fixture(s)
	d, err := mna.Build(n, fx)
	if err != nil {
		return usageError{err}
	}
	t, err := mna.Predict(d, freqs)
	if err != nil {
		return usageError{err}
	}
	t.Meta = append([]trace.MetaItem{{Key: "netlist", Value: filepath.Base(in)}}, t.Meta...)
	a.stampMeta(&t)
	if err := trace.SaveFile(out, &t); err != nil {
		return err
	}
	fmt.Fprintf(a.stderr, "%s: predict: wrote %s: %d points, %s to %s, fixture %s\n",
		programName, out, len(t.Points), formatHz(freqs[0]), formatHz(freqs[len(freqs)-1]), fixtureText(fx))
	if params, err := extract.Analyze(t.Points); err == nil {
		for _, line := range params.Lines() {
			fmt.Fprintf(a.stderr, "%s: predict: %s\n", programName, line)
		}
	}
	if a.plot {
		return a.drawBode(s.Sweep.FromHz, s.Sweep.ToHz, namedTrace{filepath.Base(out), &t})
	}
	return nil
}

// ---- fit --------------------------------------------------------------------

func (a *app) fitCommand() *cobra.Command {
	var (
		free   []string
		asJSON bool
		nodes  netlist.Options
	)
	cmd := &cobra.Command{
		Use:   "fit NET.cir MEAS.csv --free R1,C2",
		Short: "adjust chosen components so the netlist's prediction matches a measured trace",
		Long: `fit adjusts the components named with --free so that the prediction of the
netlist (with the fixture) matches a measured trace in the least-squares
sense over gain (dB) and phase (degrees), weighted by the trace's
uncertainty columns when it has them. It reports each fitted value with its
standard uncertainty, the nearest IEC 60063 E12, E24 and E96 values, and the
RMS residual.`,
		Example: `  tonetrace fit filter.cir measured.csv --free C1,C2
  tonetrace fit filter.cir measured.csv --free R3 --json > fit.json`,
		Args: exactArgs(2, "give a netlist and a measured trace: tonetrace fit NET.cir MEAS.csv --free R1,C2"),
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.fit(cmd.Flags(), args[0], args[1], free, asJSON, nodes)
		},
	}
	f := cmd.Flags()
	f.StringSliceVar(&free, "free", nil, "components to adjust, comma-separated (e.g. R1,C2)")
	f.BoolVar(&asJSON, "json", false, "print the result as JSON on stdout")
	addNetworkFlags(f, &nodes)
	return cmd
}

func (a *app) fit(fs *pflag.FlagSet, netPath, measPath string, free []string, asJSON bool, nodes netlist.Options) error {
	if len(free) == 0 {
		return usagef("fit: name the components to adjust with --free, e.g. --free R1,C2")
	}
	s, err := a.settings(fs, fixtureFlags)
	if err != nil {
		return err
	}
	if err := validate(s); err != nil {
		return err
	}
	n, err := nodes.ParseFile(netPath)
	if err != nil {
		return usageError{err}
	}
	meas, err := trace.LoadFile(measPath)
	if err != nil {
		return usageError{err}
	}
	fx := fixture(s)
	model, err := fit.NewNetlistModel(n, fx)
	if err != nil {
		return usageError{err}
	}
	res, err := fit.Fit(model, meas.Points, free, fit.Options{})
	var notConverged *fit.NotConvergedError
	if err != nil && !errors.As(err, &notConverged) {
		return usageError{err}
	}
	if asJSON {
		b, jerr := res.MarshalJSON()
		if jerr != nil {
			return jerr
		}
		fmt.Fprintln(a.stdout, string(b))
	} else {
		fmt.Fprintf(a.stdout, "fit of %s to %s (%d points), fixture %s\n", filepath.Base(netPath), filepath.Base(measPath), len(meas.Points), fixtureText(fx))
		fmt.Fprintf(a.stdout, "%-8s %14s %14s %10s %10s %10s\n", "part", "value", "uncertainty", "E12", "E24", "E96")
		for _, c := range res.Components {
			k := netlist.Resistor
			if e, ok := n.Element(c.Name); ok {
				k = e.Kind
			}
			fmt.Fprintf(a.stdout, "%-8s %14s %14s %10s %10s %10s\n", c.Name, formatPart(k, c.Value, 5), "±"+formatPart(k, c.Uncertainty, 2),
				formatPart(k, c.E12, 3), formatPart(k, c.E24, 3), formatPart(k, c.E96, 3))
		}
		fmt.Fprintf(a.stdout, "rms residual %.3f dB, %.2f°\n", res.RMSdB, res.RMSdeg)
	}
	if err != nil {
		return fmt.Errorf("%w; the values above are the best found, not a converged fit", err)
	}
	return nil
}

// formatPart writes a component value with its unit and the given
// number of significant digits: "4.7 kΩ", "220 nF", "10 mH".
func formatPart(k netlist.Kind, v float64, digits int) string {
	unit := k.Unit()
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'g', digits, 64) + " " + unit
	}
	const prefixes = "fpnµm kMG"
	e := int(math.Floor(math.Log10(math.Abs(v)) / 3))
	e = max(-5, min(3, e))
	prefix := strings.TrimSpace(string([]rune(prefixes)[e+5]))
	return strconv.FormatFloat(v/math.Pow(1000, float64(e)), 'g', digits, 64) + " " + prefix + unit
}

// ---- devices ----------------------------------------------------------------

func (a *app) devicesCommand() *cobra.Command {
	var (
		backend string
		asJSON  bool
	)
	cmd := &cobra.Command{
		Use:   "devices",
		Short: "list playback and capture devices",
		Long: `devices lists the sound system's playback and capture devices: index,
backend, name, description, channel count and native rate. Choose a device
by its name (stored in settings as audio.device, audio.playback or
audio.capture) or by its index.`,
		Example: `  tonetrace devices
  tonetrace devices --backend pulseaudio --json`,
		Args: exactArgs(0, "tonetrace devices takes no arguments"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			list, err := device.List(backend)
			if err != nil {
				return usagef("cannot list devices of backend %q: %v; try another --backend (pulseaudio, alsa, jack, null)", backend, err)
			}
			if asJSON {
				type jsonDevice struct {
					Index       int    `json:"index"`
					Kind        string `json:"kind"`
					Backend     string `json:"backend"`
					Name        string `json:"name"`
					Description string `json:"description"`
					Default     bool   `json:"default"`
					Channels    int    `json:"channels"`
					Rate        int    `json:"rate"`
				}
				out := make([]jsonDevice, len(list))
				for i, d := range list {
					out[i] = jsonDevice{d.Index, d.Kind, d.Backend, d.Name, d.Description, d.Default, d.Channels, d.Rate}
				}
				enc := json.NewEncoder(a.stdout)
				enc.SetIndent("", "  ")
				return enc.Encode(out)
			}
			if len(list) == 0 {
				fmt.Fprintf(a.stderr, "%s: devices: no devices found; check that the sound system runs, or try --backend\n", programName)
				return nil
			}
			fmt.Fprintf(a.stdout, "%-8s %3s %-11s %-32s %-32s %4s %7s\n", "kind", "#", "backend", "name", "description", "ch", "rate")
			unknown := false
			for _, d := range list {
				mark := ""
				if d.Default {
					mark = " (default)"
				}
				fmt.Fprintf(a.stdout, "%-8s %3d %-11s %-32s %-32s %4s %7s%s\n", d.Kind, d.Index, d.Backend, clip(d.Name, 32), clip(d.Description, 32),
					orUnknown(d.Channels), orUnknown(d.Rate), mark)
				unknown = unknown || d.Channels == 0 || d.Rate == 0
			}
			if unknown {
				fmt.Fprintf(a.stdout, "– : not reported by the device (ALSA lists its plugins so)\n")
			}
			return nil
		},
	}
	cmd.Flags().StringVar(&backend, "backend", "", "sound system: pulseaudio, alsa, jack, null (default: the first that answers)")
	cmd.Flags().BoolVar(&asJSON, "json", false, "print the list as JSON")
	return cmd
}

// orUnknown formats a count the device reported, or "–" for 0 (not
// reported).
func orUnknown(n int) string {
	if n == 0 {
		return "–"
	}
	return strconv.Itoa(n)
}

// clip shortens s to at most n runes, marking the cut with an ellipsis.
func clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// ---- sweep ------------------------------------------------------------------

// simOptions choose the virtual bench instead of a device.
type simOptions struct {
	on     bool
	net    string
	faults string
	paced  bool
}

func addSimFlags(f *pflag.FlagSet, sim *simOptions) {
	f.BoolVar(&sim.on, "sim", false, "measure the virtual bench (a simulated interface and network) instead of a device")
	f.StringVar(&sim.net, "sim-net", "", "netlist of the simulated network (default: a built-in presence peak)")
	f.StringVar(&sim.faults, "sim-fault", "", "wiring faults to simulate, comma-separated: "+bench.FormatFaults(bench.AllFaults()))
}

// deviceFlags bind the device choice and routing to settings.
var deviceFlags = map[string]string{
	"device":   "audio.device",
	"playback": "audio.playback",
	"capture":  "audio.capture",
	"backend":  "audio.backend",
	"outputs":  "audio.stimulus_outputs",
	"rate":     "audio.rate",
	"ref":      "audio.ref_input",
	"dut":      "audio.dut_input",
	"level":    "output.level_dbfs",
}

func addDeviceFlags(f *pflag.FlagSet) {
	f.String("device", "", "device for playback and capture (name or index from 'tonetrace devices')")
	f.String("playback", "", "playback device, when it differs from --device")
	f.String("capture", "", "capture device, when it differs from --device")
	f.String("backend", "auto", "sound system: auto, pulseaudio, alsa, jack, null")
	f.String("outputs", "", "1-based outputs that carry the stimulus, e.g. 1,2 (default: every output)")
	f.String("rate", "48k", "sample rate, Hz")
	f.Int("ref", 2, "1-based input receiving the looped-back stimulus (the reference)")
	f.Int("dut", 1, "1-based input behind the network (the response)")
	f.String("level", "-20", "output level: peak dBFS of the stimulus, at most the cap (output.cap_dbfs)")
}

// openStream opens the virtual bench or the configured device. The bench is
// returned too when it is the stream (for live component changes).
func openStream(s *config.Settings, sim simOptions) (audio.Stream, *bench.Bench, error) {
	outs, err := config.ParseChannels(s.Audio.StimulusOutputs) // checked by Validate
	if err != nil {
		return nil, nil, usageError{err}
	}
	routing := audio.Routing{Stimulus: audio.MaskOf(outs...), Response: s.Audio.DUTInput, Reference: s.Audio.RefInput}
	out := audio.DefaultOutputConfig()
	out.LevelDBFS, out.CapDBFS, out.FadeMS = s.Output.LevelDBFS, s.Output.CapDBFS, max(1, s.Output.FadeMS)
	if sim.on {
		cfg := bench.Config{
			Rate: s.Audio.Rate, PeriodMS: int(s.Audio.PeriodMS), Paced: sim.paced,
			Fixture: fixture(s), Routing: routing, Output: out, Seed: 1,
		}
		if sim.net != "" {
			n, err := netlist.ParseFile(sim.net)
			if err != nil {
				return nil, nil, usageError{err}
			}
			cfg.Netlist = n
		}
		if sim.faults != "" {
			f, err := bench.ParseFaults(sim.faults)
			if err != nil {
				return nil, nil, usageError{err}
			}
			cfg.Faults = f
		}
		b, err := bench.Open(cfg)
		if err != nil {
			return nil, nil, usageError{err}
		}
		return b, b, nil
	}
	if sim.net != "" || sim.faults != "" {
		return nil, nil, usagef("--sim-net and --sim-fault need --sim")
	}
	cfg := device.DefaultConfig()
	cfg.Backend = s.Audio.Backend
	if cfg.Backend == config.BackendAuto {
		cfg.Backend = ""
	}
	cfg.Device, cfg.Playback, cfg.Capture = s.Audio.Device, s.Audio.Playback, s.Audio.Capture
	cfg.Rate, cfg.PeriodMS = s.Audio.Rate, int(s.Audio.PeriodMS)
	cfg.InChannels = max(2, s.Audio.RefInput, s.Audio.DUTInput)
	cfg.Routing, cfg.Output = routing, out
	st, err := device.Open(cfg)
	if err != nil {
		return nil, nil, fmt.Errorf("%w; list devices with 'tonetrace devices', or try the virtual bench with --sim", err)
	}
	return st, nil, nil
}

func (a *app) sweepCommand() *cobra.Command {
	var (
		out string
		sim simOptions
	)
	cmd := &cobra.Command{
		Use:   "sweep -o OUT.csv",
		Short: "measure a network's response with a stepped sine or a multitone, without the screen",
		Long: `sweep measures the network wired between output 1 and input 1 against the
loopback from output 2 to input 2, writes the response with its
uncertainty, SNR and distortion per point, and reports wiring faults in
plain words on stderr. --sim measures the virtual bench instead of a device.

Exit status: 0 for a valid measurement; 3 when the measurement is invalid
(a dead or clipping input, the device lost); 2 for bad usage. The measured
points are written in every case.

Caution: start at a low --level, mute monitors and take headphones off;
never feed speaker-level or mains-referenced signals into the interface
without an attenuator or isolation.`,
		Example: `  tonetrace sweep --sim -o demo.csv
  tonetrace sweep --device "USB Audio" -o filter.csv --from 20 --to 20k --ppd 12 --level -24
  tonetrace sweep --sim --sim-fault hum,invert -o faults.csv`,
		Args: exactArgs(0, "give the output with -o"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			return a.sweep(cmd.Context(), cmd.Flags(), out, sim)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "output", "o", "", "trace file to write (CSV)")
	f.String("from", "20", "lowest frequency, Hz")
	f.String("to", "20k", "highest frequency, Hz")
	f.Int("ppd", 10, "points per decade")
	f.String("adaptive", "off", "adaptive plan: add points where the curve bends by more than this many dB")
	f.String("method", "steps", "steps (stepped sine) or multitone")
	addDeviceFlags(f)
	addSimFlags(f, &sim)
	return cmd
}

var sweepFlags = mergeFlags(deviceFlags, map[string]string{
	"from":     "sweep.from_hz",
	"to":       "sweep.to_hz",
	"ppd":      "sweep.points_per_decade",
	"adaptive": "sweep.adaptive_db",
	"method":   "sweep.method",
})

func (a *app) sweep(ctx context.Context, fs *pflag.FlagSet, out string, sim simOptions) error {
	if err := checkWritable(out); err != nil {
		return err
	}
	s, err := a.settings(fs, sweepFlags)
	if err != nil {
		return err
	}
	if err := validate(s); err != nil {
		return err
	}
	stream, _, err := openStream(s, sim)
	if err != nil {
		return err
	}
	defer stream.Close()
	if d, ok := stream.(*device.Stream); ok {
		// miniaudio converts silently; say what it does behind our back.
		for _, c := range d.Conversions() {
			fmt.Fprintf(a.stderr, "%s: sweep: note: %s\n", programName, c)
		}
	}

	cfg := engine.Config{
		From: s.Sweep.FromHz, To: s.Sweep.ToHz, PerDecade: s.Sweep.PointsPerDecade,
		LevelDBFS: s.Output.LevelDBFS, MaxDuration: 10 * time.Minute,
		// Without a screen nothing needs a quick reaction, so the
		// stimulus is queued well ahead: a busy laptop can pause the
		// program for a quarter second without a dropout.
		Ahead: 250 * time.Millisecond,
	}
	if s.Sweep.Method == config.MethodMultitone {
		cfg.Method = engine.Multitone
	}
	if s.Sweep.AdaptiveDB > 0 {
		cfg.Adaptive = &plan.Adaptive{From: s.Sweep.FromHz, To: s.Sweep.ToHz, TolDB: s.Sweep.AdaptiveDB,
			TolDeg: 10 * s.Sweep.AdaptiveDB, StartPerDecade: 2}
	}
	eng := engine.New(stream, cfg)
	done := make(chan error, 1)
	go func() { done <- eng.Run(ctx) }()
	progress := newProgressPrinter(a.stderr)
	var runErr error
	for ev := range eng.Events() {
		progress.event(ev)
	}
	runErr = <-done
	progress.finish()

	res := eng.Result()
	t := res.Trace
	if len(t.Points) == 0 {
		if runErr != nil {
			if errors.Is(runErr, context.Canceled) {
				return fmt.Errorf("%w: interrupted before the first point", errInvalidMeasurement)
			}
			return fmt.Errorf("%w: %v; nothing was measured", errInvalidMeasurement, runErr)
		}
		return fmt.Errorf("%w: no point was measured", errInvalidMeasurement)
	}
	invalid := 0
	var bad []string
	for i, ok := range res.Valid {
		if !ok {
			invalid++
			bad = append(bad, strconv.FormatFloat(t.Points[i].Freq, 'g', 6, 64))
		}
	}
	if invalid > 0 {
		t.SetMeta("invalid_points_hz", strings.Join(bad, " "))
	}
	if moved := movedPoints(res.Points); moved != "" {
		t.SetMeta("moved_clear_of_hum", moved)
		fmt.Fprintf(a.stderr, "%s: sweep: note: measured clear of the mains hum lines: %s\n", programName, moved)
	}
	if !res.Complete {
		t.SetMeta("complete", "no: the run ended early")
	}
	if sim.on {
		t.SetMeta("source", "virtual bench")
		if sim.faults != "" {
			t.SetMeta("simulated_faults", sim.faults)
		}
	}
	a.stampMeta(&t)
	if err := trace.SaveFile(out, &t, trace.ColGainU, trace.ColPhaseU, trace.ColSNR, trace.ColTHD); err != nil {
		return err
	}
	fmt.Fprintf(a.stderr, "%s: sweep: wrote %s: %d points (%d invalid), latency %d frames, %.2f s of audio\n",
		programName, out, len(t.Points), invalid, res.Latency, res.Timing.Seconds(res.Timing.AudioFrames))
	for _, p := range res.Problems {
		fmt.Fprintf(a.stderr, "%s: sweep: problem: %s\n", programName, p)
	}
	a.reportInvalidPoints(res.Points)
	switch {
	case errors.Is(runErr, context.Canceled):
		return fmt.Errorf("%w: interrupted; the %d points measured before that are in %s (marked incomplete)", errInvalidMeasurement, len(t.Points), out)
	case runErr != nil:
		return fmt.Errorf("%w: %v; the %d points measured before that are in %s", errInvalidMeasurement, runErr, len(t.Points), out)
	case invalid > 0:
		return fmt.Errorf("%w: %d of %d points are invalid (see the problems above); fix the wiring and measure again", errInvalidMeasurement, invalid, len(t.Points))
	}
	return nil
}

// movedPoints lists the points measured off their planned frequency to
// keep clear of a mains hum line ("100 Hz at 98 Hz, …"), or "".
func movedPoints(points []engine.PointEvent) string {
	var moved []string
	for _, p := range points {
		if p.Planned != 0 && p.Planned != p.Point.Freq {
			moved = append(moved, formatHz(p.Planned)+" at "+formatHz(p.Point.Freq))
		}
	}
	return strings.Join(moved, ", ")
}

// reportInvalidPoints says on stderr why points are invalid: one line per
// cause (a problem code on an input), with the frequencies it struck and
// the message and fix of its first point.
func (a *app) reportInvalidPoints(points []engine.PointEvent) {
	type cause struct {
		first engine.Problem
		freqs []float64
	}
	var order []string
	causes := map[string]*cause{}
	for _, p := range points {
		if p.Valid || len(p.Problems) == 0 {
			continue
		}
		pr := p.Problems[0]
		key := fmt.Sprintf("%s/%d", pr.Code, pr.Input)
		c, ok := causes[key]
		if !ok {
			c = &cause{first: pr}
			causes[key] = c
			order = append(order, key)
		}
		c.freqs = append(c.freqs, p.Point.Freq)
	}
	for _, key := range order {
		c := causes[key]
		slices.Sort(c.freqs)
		where := make([]string, 0, len(c.freqs))
		for _, f := range c.freqs {
			where = append(where, formatHz(f))
		}
		at := strings.Join(where, ", ")
		if len(where) > 4 {
			at = fmt.Sprintf("%d points, %s … %s", len(where), where[0], where[len(where)-1])
		}
		fmt.Fprintf(a.stderr, "%s: sweep: invalid at %s: %s; %s\n", programName, at, c.first.Message, c.first.Fix)
	}
}

// progressPrinter shows a sweep's progress on stderr: a bar redrawn in
// place on a terminal, plain lines every tenth otherwise, and each new
// problem once.
type progressPrinter struct {
	w       io.Writer
	tty     bool
	lastTen int
	seen    map[string]bool
	drawn   bool
}

func newProgressPrinter(w io.Writer) *progressPrinter {
	p := &progressPrinter{w: w, lastTen: -1, seen: map[string]bool{}}
	if f, ok := w.(*os.File); ok {
		p.tty = term.IsTerminal(f.Fd())
	}
	return p
}

func (p *progressPrinter) event(ev engine.Event) {
	switch e := ev.(type) {
	case engine.ProgressEvent:
		if e.Total <= 0 {
			return
		}
		frac := float64(e.Done) / float64(e.Total)
		if p.tty {
			const width = 30
			n := int(frac * width)
			fmt.Fprintf(p.w, "\r%s: sweep [%s%s] %3.0f%% %s ", programName, strings.Repeat("█", n), strings.Repeat("·", width-n), 100*frac, hzOrBlank(e.Freq))
			p.drawn = true
			return
		}
		if ten := int(frac * 10); ten != p.lastTen {
			p.lastTen = ten
			fmt.Fprintf(p.w, "%s: sweep: %d of %d points%s\n", programName, e.Done, e.Total, strings.TrimRight(" "+hzOrBlank(e.Freq), " "))
		}
	case engine.StatusEvent:
		for _, pr := range e.Status.Problems {
			key := pr.Code + "/" + strconv.Itoa(pr.Input)
			if p.seen[key] {
				continue
			}
			p.seen[key] = true
			p.clearLine()
			fmt.Fprintf(p.w, "%s: sweep: %s — %s\n", programName, pr.Message, pr.Fix)
		}
	}
}

func hzOrBlank(f float64) string {
	if math.IsNaN(f) || f <= 0 {
		return ""
	}
	return "at " + formatHz(f)
}

func (p *progressPrinter) clearLine() {
	if p.tty && p.drawn {
		fmt.Fprint(p.w, "\r\033[K")
		p.drawn = false
	}
}

func (p *progressPrinter) finish() { p.clearLine() }

// ---- the live screen --------------------------------------------------------

func (a *app) liveFlags(f *pflag.FlagSet, sim *simOptions) {
	f.String("from", "20", "lowest frequency, Hz")
	f.String("to", "20k", "highest frequency, Hz")
	f.Int("ppd", 10, "points per decade of the stepped sweep")
	f.String("mode", "stepped", "way of measuring at the start: stepped, multitone, tone, any")
	f.StringVar(&a.model, "model", "", "netlist whose prediction (with the fixture) is drawn over the measurement")
	f.BoolVar(&a.noColor, "no-color", false, "draw without colour (also when NO_COLOR is set)")
	f.String("source-r", "100", "output resistance of the driving output, ohms (for --model and the bench)")
	f.String("load-r", "20k", "input resistance of the measuring input, ohms")
	f.String("load-c", "100p", "capacitance across the measuring input, farads")
	addDeviceFlags(f)
	addSimFlags(f, sim)
}

var liveFlagKeys = mergeFlags(deviceFlags, fixtureFlags, map[string]string{
	"from": "sweep.from_hz",
	"to":   "sweep.to_hz",
	"ppd":  "sweep.points_per_decade",
})

func (a *app) demoCommand() *cobra.Command {
	var sim simOptions
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "the live screen on the virtual bench: a simulated interface and network",
		Long: `demo opens the live screen on the virtual bench: a simulated audio
interface with a network of our own between output 1 and input 1 and a
loopback to input 2. Nothing is played on a real device. Tab picks a
component and [ ] step it through its preferred values while the response
forms; --sim-fault shows how wiring faults look.`,
		Example: `  tonetrace demo
  tonetrace demo --sim-net testdata/networks/hum-notch.cir --mode multitone
  tonetrace demo --sim-fault hum,invert`,
		Args: exactArgs(0, "tonetrace demo takes no arguments"),
		RunE: func(cmd *cobra.Command, _ []string) error {
			sim.on = true
			return a.live(cmd.Context(), cmd.Flags(), sim)
		},
	}
	a.liveFlags(cmd.Flags(), &sim)
	cmd.Flags().Lookup("sim").Hidden = true
	return cmd
}

// live runs the live screen until the user quits.
func (a *app) live(ctx context.Context, fs *pflag.FlagSet, sim simOptions) error {
	out, ok := a.stdout.(*os.File)
	if !ok || !term.IsTerminal(out.Fd()) {
		return usagef("the live screen needs a terminal; for a measurement without one use 'tonetrace sweep -o OUT.csv'")
	}
	s, err := a.settings(fs, liveFlagKeys)
	if err != nil {
		return err
	}
	if err := validate(s); err != nil {
		return err
	}
	modeName, _ := fs.GetString("mode")
	mode, err := tui.ParseMode(modeName)
	if err != nil {
		return usageError{err}
	}
	var prediction *trace.Trace
	if a.model != "" {
		n, err := netlist.ParseFile(a.model)
		if err != nil {
			return usageError{err}
		}
		d, err := mna.Build(n, fixture(s))
		if err != nil {
			return usageError{err}
		}
		freqs, _ := plan.PerDecade(s.Sweep.FromHz, s.Sweep.ToHz, 50)
		t, err := mna.Predict(d, freqs)
		if err != nil {
			return usageError{err}
		}
		prediction = &t
	}
	sim.paced = true
	if sim.on && s.Origin("audio.period_ms") == config.OriginDefault {
		// The simulated device needs no short period; 50 ms halves the
		// wake-ups of a 20 ms one and keeps the demo near 4 % of a core.
		s.Audio.PeriodMS = 50
	}
	stream, b, err := openStream(s, sim)
	if err != nil {
		return err
	}
	logger, logFile, err := openLog()
	if err != nil {
		stream.Close()
		return err
	}
	defer logFile.Close()
	// While the screen owns the terminal, what the sound libraries print
	// on their own (an ALSA underrun report) goes to the log, not across
	// the screen; restored before any error reaches the user.
	if f, ok := logFile.(*os.File); ok {
		if restore, err := device.RedirectStderr(f); err == nil {
			defer restore()
		} else {
			logger.Warn("standard error stays on the terminal", "err", err)
		}
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	sess := newLiveSession(ctx, stream, b, s, mode, logger)
	info := tui.InfoMsg{Device: s.Audio.Device, Backend: s.Audio.Backend, Rate: stream.Rate(), Demo: b != nil,
		From: s.Sweep.FromHz, To: s.Sweep.ToHz}
	if b != nil {
		info.Device, info.Backend = "virtual bench", "bench"
		if prediction == nil {
			freqs, _ := plan.PerDecade(s.Sweep.FromHz, s.Sweep.ToHz, 50)
			if t, err := b.Expected(freqs); err == nil {
				prediction = &t
			}
		}
	} else if s.Audio.Playback != "" || s.Audio.Capture != "" {
		info.Device = cmp.Or(s.Audio.Playback, s.Audio.Device, "default") + " → " + cmp.Or(s.Audio.Capture, s.Audio.Device, "default")
	} else if info.Device == "" {
		info.Device = "default device"
	}
	if prediction != nil {
		sess.send(tui.PredictionMsg{Trace: prediction, Fixture: fixtureText(fixture(s))})
	}
	sess.start()
	m := tui.New(sess, tui.Options{
		Events:  sess.events,
		Logger:  logger,
		Profile: tui.ProfileFor(out, a.noColor),
		Mode:    mode,
		State:   tui.StateRunning,
		Info:    info,
		From:    s.Sweep.FromHz,
		To:      s.Sweep.ToHz,
	})
	err = tui.Run(ctx, m, tui.RunOptions{Out: out})
	// Teardown in order: stop the measurement, then the stream.
	cancel()
	sess.stop()
	stream.Close()
	if errors.Is(err, context.Canceled) {
		return nil
	}
	return err
}

// openLog opens the log file in the user's cache directory; the screen
// never logs to the terminal.
func openLog() (*slog.Logger, io.Closer, error) {
	dir, err := os.UserCacheDir()
	if err != nil {
		dir = os.TempDir()
	}
	dir = filepath.Join(dir, "tonetrace")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, nil, fmt.Errorf("cannot create the log directory %s: %w", dir, err)
	}
	return tui.LogTo(filepath.Join(dir, "tonetrace.log"), slog.LevelInfo)
}

// liveSession runs the measurement behind the live screen and carries out
// what the screen asks for (it is the screen's tui.Controller). One
// measurement runs at a time; a change of mode, tone or a resume cancels
// it and starts the next once it has stopped.
type liveSession struct {
	ctx    context.Context
	stream audio.Stream
	bench  *bench.Bench
	s      *config.Settings
	log    *slog.Logger
	events chan tea.Msg

	mu     sync.Mutex
	mode   tui.Mode
	toneHz float64
	paused bool
	cancel context.CancelFunc
	done   chan struct{} // closed when the current run has stopped
	wg     sync.WaitGroup
}

func newLiveSession(ctx context.Context, st audio.Stream, b *bench.Bench, s *config.Settings, mode tui.Mode, log *slog.Logger) *liveSession {
	return &liveSession{ctx: ctx, stream: st, bench: b, s: s, log: log, mode: mode, toneHz: 1000,
		events: make(chan tea.Msg, 256)}
}

// send delivers a message to the screen unless the session is ending.
func (l *liveSession) send(m tea.Msg) {
	select {
	case l.events <- m:
	case <-l.ctx.Done():
	}
}

// start begins a measurement in the current mode (after the previous one
// has stopped).
func (l *liveSession) start() {
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.cancel != nil {
		l.cancel()
	}
	prev := l.done
	ctx, cancel := context.WithCancel(l.ctx)
	done := make(chan struct{})
	l.cancel, l.done = cancel, done
	mode, tone := l.mode, l.toneHz
	l.wg.Add(1)
	go func() {
		defer l.wg.Done()
		defer close(done)
		if prev != nil {
			<-prev
		}
		if ctx.Err() != nil {
			return
		}
		l.run(ctx, mode, tone)
	}()
}

// stop ends the measurement and waits for it.
func (l *liveSession) stop() {
	l.mu.Lock()
	if l.cancel != nil {
		l.cancel()
	}
	l.mu.Unlock()
	l.wg.Wait()
}

// run measures in one mode until ctx ends, turning engine events into
// screen messages.
func (l *liveSession) run(ctx context.Context, mode tui.Mode, toneHz float64) {
	if mode == tui.ModeAny {
		l.runAnySignal(ctx)
		return
	}
	// Status five times a second is plenty for a person and halves the
	// redraws the monitors cause.
	cfg := engine.Config{From: l.s.Sweep.FromHz, To: l.s.Sweep.ToHz, PerDecade: l.s.Sweep.PointsPerDecade, Repeat: true,
		StatusInterval: 200 * time.Millisecond}
	switch mode {
	case tui.ModeMultitone:
		cfg.Method = engine.Multitone
		cfg.Periods = 1
	case tui.ModeTone:
		cfg.Plan = []float64{toneHz}
	}
	eng := engine.New(l.stream, cfg)
	errc := make(chan error, 1)
	go func() { errc <- eng.Run(ctx) }()
	// Invalid points (dead or clipping input, muted output, a point on a
	// hum line) are not drawn: the screen shows what can be trusted, and
	// the problems pane says why the rest is missing.
	restart := false
	for ev := range eng.Events() {
		switch e := ev.(type) {
		case engine.PointEvent:
			restart = restart || e.Index == 0
			switch {
			case !e.Valid:
			case mode == tui.ModeTone:
				l.send(tui.ToneMsg{Point: e.Point})
			default:
				l.send(tui.PointMsg{Point: e.Point, Restart: restart})
				restart = false
			}
		case engine.TraceEvent:
			if mode != tui.ModeTone {
				t := validOnly(e.Trace, e.Valid)
				l.send(tui.TraceMsg{Trace: &t, Complete: e.Complete})
			}
		case engine.ProgressEvent:
			if mode == tui.ModeStepped {
				l.send(tui.ProgressMsg{Done: e.Done, Total: e.Total, Freq: e.Freq, Sweeps: e.Sweep})
			}
		case engine.StatusEvent:
			l.send(tui.StatusMsg{Status: screenStatus(e.Status, l.stream.Rate())})
		}
	}
	err := <-errc
	if err != nil && ctx.Err() == nil {
		l.log.Error("measurement stopped", "err", err)
		l.send(tui.ErrMsg{Err: err, Fatal: errors.Is(err, audio.ErrDeviceLost)})
	}
}

// validOnly returns t without the points valid marks false.
func validOnly(t trace.Trace, valid []bool) trace.Trace {
	pts := make([]trace.Point, 0, len(t.Points))
	for i, p := range t.Points {
		if i >= len(valid) || valid[i] {
			pts = append(pts, p)
		}
	}
	t.Points = pts
	return t
}

// screenStatus turns the monitors' status into the screen's; rate is the
// stream's sample rate in hertz.
func screenStatus(st engine.Status, rate int) tui.Status {
	out := tui.Status{LatencyMs: math.NaN(), SNRdB: math.NaN(), DriftPPM: st.DriftPPM,
		Dropouts: st.Stats.Dropped + st.Stats.Underruns}
	if st.LatencyKnown {
		out.LatencyMs = 1000 * float64(st.Latency) / float64(rate)
	}
	for _, in := range st.Inputs {
		if in.Role == "" {
			continue
		}
		out.Inputs = append(out.Inputs, tui.InputStatus{Name: in.Role, RMSdBFS: in.RMSDBFS, PeakdBFS: in.PeakDBFS,
			Clipping: in.Clipped > 0, Dead: math.IsInf(in.PeakDBFS, -1)})
	}
	for _, p := range st.Problems {
		severe := p.Code == engine.CodeDeadRef || p.Code == engine.CodeDeadDUT || p.Code == engine.CodeClip || p.Code == engine.CodeUnplug
		out.Problems = append(out.Problems, tui.Problem{Code: p.Code, Text: p.Message, Fix: p.Fix, Severe: severe})
	}
	return out
}

// runAnySignal plays pink noise and estimates H1 from whatever arrives,
// refreshing the screen twice a second with the response and its
// coherence.
func (l *liveSession) runAnySignal(ctx context.Context) {
	rate := float64(l.stream.Rate())
	// Two accumulators, restarted in turn every half window: the one
	// shown always holds the last half window to whole window of signal,
	// so the trace follows a component being turned.
	w, younger := new(spectral.Welch), new(spectral.Welch)
	for _, p := range []**spectral.Welch{&w, &younger} {
		var err error
		if *p, err = spectral.NewWelch(8192, rate); err != nil {
			l.send(tui.ErrMsg{Err: err})
			return
		}
	}
	half := int64(anyWindow.Seconds() * rate / 2)
	var fed int64
	noise, err := stimulus.NewPinkNoise(7, 0, 0)
	if err != nil {
		l.send(tui.ErrMsg{Err: err})
		return
	}
	var wg sync.WaitGroup
	wg.Add(1)
	go func() { // the writer keeps the playout queue fed, and ends it
		defer wg.Done()
		defer l.stream.Finish() // the writer's call (see audio.Stream)
		buf := make([]float64, l.stream.Rate()/20)
		for ctx.Err() == nil {
			noise.Read(buf)
			if _, err := l.stream.Write(ctx, buf); err != nil {
				return
			}
		}
	}()
	defer wg.Wait()
	in, _ := l.stream.Channels()
	r := l.stream.Routing()
	dst := make([][]float64, in)
	for i := range dst {
		dst[i] = make([]float64, 4096)
	}
	var lv inputLevels
	next := time.Now().Add(500 * time.Millisecond)
	for ctx.Err() == nil {
		n, _, err := l.stream.Read(ctx, dst)
		if err != nil {
			if ctx.Err() == nil {
				l.send(tui.ErrMsg{Err: err, Fatal: errors.Is(err, audio.ErrDeviceLost)})
			}
			return
		}
		ref, resp := dst[r.Reference-1][:n], dst[r.Response-1][:n]
		w.Add(ref, resp)
		younger.Add(ref, resp)
		lv.add(ref, resp)
		if fed += int64(n); fed >= half {
			fed = 0
			w.Reset()
			w, younger = younger, w
		}
		if time.Now().After(next) {
			next = time.Now().Add(500 * time.Millisecond)
			out := l.stream.Output()
			st := lv.status(out.Level(), out.Muted(), l.stream.Stats())
			l.send(tui.StatusMsg{Status: st})
			lv = inputLevels{}
			// Over a silent reference H1 is no measurement: nothing is
			// drawn, and the Inputs pane says why.
			if w.Segments() > 0 && (len(st.Inputs) == 0 || !st.Inputs[0].Dead) {
				if t, err := w.Trace(l.s.Sweep.FromHz, l.s.Sweep.ToHz, 24); err == nil {
					l.send(tui.TraceMsg{Trace: &t, Complete: true})
				}
			}
		}
	}
}

// inputLevels gathers the level of both inputs over one screen update of
// the any-signal mode, which has no engine and so no monitors of its own.
type inputLevels struct {
	ss, peak [2]float64 // reference, response
	n        int
}

func (lv *inputLevels) add(ref, resp []float64) {
	for k, x := range [2][]float64{ref, resp} {
		for _, v := range x {
			lv.ss[k] += v * v
			lv.peak[k] = max(lv.peak[k], math.Abs(v))
		}
	}
	lv.n += len(ref)
}

// anyWindow is how much signal, at most, the any-signal mode's trace
// averages; it shows the last half to whole of it.
const anyWindow = 4 * time.Second

// anyCrestDB is the crest factor of the pink noise the any-signal mode
// plays, about 12 dB: its RMS lies that far below the output level.
const anyCrestDB = 12

// status reports the levels, clipping and silent inputs: an input whose
// RMS lies DeadMarginDB below what the pink noise at levelDBFS gives
// through a unity loop hears nothing of it (unless the output is muted).
func (lv *inputLevels) status(levelDBFS float64, muted bool, st audio.Stats) tui.Status {
	out := tui.Status{LatencyMs: math.NaN(), SNRdB: math.NaN(), DriftPPM: math.NaN(), Dropouts: st.Dropped + st.Underruns}
	if lv.n == 0 {
		return out
	}
	deadDB := levelDBFS - anyCrestDB - engine.DeadMarginDB
	for k, name := range [2]string{"reference", "response"} {
		rms := 20 * math.Log10(math.Sqrt(lv.ss[k]/float64(lv.n)))
		out.Inputs = append(out.Inputs, tui.InputStatus{Name: name, RMSdBFS: rms, PeakdBFS: 20 * math.Log10(lv.peak[k]),
			Clipping: lv.peak[k] >= engine.ClipLevel, Dead: !muted && rms < deadDB})
	}
	return out
}

// The tui.Controller methods. Each returns at once.

func (l *liveSession) SetMode(m tui.Mode) error {
	if !m.Valid() {
		return fmt.Errorf("unknown way of measuring %d", m)
	}
	l.mu.Lock()
	l.mode, l.paused = m, false
	l.mu.Unlock()
	l.start()
	return nil
}

func (l *liveSession) Pause(paused bool) error {
	l.mu.Lock()
	l.paused = paused
	cancel := l.cancel
	l.mu.Unlock()
	if paused {
		if cancel != nil {
			cancel()
		}
		return nil
	}
	l.start()
	return nil
}

// Mute mutes or unmutes the output at once. A run that stopped because it
// started muted (its latency burst went unheard) starts again on unmute.
func (l *liveSession) Mute(muted bool) {
	if muted {
		l.stream.Output().Mute()
		return
	}
	l.stream.Output().Unmute()
	l.mu.Lock()
	ended := l.done != nil && isClosed(l.done)
	restart := ended && !l.paused && l.ctx.Err() == nil
	l.mu.Unlock()
	if restart {
		l.start()
	}
}

// isClosed reports whether ch is closed, without waiting.
func isClosed(ch chan struct{}) bool {
	select {
	case <-ch:
		return true
	default:
		return false
	}
}

func (l *liveSession) SetLevel(dBFS float64) error { return l.stream.Output().SetLevel(dBFS) }

func (l *liveSession) Level() (level, cap, def float64) {
	o := l.stream.Output()
	return o.Level(), o.Cap(), l.s.Output.LevelDBFS
}

func (l *liveSession) SetToneFreq(hz float64) error {
	if !(hz > 0 && hz < float64(l.stream.Rate())/2) {
		return fmt.Errorf("tone %g Hz is outside 0 to %d Hz; choose a frequency below half the sample rate", hz, l.stream.Rate()/2)
	}
	l.mu.Lock()
	l.toneHz = hz
	restart := l.mode == tui.ModeTone && !l.paused
	l.mu.Unlock()
	if restart {
		l.start()
	}
	return nil
}

func (l *liveSession) Tunables() []tui.Tunable {
	if l.bench == nil {
		return nil
	}
	var out []tui.Tunable
	for _, e := range l.bench.Netlist().Elements {
		unit := e.Kind.Unit()
		if unit == "" {
			continue
		}
		out = append(out, tui.Tunable{Name: e.Name, Value: e.Value, Unit: unit})
	}
	return out
}

func (l *liveSession) SetValue(name string, v float64) error {
	if l.bench == nil {
		return fmt.Errorf("components can be changed only on the virtual bench (tonetrace demo)")
	}
	// The bench applies the change between two of its periods; wait for it
	// off the screen's goroutine. stop waits for this goroutine too.
	l.wg.Add(1)
	go func() {
		defer l.wg.Done()
		if err := l.bench.SetValue(name, v); err != nil {
			l.send(tui.ErrMsg{Err: err})
			return
		}
		freqs, _ := plan.PerDecade(l.s.Sweep.FromHz, l.s.Sweep.ToHz, 50)
		if t, err := l.bench.Expected(freqs); err == nil {
			l.send(tui.PredictionMsg{Trace: &t, Fixture: fixtureText(fixture(l.s))})
		}
	}()
	return nil
}
