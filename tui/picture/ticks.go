package picture

import (
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
)

// Tick layout limits.
const (
	// maxIntervals is the most intervals between labelled ticks on a
	// value axis.
	maxIntervals = 6
	// tickEps is the relative slack when deciding whether a tick at an
	// exact decimal value lies inside a range computed in floating point.
	tickEps = 1e-9
	// decadesAll, decades125: up to this many decades the frequency axis
	// labels every integer multiple of a power of ten, or 1, 2 and 5
	// multiples; beyond decades125 only powers of ten.
	decadesAll = 0.8
	decades125 = 4.5
	// maxMinorDecades is the widest span, in decades, that still gets
	// minor ticks at 2…9 × 10^k; wider spans get one tick a decade.
	maxMinorDecades = 12
	// minFreqLabels is the fewest labelled frequency ticks; a range
	// with fewer gets evenly spaced ticks instead.
	minFreqLabels = 3
)

// freqTicks returns the marks of a logarithmic frequency axis from min to
// max hertz (0 < min < max): a tick at every m × 10^k (m = 1…9) inside the
// range, labelled at 1, 2 and 5 × 10^k ("20", "50", "100", "200", "500",
// "1k", …). Over more than decades125 decades only powers of ten are
// labelled; under decadesAll every tick is. When fewer than three labelled
// ticks fall inside a narrow range, the axis gets evenly spaced 1-2-5
// ticks instead (a log axis over a few percent is nearly linear).
func freqTicks(min, max float64) []plot.Tick {
	if !(min > 0) || !(max > min) || math.IsInf(max, 0) {
		return nil
	}
	decades := math.Log10(max / min)
	labelled := func(m int) bool {
		switch {
		case decades <= decadesAll:
			return true
		case decades <= decades125:
			return m == 1 || m == 2 || m == 5
		default:
			return m == 1
		}
	}
	minor := decades <= maxMinorDecades
	lo := int(math.Floor(math.Log10(min)))
	hi := int(math.Floor(math.Log10(max)))
	var ticks []plot.Tick
	nLabels := 0
	for e := lo; e <= hi; e++ {
		p := math.Pow10(e)
		for m := 1; m <= 9; m++ {
			if m > 1 && !minor {
				break
			}
			v := float64(m) * p
			if v < min*(1-tickEps) || v > max*(1+tickEps) {
				continue
			}
			t := plot.Tick{Value: v}
			if labelled(m) {
				t.Label = decadeLabel(m, e)
				nLabels++
			}
			ticks = append(ticks, t)
		}
	}
	if nLabels < minFreqLabels {
		return linearFreqTicks(min, max)
	}
	return ticks
}

// linearFreqTicks returns evenly spaced labelled ticks for a narrow
// frequency range, at multiples of a 1-2-5 step.
func linearFreqTicks(min, max float64) []plot.Tick {
	step := niceStep(max-min, maxIntervals)
	if step == 0 {
		return nil
	}
	first := math.Ceil(min/step - tickEps)
	last := math.Floor(max/step + tickEps)
	ticks := make([]plot.Tick, 0, int(last-first)+1)
	for k := first; k <= last; k++ {
		v := k * step
		ticks = append(ticks, plot.Tick{Value: v, Label: hzLabel(v, step)})
	}
	return ticks
}

// siPrefix returns the prefix symbol and power of ten for a frequency
// label: the largest of k (3), M (6), G (9) not above 10^e, or none.
func siPrefix(e int) (string, int) {
	switch {
	case e >= 9:
		return "G", 9
	case e >= 6:
		return "M", 6
	case e >= 3:
		return "k", 3
	}
	return "", 0
}

// decadeLabel writes m × 10^e hertz exactly, with an SI prefix from k up:
// (2, 1) → "20", (1, 3) → "1k", (5, 4) → "50k", (2, -1) → "0.2".
func decadeLabel(m, e int) string {
	if e < 0 {
		return "0." + strings.Repeat("0", -e-1) + strconv.Itoa(m)
	}
	sym, pe := siPrefix(e)
	return strconv.Itoa(m) + strings.Repeat("0", e-pe) + sym
}

// hzLabel writes v hertz, a multiple of step, with an SI prefix from k up
// and no more digits than the step needs: 1050 with step 50 → "1.05k".
func hzLabel(v, step float64) string {
	if v == 0 {
		return "0"
	}
	sym, pe := siPrefix(int(math.Floor(math.Log10(math.Abs(v)))))
	scale := math.Pow10(pe)
	return strconv.FormatFloat(v/scale, 'f', decimals(step/scale), 64) + sym
}

// decimals returns how many digits after the point show a multiple of a
// 1-2-5 step exactly: 0 for steps of 1 and up, 1 for 0.5, 2 for 0.05.
func decimals(step float64) int {
	if step >= 1 {
		return 0
	}
	return int(math.Ceil(-math.Log10(step) - tickEps))
}

// niceStep returns the smallest step of the form 1, 2 or 5 × 10^k that
// divides span into at most n intervals; 0 when span is not a positive
// finite number.
func niceStep(span float64, n int) float64 {
	if !(span > 0) || math.IsInf(span, 0) {
		return 0
	}
	raw := span / float64(max(n, 1))
	k := math.Floor(math.Log10(raw))
	for _, e := range [...]float64{k - 1, k, k + 1} {
		p := math.Pow(10, e)
		for _, m := range [...]float64{1, 2, 5} {
			if s := m * p; s >= raw*(1-tickEps) {
				return s
			}
		}
	}
	return 10 * math.Pow(10, k+1)
}

// phaseStep returns the tick step for a phase axis spanning span degrees:
// a 1-2-5 step up to 10°, then 15°, 30°, 45°, 90°, 180°, then multiples of
// 360° — each the smallest giving at most n intervals.
func phaseStep(span float64, n int) float64 {
	if s := niceStep(span, n); s <= 10 {
		return s
	}
	for _, s := range [...]float64{15, 30, 45, 90, 180} {
		if span/s <= float64(n)*(1+tickEps) {
			return s
		}
	}
	return 360 * math.Max(1, niceStep(span/360, n))
}

// valueTicks returns labelled ticks at the multiples of step from min to
// max, written with as many decimals as the step needs.
func valueTicks(min, max, step float64) []plot.Tick {
	if !(step > 0) || !(max >= min) {
		return nil
	}
	first := math.Ceil(min/step - tickEps)
	last := math.Floor(max/step + tickEps)
	if last-first > 1000 {
		return nil // cannot happen with the steps above; guards a bad step
	}
	d := decimals(step)
	ticks := make([]plot.Tick, 0, int(last-first)+1)
	for k := first; k <= last; k++ {
		v := k * step
		if k == 0 {
			v = 0 // no "-0"
		}
		ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', d, 64)})
	}
	return ticks
}

// unlabelled returns a copy of ticks without their labels, for a panel
// that shares the frequency axis of the one below it.
func unlabelled(ticks []plot.Tick) []plot.Tick {
	out := make([]plot.Tick, len(ticks))
	for i, t := range ticks {
		out[i] = plot.Tick{Value: t.Value}
	}
	return out
}
