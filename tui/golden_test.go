package tui

import (
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"

	"tonetrace/dsp/trace"
)

// updating reports whether -update was given. The flag itself is
// registered by teatest's golden package, which this test binary links.
func updating() bool {
	f := flag.Lookup("update")
	return f != nil && f.Value.String() == "true"
}

// golden compares got with testdata/name.golden, or rewrites it with
// -update.
func golden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if updating() {
		if err := os.MkdirAll("testdata", 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(got+"\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if string(want) != got+"\n" {
		t.Errorf("screen differs from %s (go test -update rewrites it):\n--- got\n%s\n--- want\n%s", path, got, want)
	}
}

// scene is one screen state built from messages and keys.
type scene struct {
	name  string
	build func(m *Model)
}

// scenes are the golden screens. Their traces are the analytic networks
// of REFERENCES.md §5: the first-order RC low-pass (R = 10 kΩ,
// C = 15 nF, fc = 1061.0330 Hz) and the series RLC band-pass
// (L = 10 mH, C = 100 nF, R = 100 Ω, f₀ = 5032.921 Hz, Q = 3.16228).
func scenes() []scene {
	fr := logFreqs(20, 20e3, 61)
	info := InfoMsg{Device: "virtual bench", Backend: "bench", Rate: 48000, Demo: true}
	return []scene{
		{"rc-stepped", func(m *Model) {
			// A stepped sweep 40 points into its third pass over the
			// previous complete one, with the prediction for C = 18 nF.
			send(m, info, StateMsg{State: StateRunning}, StatusMsg{demoStatus()},
				TraceMsg{Trace: analytic(rcLowpassC(22e-9), fr), Complete: true},
				TraceMsg{Trace: analytic(rcLowpass, fr[:40])},
				ProgressMsg{Done: 40, Total: 61, Freq: fr[39], Sweeps: 2},
				PredictionMsg{Trace: analytic(rcLowpassC(18e-9), fr), Fixture: "source 100 Ω, load 47 kΩ"},
				key("c"))
		}},
		{"rlc-reference-problems", func(m *Model) {
			st := demoStatus()
			st.Inputs[1].Clipping, st.Inputs[1].PeakdBFS = true, 0
			st.Dropouts = 2
			st.Problems = []Problem{{Code: "swapped", Text: "the inputs look swapped: the response leads the reference by 180°",
				Fix: "swap the two input leads, or swap the inputs in the settings", Severe: true}}
			send(m, info, StateMsg{State: StateRunning, Muted: true}, StatusMsg{st},
				TraceMsg{Trace: analytic(rcLowpass, fr), Complete: true}, key("r"),
				TraceMsg{Trace: analytic(rlcBandpass, fr), Complete: true}, key("d"), key("w"), key("p"))
		}},
		{"tone", func(m *Model) {
			send(m, info, key("m"), key("m"), key("L"), key("L"))
			for i := range 40 {
				// The RC low-pass at the tone with a slow ±0.05 dB
				// wobble, as a reading would scatter.
				f := m.cursor
				p := trace.NewPoint(f, rcLowpass(f)*complex(math.Pow(10, 0.05*math.Sin(float64(i)/4)/20), 0))
				p.GainU, p.PhaseU, p.SNR, p.THD = 0.004, 0.03, 71, 0.012
				send(m, ToneMsg{Point: p})
			}
		}},
		{"any-coherence", func(m *Model) {
			t := analytic(rlcBandpass, fr)
			for i := range t.Points {
				// Coherence falls where the response is small.
				t.Points[i].Coherence = math.Min(0.999, 0.2+abs(t.Points[i].H))
			}
			send(m, info, key("M"), TraceMsg{Trace: t, Complete: true}, key("a"))
		}},
		{"help", func(m *Model) { send(m, key("?")) }},
		{"demo-tuning", func(m *Model) {
			send(m, info, TraceMsg{Trace: analytic(rcLowpass, fr), Complete: true}, key("tab"), key("]"))
		}},
	}
}

// TestGoldenScreens draws every scene at the minimum size and at 160×48
// and compares the plain text with testdata/.
func TestGoldenScreens(t *testing.T) {
	for _, sc := range scenes() {
		for _, sz := range [][2]int{{80, 24}, {160, 48}} {
			name := sc.name + "-" + itoa(sz[0]) + "x" + itoa(sz[1])
			t.Run(name, func(t *testing.T) {
				ctl := newFake()
				ctl.parts = demoParts()
				m := testModel(ctl, sz[0], sz[1], Options{})
				sc.build(m)
				checkFrame(t, m, sz[0], sz[1])
				golden(t, name, plain(m))
			})
		}
	}
}

func itoa(n int) string {
	b := []byte{}
	for n >= 10 {
		b = append([]byte{byte('0' + n%10)}, b...)
		n /= 10
	}
	return string(append([]byte{byte('0' + n)}, b...))
}
