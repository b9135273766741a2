// Package audio is tonetrace's real-time audio core: the contract between a
// sound device (or the virtual bench) and the measurement engine.
//
// A [Stream] moves two things at once. Capture: every frame the device
// records goes, in the device callback, into a lock-free ring tagged with
// its absolute index (frame 0 is the first frame of the stream); the engine
// takes them out with [Stream.Read], one slice per input channel. Playout:
// the engine queues the mono stimulus ahead of time with [Stream.Write]; the
// callback plays it out, sample-accurately, through the [OutputStage] —
// level in dBFS under a hard cap, raised-cosine fades, an instant mute — to
// the output channels chosen by the [Routing]. Nothing in the callback
// allocates, locks, logs or blocks; every problem becomes a counter in
// [Stats].
//
// The device-independent half of every stream is a [Core]: a device backend
// (package audio/device, the only place that imports the audio library) or
// the virtual bench creates one and calls its Process methods from the
// device callback.
//
// Indices and clocks. In a duplex stream (one device for input and output,
// one callback) capture frame k and output frame k are handled in the same
// callback: the two indices share one clock and one origin, so the round-trip
// latency of the interface is (capture index of a sound) − (output index at
// which it was played). With separate playback and capture devices the two
// run on their own clocks from slightly different starts; the offset is
// arbitrary and drifts.
//
// Levels are peak sample levels in dBFS: 0 dBFS is a sample of ±1. A
// stimulus written with peak 1 leaves the outputs at the stage's level.
package audio

import (
	"context"
	"errors"
	"fmt"
	"math/bits"
)

// Stream is a running audio stream as the measurement engine sees it. Read
// is called from one goroutine (the reader); Write, WriteAt, Finish and
// WriteIndex from one goroutine (the writer, may be the same); the rest
// from anywhere.
type Stream interface {
	// Rate returns the sample rate in frames per second.
	Rate() int
	// Channels returns the number of input and output channels.
	Channels() (in, out int)
	// Routing returns which outputs carry the stimulus and which inputs
	// are the response and the reference.
	Routing() Routing
	// Read waits until at least one captured frame is ready (or ctx is
	// done, or the stream fails) and copies up to len(dst[0]) consecutive
	// frames, deinterleaved: dst[c][i] is input channel c of frame
	// first+i. len(dst) must equal the input channel count and every
	// dst[c] must be at least len(dst[0]) long. Frames lost to an overrun
	// leave a jump in first between two Reads. It returns [ErrDeviceLost]
	// when the device stops delivering frames, [ErrClosed] after Close,
	// or ctx.Err().
	Read(ctx context.Context, dst [][]float64) (n int, first int64, err error)
	// Write queues mono stimulus samples to play right after those already
	// queued, blocking while the playout queue is full. When nothing is
	// queued (at the start, or after Finish) the samples start at
	// PlayIndex()+Lead() or later. It returns how many samples it queued.
	Write(ctx context.Context, src []float64) (n int, err error)
	// WriteAt is Write with the output frame index of src[0] given; at must
	// not be before WriteIndex().
	WriteAt(ctx context.Context, at int64, src []float64) (n int, err error)
	// Finish marks the end of the stimulus queued so far: running out of
	// samples after it is silence, not an underrun.
	Finish()
	// WriteIndex returns the output frame index at which the sample after
	// the last one queued will play.
	WriteIndex() int64
	// PlayIndex returns the number of output frames handed to the device so
	// far: the index of the next frame the callback will produce.
	PlayIndex() int64
	// Lead returns the least distance, in frames, between PlayIndex and a
	// sample queued now that still plays on time (two device periods).
	Lead() int
	// Output returns the stage that sets level, fades and mute.
	Output() *OutputStage
	// Stats returns the counters of the stream.
	Stats() Stats
	// Close fades the output out, stops the device and releases it. It is
	// safe to call more than once.
	Close() error
}

// Stats are the counters of a stream, each read atomically (the set is not
// one snapshot: counters may advance between fields). Frame counts are per
// frame, not per sample.
type Stats struct {
	// Callbacks counts device callbacks.
	Callbacks int64
	// CaptureFrames counts frames the device delivered, including dropped
	// ones: the index of the next captured frame.
	CaptureFrames int64
	// PlayFrames counts frames handed to the device, stimulus and silence:
	// the index of the next output frame.
	PlayFrames int64
	// StimulusFrames counts stimulus samples played.
	StimulusFrames int64
	// Overruns counts callbacks that found the capture ring full.
	Overruns int64
	// Dropped counts captured frames lost because the capture ring was full
	// (the engine did not read in time).
	Dropped int64
	// Underruns counts episodes of the playout queue running dry while a
	// stimulus was in progress (the engine did not write in time).
	Underruns int64
	// UnderrunFrames counts silent frames played during those episodes.
	UnderrunFrames int64
	// Late counts stimulus samples discarded because their output frame
	// had already been played when they arrived.
	Late int64
	// Clamped counts output samples limited to the level cap, and NaN
	// samples replaced by silence.
	Clamped int64
}

// Errors a stream returns.
var (
	// ErrDeviceLost means the device stopped delivering audio: unplugged,
	// its server gone, or stalled. Close the stream and open it again.
	ErrDeviceLost = errors.New("audio: the device stopped delivering audio (unplugged, server gone or stalled); close the stream and open it again")
	// ErrClosed means the stream has been closed.
	ErrClosed = errors.New("audio: the stream is closed")
)

// MaxChannels is the largest number of input or output channels a stream
// supports.
const MaxChannels = 32

// ChannelMask is a set of output channels: bit i set means output i+1.
type ChannelMask uint32

// Has reports whether 1-based output channel ch is in the set.
func (m ChannelMask) Has(ch int) bool { return ch >= 1 && ch <= 32 && m&(1<<(ch-1)) != 0 }

// Channels returns the 1-based channel numbers in the set, ascending.
func (m ChannelMask) Channels() []int {
	var chs []int
	for v := uint32(m); v != 0; v &= v - 1 {
		chs = append(chs, bits.TrailingZeros32(v)+1)
	}
	return chs
}

// MaskOf returns the set of the given 1-based output channels. It panics
// on a channel outside 1…32 (a programmer mistake).
func MaskOf(channels ...int) ChannelMask {
	var m ChannelMask
	for _, ch := range channels {
		if ch < 1 || ch > 32 {
			panic(fmt.Sprintf("audio: MaskOf: channel %d outside 1…32", ch))
		}
		m |= 1 << (ch - 1)
	}
	return m
}

// NoReference is the Routing.Reference value for a setup without a loopback
// input: the engine then relies on the known stimulus and a calibration.
const NoReference = -1

// Routing says where the stimulus goes and where the measurement comes
// from. Channel numbers are 1-based, as printed on an interface. The zero
// value is the default: the stimulus on every output, the response on
// input 1, the reference on input 2.
type Routing struct {
	// Stimulus is the set of outputs that carry the stimulus; every other
	// output plays silence. 0 means every output (default).
	Stimulus ChannelMask
	// Response is the input behind the network under test; 0 means input 1
	// (default).
	Response int
	// Reference is the input that receives the looped-back stimulus; 0
	// means input 2 (default), NoReference none.
	Reference int
}

// Resolve fills the defaults for a stream with in inputs and out outputs
// and checks the routing fits them. With a single input the default
// reference is NoReference.
func (r Routing) Resolve(in, out int) (Routing, error) {
	if in < 1 || out < 1 || in > MaxChannels || out > MaxChannels {
		return r, fmt.Errorf("audio: %d inputs and %d outputs: each must be 1…%d", in, out, MaxChannels)
	}
	all := ChannelMask(uint32(1)<<out - 1)
	if out == 32 {
		all = ^ChannelMask(0)
	}
	if r.Stimulus == 0 {
		r.Stimulus = all
	}
	if r.Stimulus&^all != 0 {
		return r, fmt.Errorf("audio: routing: stimulus on outputs %v, but the stream has %d outputs; choose outputs 1…%d", r.Stimulus.Channels(), out, out)
	}
	if r.Response == 0 {
		r.Response = 1
	}
	if r.Reference == 0 {
		r.Reference = 2
		if in < 2 {
			r.Reference = NoReference
		}
	}
	if r.Response < 1 || r.Response > in {
		return r, fmt.Errorf("audio: routing: response input %d does not exist; the stream has inputs 1…%d", r.Response, in)
	}
	if r.Reference != NoReference && (r.Reference < 1 || r.Reference > in) {
		return r, fmt.Errorf("audio: routing: reference input %d does not exist; the stream has inputs 1…%d (or -1 for none)", r.Reference, in)
	}
	if r.Reference == r.Response {
		return r, fmt.Errorf("audio: routing: input %d cannot be both the response and the reference; pick two different inputs", r.Response)
	}
	return r, nil
}
