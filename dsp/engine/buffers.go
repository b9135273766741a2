package engine

import (
	"context"
	"math"

	"tonetrace/audio"
)

// writer queues stimulus runs on the stream: a run starts with WriteAt at
// a chosen output index, continues contiguously and ends with Finish, so
// the silence between runs is not an underrun.
type writer struct {
	s    audio.Stream
	open bool  // a run is queued and not finished
	next int64 // output index after the last queued sample (when open)
}

// write queues x at output index at (which must be w.next while a run is
// open).
func (w *writer) write(ctx context.Context, at int64, x []float64) error {
	if len(x) == 0 {
		return nil
	}
	_, err := w.s.WriteAt(ctx, at, x)
	if err != nil {
		return err
	}
	w.open, w.next = true, at+int64(len(x))
	return nil
}

// finish marks the end of the run.
func (w *writer) finish() {
	if w.open {
		w.s.Finish()
		w.open = false
	}
}

// maxGapFrames is the longest hole in the capture the history bridges
// with NaN; after a longer one it starts afresh.
const maxGapFrames = 1 << 22

// history keeps the recent capture of the inputs the engine analyses,
// indexed by absolute capture index; missing frames read as NaN.
type history struct {
	ch    [][]float64 // one slice per kept input
	start int64       // capture index of ch[k][0]
	init  bool
}

// end returns the capture index after the last frame held.
func (h *history) end() int64 {
	if len(h.ch) == 0 {
		return h.start
	}
	return h.start + int64(len(h.ch[0]))
}

// append adds n frames read at capture index first: src holds every
// input, keep the inputs to store.
func (h *history) append(first int64, src [][]float64, keep []int, n int) {
	if !h.init {
		h.start, h.init = first, true
	}
	end := h.end()
	if first > end {
		if first-end > maxGapFrames {
			for k := range h.ch {
				h.ch[k] = h.ch[k][:0]
			}
			h.start = first
		} else {
			nan := math.NaN()
			for k := range h.ch {
				for i := end; i < first; i++ {
					h.ch[k] = append(h.ch[k], nan)
				}
			}
		}
	}
	skip := 0
	if e := h.end(); first < e {
		skip = int(min(e-first, int64(n)))
	}
	for k, c := range keep {
		h.ch[k] = append(h.ch[k], src[c][skip:n]...)
	}
}

// trim forgets the frames before capture index from.
func (h *history) trim(from int64) {
	if from <= h.start || len(h.ch) == 0 {
		return
	}
	k := int(min(from-h.start, int64(len(h.ch[0]))))
	for i := range h.ch {
		if k == len(h.ch[i]) {
			h.ch[i] = h.ch[i][:0]
		} else {
			h.ch[i] = h.ch[i][k:]
		}
	}
	h.start += int64(k)
}

// read copies the frames [from, from+len(dst)) of kept input k into dst,
// NaN where the history does not hold them, and returns dst.
func (h *history) read(dst []float64, k int, from int64) []float64 {
	src := h.ch[k]
	for i := range dst {
		j := from + int64(i) - h.start
		if j >= 0 && j < int64(len(src)) {
			dst[i] = src[j]
		} else {
			dst[i] = math.NaN()
		}
	}
	return dst
}

// grow returns buf resized to n, reallocating only when it lacks the
// capacity.
func grow(buf []float64, n int) []float64 {
	if cap(buf) < n {
		return make([]float64, n)
	}
	return buf[:n]
}

// finite reports whether every sample of x is finite.
func finite(x []float64) bool {
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// peakAbs returns the largest magnitude in x.
func peakAbs(x []float64) float64 {
	p := 0.0
	for _, v := range x {
		p = max(p, math.Abs(v))
	}
	return p
}

// frac returns x − ⌊x⌋.
func frac(x float64) float64 { return x - math.Floor(x) }
