package plot

import (
	"math"
	"strconv"
)

// Range limits of the value axis.
const (
	maxAbsValue = 1e15 // largest |Min|, |Max| of a value axis
	relSpan     = 1e-9 // smallest span relative to the largest |value|
	padFrac     = 0.05 // auto-range margin, fraction of the data span per side
	farDots     = 1e6  // dot coordinates are clamped this far outside the plot
)

// NiceStep returns the smallest tick step of the form 1, 2 or 5 × 10^k
// that divides span into at most maxIntervals intervals. maxIntervals
// below 1 counts as 1. It returns 0 when span is not a positive finite
// number.
func NiceStep(span float64, maxIntervals int) float64 {
	if !(span > 0) || math.IsInf(span, 1) {
		return 0
	}
	n := float64(max(maxIntervals, 1))
	raw := span / n
	k := int(math.Floor(math.Log10(raw)))
	// Allow for rounding in span/step so that, e.g., span 1 with 5
	// intervals gives 0.2 and not 0.5.
	const tol = 1e-9
	for _, e := range [...]int{k - 1, k, k + 1} {
		base := math.Pow10(e)
		for _, m := range [...]float64{1, 2, 5} {
			s := m * base
			if s > 0 && span/s <= n*(1+tol) {
				return s
			}
		}
	}
	return math.Pow10(k + 2)
}

// validFixed reports whether lo–hi is a usable value range.
func validFixed(lo, hi float64) bool {
	if math.IsNaN(lo) || math.IsNaN(hi) || !(hi > lo) {
		return false
	}
	if math.Abs(lo) > maxAbsValue || math.Abs(hi) > maxAbsValue {
		return false
	}
	return hi-lo >= relSpan*max(math.Abs(lo), math.Abs(hi))
}

// dataRange returns the smallest and largest finite value among the
// points of series whose frequency lies in from–to, or NaNs when there is
// none.
func dataRange(series []Series, from, to float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for si := range series {
		s := &series[si]
		n := min(len(s.Freq), len(s.Value))
		for i := 0; i < n; i++ {
			f, v := s.Freq[i], s.Value[i]
			if !(f >= from && f <= to) || math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			lo = min(lo, v)
			hi = max(hi, v)
		}
	}
	if lo > hi {
		return math.NaN(), math.NaN()
	}
	return lo, hi
}

// yRange chooses a panel's value range and tick step for a plot area of
// rows rows.
func yRange(ax Axis, series []Series, from, to float64, rows int) (lo, hi, step float64) {
	rows = max(rows, 1)
	if !ax.Auto && validFixed(ax.Min, ax.Max) {
		lo, hi = ax.Min, ax.Max
	} else {
		lo, hi = dataRange(series, from, to)
		if math.IsNaN(lo) {
			lo, hi = 0, 0
		}
		lo = max(lo, -maxAbsValue)
		hi = min(hi, maxAbsValue)
		pad := (hi - lo) * padFrac
		lo, hi = lo-pad, hi+pad
		minSpan := ax.MinSpan
		if !(minSpan > 0) || math.IsInf(minSpan, 1) {
			minSpan = 1
		}
		minSpan = max(minSpan, 2*relSpan*max(math.Abs(lo), math.Abs(hi)))
		if hi-lo < minSpan {
			c := lo/2 + hi/2
			lo, hi = c-minSpan/2, c+minSpan/2
		}
	}
	step = ax.Step
	if !(step > 0) || (hi-lo)/step > float64(4*rows) {
		// About one tick every second row; small panels get two
		// intervals where they have the rows.
		step = NiceStep(hi-lo, max(rows/2, min(rows-1, 2)))
	}
	return lo, hi, step
}

// tickRange returns the first and last tick indices k (tick value k·step)
// within lo–hi, and false when there are none or too many (more than
// limit).
func tickRange(lo, hi, step float64, limit int) (k0, k1 float64, ok bool) {
	if !(step > 0) || math.IsInf(step, 0) {
		return 0, 0, false
	}
	const tol = 1e-9
	k0 = math.Ceil(lo/step - tol)
	k1 = math.Floor(hi/step + tol)
	if !(k1 >= k0) || k1-k0 >= float64(limit) {
		return 0, 0, false
	}
	return k0, k1, true
}

// appendTick appends the label of tick value v with the decimals that
// step needs.
func appendTick(dst []byte, v, step float64) []byte {
	v += 0 // turn −0 into 0
	dec := 0
	if step < 1 {
		dec = int(math.Ceil(-math.Log10(step) - 1e-9))
	}
	if math.Abs(v) >= 1e6 || dec > 6 {
		return strconv.AppendFloat(dst, v, 'g', 4, 64)
	}
	return strconv.AppendFloat(dst, v, 'f', dec, 64)
}

// appendFreq appends a short label for frequency f in hertz: 20, 500,
// 1k, 20k, 1M, 0.5.
func appendFreq(dst []byte, f float64) []byte {
	var suffix byte
	switch {
	case f >= 1e12:
		return strconv.AppendFloat(dst, f, 'g', 2, 64)
	case f >= 1e9:
		f, suffix = f/1e9, 'G'
	case f >= 1e6:
		f, suffix = f/1e6, 'M'
	case f >= 1e3:
		f, suffix = f/1e3, 'k'
	}
	dst = strconv.AppendFloat(dst, f, 'g', 3, 64)
	if suffix != 0 {
		dst = append(dst, suffix)
	}
	return dst
}

// normRange returns a usable frequency range from the caller's.
func normRange(from, to float64) (float64, float64) {
	if from == 0 && to == 0 {
		return DefaultFrom, DefaultTo
	}
	ok := func(f float64) bool { return f > 0 && !math.IsInf(f, 1) }
	if !ok(from) || !ok(to) {
		return DefaultFrom, DefaultTo
	}
	if from > to {
		from, to = to, from
	}
	if to/from < 1+1e-9 {
		from, to = from/math.Sqrt(10), from*math.Sqrt(10)
		if !ok(from) || !ok(to) {
			return DefaultFrom, DefaultTo
		}
	}
	return from, to
}

// labelSets are the mantissas of the frequency labels, densest first.
var labelSets = [...][3]float64{{1, 2, 5}, {1, 5}, {1}}

// xLabel is one placed frequency label: its first column and its text
// in Canvas.xbuf[off:off+n].
type xLabel struct {
	start, off, n int
}

// placeXLabels chooses the frequency labels for the bottom row: the
// densest 1-2-5 set that fits without overlap, else as many decades as
// fit from the left, else the range ends.
func (c *Canvas) placeXLabels(m XMap, w int) {
	for i := range labelSets {
		if c.tryXLabels(m, w, labelSets[i][:], false) {
			return
		}
	}
	c.tryXLabels(m, w, labelSets[len(labelSets)-1][:], true)
	if len(c.xl) == 0 {
		c.addXLabel(m, w, m.From, true, true)
		c.addXLabel(m, w, m.To, true, false)
	}
}

// tryXLabels places labels at mantissas set × 10^k. Without greedy it
// fails (false) at the first overlap; with greedy it skips labels that
// do not fit.
func (c *Canvas) tryXLabels(m XMap, w int, set []float64, greedy bool) bool {
	c.xl = c.xl[:0]
	c.xbuf = c.xbuf[:0]
	lf, lt := math.Log10(m.From), math.Log10(m.To)
	k0, k1 := int(math.Floor(lf)), int(math.Ceil(lt))
	if !greedy && k1-k0 > 2*w {
		return false
	}
	const tol = 1e-9
	for k := k0; k <= k1; k++ {
		base := math.Pow10(k)
		for _, mant := range set {
			if mant == 0 {
				continue
			}
			f := mant * base
			if f < m.From*(1-tol) || f > m.To*(1+tol) {
				continue
			}
			if !c.addXLabel(m, w, f, greedy, false) {
				return false
			}
		}
	}
	return true
}

// addXLabel places the label of f centred on its column, clamped to the
// plot area. It reports false when the label overlaps the previous one
// or does not fit, unless skip is set (then it reports true and leaves
// the label out). atLeft aligns the label's first character with the
// column instead of centring it.
func (c *Canvas) addXLabel(m XMap, w int, f float64, skip, atLeft bool) bool {
	off := len(c.xbuf)
	c.xbuf = appendFreq(c.xbuf, f)
	n := len(c.xbuf) - off
	col, _ := m.Col(f)
	start := col - (n-1)/2
	if atLeft {
		start = col
	}
	start = min(start, w-n)
	start = max(start, m.Left)
	fits := start+n <= w
	if fits && len(c.xl) > 0 {
		prev := c.xl[len(c.xl)-1]
		fits = start >= prev.start+prev.n+1
	}
	if !fits {
		c.xbuf = c.xbuf[:off]
		return skip
	}
	c.xl = append(c.xl, xLabel{start: start, off: off, n: n})
	return true
}
