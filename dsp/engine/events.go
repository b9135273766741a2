package engine

import (
	"time"

	"tonetrace/dsp/trace"
)

// Event is one message from the engine on [Engine.Events]: a
// [PointEvent], [TraceEvent], [ProgressEvent], [StatusEvent] or, last of
// all when the run failed, an [ErrorEvent]. The channel is closed when
// [Engine.Run] returns.
type Event interface{ event() }

// PointEvent is one measured stepped-sine point.
type PointEvent struct {
	// Point is the measured ratio response/reference with its standard
	// uncertainties (GainU in dB, PhaseU in degrees), the worse input's
	// SNR (dB, per sample) and the response's THD (percent). H is NaN
	// when nothing could be estimated (lost frames).
	Point trace.Point
	// Index is the point's position in its sweep, in the order measured,
	// from 0.
	Index int
	// Sweep counts sweeps from 0 (Config.Repeat measures again and
	// again; an adaptive plan is one sweep however many batches it takes).
	Sweep int
	// Valid is false when the point must not be trusted; Problems then
	// says why (a dead or clipping input, lost frames, a muted output).
	Valid bool
	// Problems lists what the monitors found in this point's block; it
	// may be non-empty for a valid point (a warning such as hum).
	Problems []Problem
	// Planned is the frequency the plan asked for. Point.Freq differs
	// from it when the point was moved clear of a mains hum line it could
	// not be told from (see Config.MaxIntegrate).
	Planned float64
}

// TraceEvent is a whole response: a finished sweep or average, a running
// multitone average, or what was measured before the run ended early.
type TraceEvent struct {
	// Trace holds the points in ascending frequency, with metadata
	// (method, rate_hz, level_dbfs, latency_frames, sweep, …).
	Trace trace.Trace
	// Valid[i] tells whether Trace.Points[i] may be trusted (see
	// PointEvent.Valid); it has one entry per point.
	Valid []bool
	// Complete is true when the sweep or average finished; false for a
	// running multitone average and for the partial trace emitted when
	// the run ends early (cancelled, device lost, time limit).
	Complete bool
	// Live marks a running multitone average that the next one
	// supersedes; the engine may drop a live trace the consumer had no
	// room for, never any other.
	Live bool
	// Sweep counts sweeps (or multitone averages) from 0.
	Sweep int
}

// ProgressEvent tells how far the current sweep or average is.
type ProgressEvent struct {
	// Done and Total count points measured and scheduled (stepped sine;
	// an adaptive plan's Total grows as it adds points) or periods
	// averaged and wanted (multitone).
	Done, Total int
	// Freq is the frequency of the last point in hertz (stepped sine);
	// NaN for multitone.
	Freq float64
	// Sweep counts sweeps from 0.
	Sweep int
}

// StatusEvent carries the monitors' view of the inputs.
type StatusEvent struct {
	// Status is the state at the end of a status interval, or at once
	// when a new problem appeared.
	Status Status
}

// ErrorEvent is the last event of a run that ended with an error: the
// same error [Engine.Run] returns.
type ErrorEvent struct {
	// Err is Run's error; test it with errors.Is (ErrConfig,
	// ErrNoSignal, ErrTimeLimit, audio.ErrDeviceLost, context.Canceled).
	Err error
}

func (PointEvent) event()    {}
func (TraceEvent) event()    {}
func (ProgressEvent) event() {}
func (StatusEvent) event()   {}
func (ErrorEvent) event()    {}

// outbox delivers events without ever blocking the engine: points,
// complete and partial traces and the final error wait in an unbounded
// queue until the channel has room; status, progress and live traces are
// kept latest-only and go out when the queue is empty.
type outbox struct {
	ch       chan Event
	queue    []Event
	status   *StatusEvent
	progress *ProgressEvent
	live     *TraceEvent
}

// push queues an event that must not be lost.
func (o *outbox) push(ev Event) { o.queue = append(o.queue, ev) }

// latest replaces the pending coalescable event of ev's kind.
func (o *outbox) latest(ev Event) {
	switch v := ev.(type) {
	case StatusEvent:
		o.status = &v
	case ProgressEvent:
		o.progress = &v
	case TraceEvent:
		o.live = &v
	default:
		o.push(ev)
	}
}

// flush sends what the channel has room for, without waiting.
func (o *outbox) flush() {
	for len(o.queue) > 0 {
		select {
		case o.ch <- o.queue[0]:
			o.queue[0] = nil
			o.queue = o.queue[1:]
		default:
			return
		}
	}
	if len(o.queue) == 0 {
		o.queue = o.queue[:0:0]
	}
	for k := 0; k < 3; k++ {
		p := o.take(k)
		if p == nil {
			continue
		}
		select {
		case o.ch <- *p:
		default:
			o.putBack(*p)
			return
		}
	}
}

// take removes and returns the pending latest-only event of kind k
// (0 status, 1 progress, 2 live trace), or nil.
func (o *outbox) take(k int) *Event {
	var ev Event
	switch {
	case k == 0 && o.status != nil:
		ev, o.status = *o.status, nil
	case k == 1 && o.progress != nil:
		ev, o.progress = *o.progress, nil
	case k == 2 && o.live != nil:
		ev, o.live = *o.live, nil
	default:
		return nil
	}
	return &ev
}

// putBack returns an unsent latest-only event unless a newer one came.
func (o *outbox) putBack(ev Event) {
	switch v := ev.(type) {
	case StatusEvent:
		if o.status == nil {
			o.status = &v
		}
	case ProgressEvent:
		if o.progress == nil {
			o.progress = &v
		}
	case TraceEvent:
		if o.live == nil {
			o.live = &v
		}
	}
}

// drain delivers the pending latest-only events (if the channel has
// room) and then the queued ones, waiting up to grace in all for a slow
// consumer, and closes the channel; the final error, queued last, is the
// last event. What the consumer did not take in time stays in
// [Engine.Result].
func (o *outbox) drain(grace time.Duration) {
	for k := 0; k < 3; k++ {
		if p := o.take(k); p != nil {
			select {
			case o.ch <- *p:
			default: // latest-only: not worth waiting for
			}
		}
	}
	t := time.NewTimer(grace)
	defer t.Stop()
	for _, ev := range o.queue {
		select {
		case o.ch <- ev:
			continue
		case <-t.C:
		}
		break
	}
	o.queue = nil
	close(o.ch)
}
