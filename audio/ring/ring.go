// Package ring is a lock-free single-producer/single-consumer queue of
// interleaved audio frames, built for the boundary between an audio device
// callback and the goroutine that processes its samples.
//
// A frame is one sample per channel, stored interleaved: with 2 channels the
// buffer holds L0 R0 L1 R1 …. Every frame has an absolute index, an int64 that
// only grows: the first frame ever written is index 0, the next 1, and so on.
// Frames the producer could not store (the ring was full) keep their indices
// — they are counted as dropped and leave a hole — so the consumer always
// knows exactly which frame it holds:
//
//	r := ring.New[float32](4096, 2) // 4096 stereo frames
//	r.TryWrite(in)                  // device callback: copy, never wait
//	n, first := r.Read(dst)         // engine: n frames, the first at index first
//
// The producer may also leave a hole on purpose ([Ring.Skip]): a playout
// schedule uses the absolute index as "the output frame at which this sample
// plays".
//
// # Rules
//
// One goroutine (or one device thread) is the producer and calls only the
// producer methods; one is the consumer and calls only the consumer methods;
// the methods marked "either side" may be called from anywhere. Positions are
// ever-increasing int64 counters (no wraparound in practice: 2^63 frames at
// 1 MHz last 292 000 years); the capacity is a power of two so a position maps
// to a slot by a mask. The producer keeps its own copy of the consumer's
// position and reads the shared atomic only when the ring looks full; neither
// side ever blocks, locks or allocates.
package ring

import (
	"fmt"
	"math/bits"
	"sync/atomic"
)

// Sample is the element type of a ring: 32- or 64-bit floating point.
type Sample interface{ ~float32 | ~float64 }

// gapSlots is the number of holes the producer may have published and the
// consumer not yet passed; a power of two. A hole is recorded only together
// with the frames that follow it, so more than a few are in flight only when
// the consumer has stopped reading — and then the ring is full anyway.
const gapSlots = 64

// cacheLine is the padding, in bytes, that keeps the producer's and the
// consumer's fields on separate cache lines.
const cacheLine = 64

// gap says that the frame at ring position pos has an absolute index skip
// frames higher than the previous frame's index + 1.
type gap struct {
	pos, skip int64
}

// Ring is a single-producer/single-consumer queue of interleaved frames with
// absolute indices. Create one with [New]; the zero value is not usable.
type Ring[T Sample] struct {
	buf      []T
	channels int
	frames   int64 // capacity in frames, a power of two
	mask     int64 // frames − 1

	_ [cacheLine]byte
	// Shared positions, each on its own cache line.
	wpos atomic.Int64 // frames published by the producer
	_    [cacheLine - 8]byte
	rpos atomic.Int64 // frames released by the consumer
	_    [cacheLine - 8]byte
	gput atomic.Int64 // holes published by the producer
	_    [cacheLine - 8]byte
	gget atomic.Int64 // holes passed by the consumer
	_    [cacheLine - 8]byte
	// Counters written by the producer, read by either side.
	dropped  atomic.Int64
	overruns atomic.Int64
	_        [cacheLine - 16]byte

	// Producer-only state.
	pw       int64 // == wpos
	pReadC   int64 // cached rpos
	pGapPut  int64 // == gput
	pGapGetC int64 // cached gget
	pSkipped int64 // holes published, in frames
	pPending int64 // hole not yet published, in frames
	_        [cacheLine - 48]byte

	// Consumer-only state.
	cr       int64 // == rpos
	cGapGet  int64 // == gget
	cSkipped int64 // holes passed, in frames
	cPeeked  int64 // frames the last Peek offered and Consume may release
	_        [cacheLine - 32]byte

	gaps [gapSlots]gap
}

// New returns an empty ring holding at least frames frames of channels
// samples each; the capacity is rounded up to a power of two. It panics when
// frames or channels is less than 1 or the ring would exceed 2^40 samples
// (programmer mistakes).
func New[T Sample](frames, channels int) *Ring[T] {
	if frames < 1 || channels < 1 {
		panic(fmt.Sprintf("ring: New(%d frames, %d channels): both must be at least 1", frames, channels))
	}
	capFrames := int64(1) << bits.Len64(uint64(frames-1))
	if capFrames*int64(channels) > 1<<40 {
		panic(fmt.Sprintf("ring: New(%d frames, %d channels): larger than 2^40 samples", frames, channels))
	}
	return &Ring[T]{
		buf:      make([]T, capFrames*int64(channels)),
		channels: channels,
		frames:   capFrames,
		mask:     capFrames - 1,
	}
}

// Channels returns the number of samples per frame (either side).
func (r *Ring[T]) Channels() int { return r.channels }

// Cap returns the capacity in frames, a power of two (either side).
func (r *Ring[T]) Cap() int { return int(r.frames) }

// Buffered returns the number of frames written and not yet consumed, as
// seen at the moment of the call (either side).
func (r *Ring[T]) Buffered() int { return int(r.wpos.Load() - r.rpos.Load()) }

// Dropped returns the number of frames [Ring.TryWrite] could not store
// because the ring was full (either side).
func (r *Ring[T]) Dropped() int64 { return r.dropped.Load() }

// Overruns returns the number of [Ring.TryWrite] calls that dropped at least
// one frame (either side).
func (r *Ring[T]) Overruns() int64 { return r.overruns.Load() }

// frameCount returns len(s)/channels and panics when s is not whole frames.
func (r *Ring[T]) frameCount(s []T, op string) int64 {
	if len(s)%r.channels != 0 {
		panic(fmt.Sprintf("ring: %s: %d samples is not a whole number of %d-channel frames", op, len(s), r.channels))
	}
	return int64(len(s) / r.channels)
}

// Free returns the number of frames the producer can write now (producer).
func (r *Ring[T]) Free() int {
	r.pReadC = r.rpos.Load()
	return int(r.frames - (r.pw - r.pReadC))
}

// WriteIndex returns the absolute index the next written frame will have,
// counting dropped frames and skips (producer).
func (r *Ring[T]) WriteIndex() int64 { return r.pw + r.pSkipped + r.pPending }

// Skip leaves a hole of frames indices: the next frame written gets an index
// frames higher than it would have had. Nothing is counted as dropped. It
// panics when frames is negative (producer).
func (r *Ring[T]) Skip(frames int64) {
	if frames < 0 {
		panic(fmt.Sprintf("ring: Skip(%d): negative", frames))
	}
	r.pPending += frames
}

// Write stores as many whole frames of the interleaved src as fit and
// returns how many it stored; the caller keeps the rest (nothing is counted
// as dropped). It never blocks. It panics when len(src) is not a multiple
// of the channel count (producer).
func (r *Ring[T]) Write(src []T) (frames int) {
	return int(r.write(src, r.frameCount(src, "Write")))
}

// TryWrite stores as many whole frames of the interleaved src as fit, like
// [Ring.Write], and counts the rest as dropped: their indices are used up,
// so the consumer sees a hole where they would have been. It never blocks,
// locks or allocates; it is the call for a device callback. It panics when
// len(src) is not a multiple of the channel count (producer).
func (r *Ring[T]) TryWrite(src []T) (written int) {
	n := r.frameCount(src, "TryWrite")
	w := r.write(src, n)
	if w < n {
		r.pPending += n - w
		r.dropped.Add(n - w)
		r.overruns.Add(1)
	}
	return int(w)
}

// write stores up to n frames of src and returns how many it stored.
func (r *Ring[T]) write(src []T, n int64) int64 {
	if n == 0 {
		return 0
	}
	free := r.frames - (r.pw - r.pReadC)
	if free < n {
		r.pReadC = r.rpos.Load()
		free = r.frames - (r.pw - r.pReadC)
	}
	w := min(n, free)
	if w == 0 {
		return 0
	}
	if r.pPending > 0 {
		// Publish the hole before the frames that follow it.
		if r.pGapPut-r.pGapGetC >= gapSlots {
			r.pGapGetC = r.gget.Load()
			if r.pGapPut-r.pGapGetC >= gapSlots {
				return 0 // no room to record the hole: store nothing
			}
		}
		r.gaps[r.pGapPut&(gapSlots-1)] = gap{pos: r.pw, skip: r.pPending}
		r.pGapPut++
		r.gput.Store(r.pGapPut)
		r.pSkipped += r.pPending
		r.pPending = 0
	}
	ch := int64(r.channels)
	start := r.pw & r.mask
	first := min(w, r.frames-start)
	copy(r.buf[start*ch:(start+first)*ch], src[:first*ch])
	if first < w {
		copy(r.buf[:(w-first)*ch], src[first*ch:w*ch])
	}
	r.pw += w
	r.wpos.Store(r.pw)
	return w
}

// ReadIndex returns the absolute index of the next frame the consumer will
// get, as far as the consumer knows: a hole just ahead is seen only by the
// next [Ring.Peek] or [Ring.Read] (consumer).
func (r *Ring[T]) ReadIndex() int64 { return r.cr + r.cSkipped }

// Peek returns the frames ready to be read as one or two slices of the
// ring's own storage (b is non-empty only when the run wraps around the end
// of the buffer), and the absolute index of the first frame. The frames are
// consecutive: the run stops before the next hole. Both slices are empty
// when nothing is ready; first is then the index the next frame would have
// if no hole came before it. The slices stay valid until [Ring.Consume]
// (consumer).
func (r *Ring[T]) Peek() (a, b []T, first int64) {
	w := r.wpos.Load()
	// Load the holes after the write position: every hole before a
	// published frame is then visible.
	gput := r.gput.Load()
	avail := w - r.cr
	for r.cGapGet < gput {
		g := r.gaps[r.cGapGet&(gapSlots-1)]
		if g.pos > r.cr {
			avail = min(avail, g.pos-r.cr)
			break
		}
		r.cSkipped += g.skip
		r.cGapGet++
		r.gget.Store(r.cGapGet)
	}
	r.cPeeked = avail
	first = r.cr + r.cSkipped
	if avail == 0 {
		return nil, nil, first
	}
	ch := int64(r.channels)
	start := r.cr & r.mask
	n1 := min(avail, r.frames-start)
	a = r.buf[start*ch : (start+n1)*ch]
	if n1 < avail {
		b = r.buf[:(avail-n1)*ch]
	}
	return a, b, first
}

// Consume releases the first frames frames of the last [Ring.Peek] to the
// producer. It panics when frames is negative or more than that Peek
// offered (consumer).
func (r *Ring[T]) Consume(frames int) {
	n := int64(frames)
	if n < 0 || n > r.cPeeked {
		panic(fmt.Sprintf("ring: Consume(%d): the last Peek offered %d frames", frames, r.cPeeked))
	}
	if n == 0 {
		return
	}
	r.cPeeked -= n
	r.cr += n
	r.rpos.Store(r.cr)
}

// Read copies up to len(dst)/channels consecutive frames into dst
// (interleaved), releases them, and returns how many it copied and the
// absolute index of the first. It stops before a hole, so first+i is the
// index of frame i. With nothing ready it returns 0 and the index the next
// frame would have. It never blocks. It panics when len(dst) is not a
// multiple of the channel count (consumer).
func (r *Ring[T]) Read(dst []T) (frames int, first int64) {
	want := r.frameCount(dst, "Read")
	a, b, first := r.Peek()
	n := copy(dst, a)
	if n < len(dst) {
		n += copy(dst[n:], b)
	}
	got := min(int64(n)/int64(r.channels), want)
	r.Consume(int(got))
	return int(got), first
}
