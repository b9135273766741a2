package tui

import (
	"fmt"
	"testing"

	"github.com/muesli/termenv"
)

// benchModel returns a model at w×h showing three traces of n points:
// live (series RLC band-pass), a stored reference and the prediction
// (first-order RC), all of REFERENCES.md §5, in 16 colours.
func benchModel(w, h, n int) *Model {
	fr := logFreqs(20, 20000, n)
	m := testModel(newFake(), w, h, Options{Profile: termenv.ANSI})
	send(m, TraceMsg{Trace: analytic(rcLowpassC(12e-9), fr), Complete: true}, key("r"),
		TraceMsg{Trace: analytic(rlcBandpass, fr), Complete: true},
		PredictionMsg{Trace: analytic(rcLowpass, fr)}, StatusMsg{demoStatus()},
		ProgressMsg{Done: 3, Total: n, Freq: 1000})
	return m
}

// BenchmarkFrame draws one frame with the data unchanged (a cursor move
// or a status update): the cost the 30 fps cap bounds.
func BenchmarkFrame(b *testing.B) {
	for _, sz := range [][3]int{{80, 24, 200}, {160, 48, 200}, {160, 48, 1000}} {
		b.Run(fmt.Sprintf("%dx%d/%dpt", sz[0], sz[1], sz[2]), func(b *testing.B) {
			m := benchModel(sz[0], sz[1], sz[2])
			m.render()
			b.ReportAllocs()
			for b.Loop() {
				m.render()
			}
		})
	}
}

// BenchmarkFrameNewTrace takes a new live trace and draws it: the copy,
// the derived arrays, the parameter extraction and the frame.
func BenchmarkFrameNewTrace(b *testing.B) {
	for _, n := range []int{200, 1000} {
		b.Run(fmt.Sprintf("160x48/%dpt", n), func(b *testing.B) {
			m := benchModel(160, 48, n)
			msg := TraceMsg{Trace: analytic(rlcBandpass, logFreqs(20, 20000, n)), Complete: true}
			b.ReportAllocs()
			for b.Loop() {
				m.handleEvent(msg)
				m.render()
			}
		})
	}
}
