package plot

import "tonetrace/dsp/trace"

// Curve is one response for a Bode plot: gain and phase over frequency.
type Curve struct {
	// Name is shown in the gain panel's header when not empty.
	Name string
	// Freq holds the frequencies in hertz.
	Freq []float64
	// Gain holds the gain in dB per frequency; nil leaves the curve out
	// of the gain panel.
	Gain []float64
	// Phase holds the phase in degrees per frequency (unwrapped or not);
	// nil leaves the curve out of the phase panel.
	Phase []float64
	// Style is the caller's colour index for both panels.
	Style int
}

// Bode draws curves as a gain panel (titled "Gain", unit "dB" unless the
// axis names one) above a phase panel ("Phase", "deg") sharing the
// frequency axis, whose labels run along the bottom row. The gain panel
// gets the extra row when the height is odd. See [Canvas.Render] for the
// layout and the panics.
func (c *Canvas) Bode(w, h int, opt Options, gain, phase Axis, curves ...Curve) *Grid {
	gs, ps := c.bode[0][:0], c.bode[1][:0]
	for i := range curves {
		cv := &curves[i]
		if cv.Gain != nil {
			gs = append(gs, Series{Name: cv.Name, Freq: cv.Freq, Value: cv.Gain, Style: cv.Style})
		}
		if cv.Phase != nil {
			s := Series{Freq: cv.Freq, Value: cv.Phase, Style: cv.Style}
			if cv.Gain == nil {
				s.Name = cv.Name
			}
			ps = append(ps, s)
		}
	}
	if gain.Unit == "" {
		gain.Unit = "dB"
	}
	if phase.Unit == "" {
		phase.Unit = "deg"
	}
	panels := [2]Panel{
		{Title: "Gain", Y: gain, Series: gs},
		{Title: "Phase", Y: phase, Series: ps},
	}
	g := c.Render(w, h, opt, panels[:]...)
	// Keep the buffers, not the caller's data.
	clear(gs)
	clear(ps)
	c.bode[0], c.bode[1] = gs, ps
	return g
}

// Bode draws a Bode plot into a new grid; see [Canvas.Bode].
func Bode(w, h int, opt Options, gain, phase Axis, curves ...Curve) Grid {
	var c Canvas
	return *c.Bode(w, h, opt, gain, phase, curves...)
}

// CurveFromPoints fills dst from a trace's points: frequencies, gain in
// dB and phase in degrees unwrapped along the trace (see
// [trace.UnwrappedPhaseDeg]). It reuses dst's slices when they have the
// capacity and keeps its Name and Style.
func CurveFromPoints(dst Curve, points []trace.Point) Curve {
	n := len(points)
	dst.Freq = resizeSlice(dst.Freq, n)
	dst.Gain = resizeSlice(dst.Gain, n)
	for i := range points {
		dst.Freq[i] = points[i].Freq
		dst.Gain[i] = points[i].GainDB()
	}
	dst.Phase = trace.UnwrappedPhaseDeg(dst.Phase, points)
	return dst
}
