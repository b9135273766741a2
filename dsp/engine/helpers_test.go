package engine

import (
	"context"
	"testing"
	"time"
)

// collected is everything a run sent on its events channel.
type collected struct {
	points   []PointEvent
	traces   []TraceEvent
	statuses []Status
	progress []ProgressEvent
	errs     []error
	codes    map[string]bool // every problem code seen in statuses
}

// runEngine runs an engine on d with cfg until it returns (or the test's
// deadline), collecting its events, and returns them with Run's error.
func runEngine(t testing.TB, d *fakeDev, cfg Config, timeout time.Duration) (*Engine, *collected, error) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), timeout)
	defer cancel()
	e := New(d, cfg)
	c := &collected{codes: map[string]bool{}}
	done := make(chan struct{})
	go func() {
		defer close(done)
		for ev := range e.Events() {
			c.add(ev)
		}
	}()
	err := e.Run(ctx)
	<-done
	return e, c, err
}

func (c *collected) add(ev Event) {
	switch v := ev.(type) {
	case PointEvent:
		c.points = append(c.points, v)
	case TraceEvent:
		c.traces = append(c.traces, v)
	case StatusEvent:
		c.statuses = append(c.statuses, v.Status)
		for _, p := range v.Status.Problems {
			c.codes[p.Code] = true
		}
	case ProgressEvent:
		c.progress = append(c.progress, v)
	case ErrorEvent:
		c.errs = append(c.errs, v.Err)
	}
}

// lastTrace returns the last trace event with the given completeness.
func (c *collected) lastTrace(complete bool) (TraceEvent, bool) {
	for i := len(c.traces) - 1; i >= 0; i-- {
		if c.traces[i].Complete == complete && !c.traces[i].Live {
			return c.traces[i], true
		}
	}
	return TraceEvent{}, false
}

// problemCodes returns the codes of every problem in the result.
func problemCodes(r Result) map[string]bool {
	m := map[string]bool{}
	for _, p := range r.Problems {
		m[p.Code] = true
	}
	return m
}
