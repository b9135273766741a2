package plot

import (
	"math"
	"testing"
)

// relTol is the tolerance for comparing computed floating-point steps and
// ranges with exact decimal expectations.
const relTol = 1e-12

func TestNiceStep(t *testing.T) {
	// Expected steps: the smallest 1-2-5 × 10^k step giving at most the
	// allowed number of intervals (common practice for axis ticks).
	tests := []struct {
		name    string
		span    float64
		maxInt  int
		want    float64
		comment string
	}{
		{"100 in 10", 100, 10, 10, "exact fit"},
		{"100 in 9", 100, 9, 20, "10 would give 10 intervals"},
		{"100 in 5", 100, 5, 20, "exact fit at 2"},
		{"100 in 4", 100, 4, 50, "20 gives 5"},
		{"100 in 1", 100, 1, 100, "one interval"},
		{"28 in 5 (RC gain)", 28, 5, 10, "5 gives 5.6"},
		{"90 in 5 (phase)", 90, 5, 20, "20 gives 4.5"},
		{"180 in 4", 180, 4, 50, "50 gives 3.6"},
		{"360 in 8", 360, 8, 50, "50 gives 7.2"},
		{"1 in 5 (flat trace)", 1, 5, 0.2, "exact fit at 0.2 despite rounding"},
		{"1 in 2", 1, 2, 0.5, ""},
		{"0.3 in 3", 0.3, 3, 0.1, "0.3/0.1 rounds above 3"},
		{"0.07 in 4", 0.07, 4, 0.02, ""},
		{"1e-6 in 5", 1e-6, 5, 2e-7, ""},
		{"3e12 in 6", 3e12, 6, 5e11, ""},
		{"max intervals 0 counts as 1", 7, 0, 10, ""},
		{"max intervals negative counts as 1", 7, -3, 10, ""},
		{"error: zero span", 0, 5, 0, "no step"},
		{"error: negative span", -10, 5, 0, "no step"},
		{"error: NaN span", math.NaN(), 5, 0, "no step"},
		{"error: infinite span", math.Inf(1), 5, 0, "no step"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := NiceStep(tt.span, tt.maxInt)
			if math.Abs(got-tt.want) > relTol*math.Abs(tt.want) {
				t.Errorf("NiceStep(%g, %d) = %g, want %g (%s)", tt.span, tt.maxInt, got, tt.want, tt.comment)
			}
		})
	}
}

func TestYRange(t *testing.T) {
	flat := []Series{{Freq: []float64{100, 1000}, Value: []float64{-6, -6}}}
	tests := []struct {
		name         string
		ax           Axis
		series       []Series
		rows         int
		lo, hi, step float64
	}{
		// Auto: data ± 5 % of its span (common practice margin).
		{"auto RC-like", Axis{Auto: true}, []Series{{Freq: []float64{20, 20000}, Value: []float64{0, -20}}}, 10, -21, 1, 5},
		// A flat trace gets the minimum span, 1 unit by default, centred.
		{"flat default min span", Axis{Auto: true}, flat, 10, -6.5, -5.5, 0.2},
		{"flat min span 10", Axis{Auto: true, MinSpan: 10}, flat, 10, -11, -1, 2},
		{"fixed", Axis{Min: -40, Max: 10}, flat, 10, -40, 10, 10},
		{"fixed step kept", Axis{Min: -180, Max: 180, Step: 45}, nil, 10, -180, 180, 45},
		{"step too fine replaced", Axis{Min: 0, Max: 100, Step: 0.001}, nil, 4, 0, 100, 50},
		{"no data", Axis{Auto: true}, nil, 10, -0.5, 0.5, 0.2},
		{"only NaN and Inf", Axis{Auto: true}, []Series{{Freq: []float64{100, 200}, Value: []float64{math.NaN(), math.Inf(-1)}}}, 10, -0.5, 0.5, 0.2},
		{"data outside the frequency range ignored", Axis{Auto: true}, []Series{{Freq: []float64{1, 100, 1e6}, Value: []float64{-90, -6, 40}}}, 10, -6.5, -5.5, 0.2},
		{"error: fixed reversed falls back to auto", Axis{Min: 10, Max: -10}, flat, 10, -6.5, -5.5, 0.2},
		{"error: fixed NaN falls back to auto", Axis{Min: math.NaN(), Max: 0}, flat, 10, -6.5, -5.5, 0.2},
		{"error: fixed infinite falls back to auto", Axis{Min: math.Inf(-1), Max: 0}, flat, 10, -6.5, -5.5, 0.2},
		{"error: fixed beyond limit falls back to auto", Axis{Min: -1e300, Max: 1e300}, flat, 10, -6.5, -5.5, 0.2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			lo, hi, step := yRange(tt.ax, tt.series, 20, 20000, tt.rows)
			near := func(a, b float64) bool { return math.Abs(a-b) <= 1e-9*max(1, math.Abs(b)) }
			if !near(lo, tt.lo) || !near(hi, tt.hi) || !near(step, tt.step) {
				t.Errorf("got %g..%g step %g, want %g..%g step %g", lo, hi, step, tt.lo, tt.hi, tt.step)
			}
		})
	}
}

func TestNormRange(t *testing.T) {
	tests := []struct {
		name             string
		from, to         float64
		wantFrom, wantTo float64
	}{
		{"ordinary", 10, 100e3, 10, 100e3},
		{"both zero gives default", 0, 0, DefaultFrom, DefaultTo},
		{"reversed is swapped", 20e3, 20, 20, 20e3},
		{"equal widens to a decade", 1000, 1000, 1000 / math.Sqrt(10), 1000 * math.Sqrt(10)},
		{"error: negative", -20, 20e3, DefaultFrom, DefaultTo},
		{"error: NaN", math.NaN(), 20e3, DefaultFrom, DefaultTo},
		{"error: infinite", 20, math.Inf(1), DefaultFrom, DefaultTo},
		{"error: one zero", 0, 20e3, DefaultFrom, DefaultTo},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			f, to := normRange(tt.from, tt.to)
			if math.Abs(f-tt.wantFrom) > relTol*tt.wantFrom || math.Abs(to-tt.wantTo) > relTol*tt.wantTo {
				t.Errorf("got %g–%g, want %g–%g", f, to, tt.wantFrom, tt.wantTo)
			}
		})
	}
}

func TestTickLabels(t *testing.T) {
	tests := []struct {
		name    string
		v, step float64
		want    string
	}{
		{"integer", -20, 10, "-20"},
		{"negative zero", math.Copysign(0, -1), 10, "0"},
		{"tenths", 0.30000000000000004, 0.1, "0.3"},
		{"fifths", -0.4, 0.2, "-0.4"},
		{"halves", 1.5, 0.5, "1.5"},
		{"twentieths", 0.05, 0.05, "0.05"},
		{"large", 2e9, 1e9, "2e+09"},
		{"tiny step", 3e-8, 1e-8, "3e-08"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := string(appendTick(nil, tt.v, tt.step)); got != tt.want {
				t.Errorf("appendTick(%g, %g) = %q, want %q", tt.v, tt.step, got, tt.want)
			}
		})
	}
}

func TestFreqLabels(t *testing.T) {
	tests := []struct {
		f    float64
		want string
	}{
		{10, "10"}, {20, "20"}, {50, "50"}, {100, "100"}, {200, "200"}, {500, "500"},
		{1000, "1k"}, {2000, "2k"}, {5000, "5k"}, {10000, "10k"}, {20000, "20k"},
		{100e3, "100k"}, {1e6, "1M"}, {2e9, "2G"}, {0.5, "0.5"}, {0.02, "0.02"},
		{1061.033, "1.06k"}, {1e15, "1e+15"},
	}
	for _, tt := range tests {
		if got := string(appendFreq(nil, tt.f)); got != tt.want {
			t.Errorf("appendFreq(%g) = %q, want %q", tt.f, got, tt.want)
		}
	}
}
