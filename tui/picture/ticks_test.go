package picture

import (
	"math"
	"slices"
	"testing"
)

func TestFreqTicks(t *testing.T) {
	tests := []struct {
		name     string
		min, max float64
		labels   []string
		nTicks   int
	}{
		// The audio band with 1-2-5 labels (common practice for Bode
		// plots; the labels the design asks for).
		{"20 Hz–20 kHz", 20, 20e3,
			[]string{"20", "50", "100", "200", "500", "1k", "2k", "5k", "10k", "20k"},
			8 + 9 + 9 + 2}, // 20…90, 100…900, 1k…9k, 10k, 20k
		{"10 Hz–100 kHz", 10, 100e3,
			[]string{"10", "20", "50", "100", "200", "500", "1k", "2k", "5k", "10k", "20k", "50k", "100k"},
			4*9 + 1},
		// Six decades: one label a decade (common practice).
		{"1 Hz–1 MHz", 1, 1e6,
			[]string{"1", "10", "100", "1k", "10k", "100k", "1M"}, 6*9 + 1},
		{"sub-hertz", 0.1, 10,
			[]string{"0.1", "0.2", "0.5", "1", "2", "5", "10"}, 2*9 + 1},
		{"gigahertz", 1e8, 2e9,
			[]string{"100M", "200M", "500M", "1G", "2G"}, 9 + 2},
		// Under 0.8 decade every integer multiple is labelled.
		{"200 Hz–1 kHz", 200, 1000,
			[]string{"200", "300", "400", "500", "600", "700", "800", "900", "1k"}, 9},
		// Under three labelled ticks: evenly spaced ticks.
		{"900 Hz–1.2 kHz", 900, 1200,
			[]string{"900", "950", "1.00k", "1.05k", "1.10k", "1.15k", "1.20k"}, 7},
		{"1.00–1.01 kHz", 1000, 1010,
			[]string{"1.000k", "1.002k", "1.004k", "1.006k", "1.008k", "1.010k"}, 6},
		{"empty range", 100, 100, nil, 0},
		{"non-positive", 0, 100, nil, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ticks := freqTicks(tc.min, tc.max)
			var labels []string
			for i, tk := range ticks {
				if tk.Value < tc.min*(1-tickEps) || tk.Value > tc.max*(1+tickEps) {
					t.Errorf("tick %g outside [%g, %g]", tk.Value, tc.min, tc.max)
				}
				if i > 0 && !(tk.Value > ticks[i-1].Value) {
					t.Errorf("ticks not ascending: %g after %g", tk.Value, ticks[i-1].Value)
				}
				if tk.Label != "" {
					labels = append(labels, tk.Label)
				}
			}
			if !slices.Equal(labels, tc.labels) {
				t.Errorf("labels %q, want %q", labels, tc.labels)
			}
			if len(ticks) != tc.nTicks {
				t.Errorf("%d ticks, want %d", len(ticks), tc.nTicks)
			}
		})
	}
}

func TestNiceStep(t *testing.T) {
	// The smallest 1-2-5 × 10^k step with at most n intervals (common
	// practice for axis ticks).
	tests := []struct {
		name string
		span float64
		n    int
		want float64
	}{
		{"exact fit", 60, 6, 10},
		{"just over", 61, 6, 20},
		{"fifty", 189, 6, 50},
		{"small", 1.3, 6, 0.5},
		{"tiny", 0.012, 6, 0.002},
		{"one interval", 7, 1, 10},
		{"zero span", 0, 6, 0},
		{"NaN span", math.NaN(), 6, 0},
		{"infinite span", math.Inf(1), 6, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := niceStep(tc.span, tc.n); math.Abs(got-tc.want) > 1e-12*tc.want {
				t.Errorf("niceStep(%g, %d) = %g, want %g", tc.span, tc.n, got, tc.want)
			}
		})
	}
}

func TestPhaseStep(t *testing.T) {
	// Degree steps that divide the circle (15°, 30°, 45°, 90°, 180°,
	// 360°) once above 10° (common practice for phase axes).
	tests := []struct {
		name string
		span float64
		want float64
	}{
		{"a few degrees", 12, 2},
		{"sixty", 60, 10},
		{"first-order", 99, 30},
		{"full wrap", 378, 90},
		{"second-order", 200, 45},
		{"unwrapped, two turns", 756, 180},
		{"unwrapped, six turns", 2000, 360},
		{"unwrapped, twenty turns", 7200, 1800},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := phaseStep(tc.span, maxIntervals); got != tc.want {
				t.Errorf("phaseStep(%g) = %g°, want %g°", tc.span, got, tc.want)
			}
		})
	}
}

func TestValueTicks(t *testing.T) {
	tests := []struct {
		name           string
		min, max, step float64
		labels         []string
	}{
		{"gain", -26.3, 1.2, 5, []string{"-25", "-20", "-15", "-10", "-5", "0"}},
		{"tenths", -0.35, 0.25, 0.1, []string{"-0.3", "-0.2", "-0.1", "0.0", "0.1", "0.2"}},
		{"phase", -94.5, 4.5, 30, []string{"-90", "-60", "-30", "0"}},
		{"edges included", -90, 0, 45, []string{"-90", "-45", "0"}},
		{"bad step", 0, 1, 0, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var labels []string
			for _, tk := range valueTicks(tc.min, tc.max, tc.step) {
				labels = append(labels, tk.Label)
			}
			if !slices.Equal(labels, tc.labels) {
				t.Errorf("labels %q, want %q", labels, tc.labels)
			}
		})
	}
}
