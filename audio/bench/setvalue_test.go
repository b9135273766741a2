package bench

import (
	"math"
	"strings"
	"testing"
)

// TestSetValueMidStream changes C1 of the presence network from 27 nF to
// 47 nF while a multitone plays and checks that the measured ratio follows
// the prediction: Bench.Expected before the change on a block captured
// before it, and after the change on a block captured after it (the peak
// moves from 3063 Hz to 1/(2π√(100 mH·47 nF)) = 2322 Hz).
func TestSetValueMidStream(t *testing.T) {
	// A small capture ring keeps the unpaced bench close to the reader, so
	// the change lands soon after the reader asks for it.
	b := openBench(t, Config{Seed: 12, Output: testOutput(), CaptureMS: 250})
	freqs := logFreqs(100, 15000, 12)
	before, err := b.Expected(freqs)
	if err != nil {
		t.Fatal(err)
	}
	stim := multitone(freqs, testRate, 5, 13)
	at := b.PlayIndex() + testRate/10
	lat := int64(b.Latency())
	oldFrom := at + lat + testRate // 1 s to settle, then 1 s of block
	oldEnd := oldFrom + testRate
	frames := at + lat + 9*testRate/2
	var pBefore, pAfter int64 = -1, -1
	rec := recordWith(t, b, stim, at, frames, false, func(next int64) {
		if pBefore >= 0 || next < oldEnd+testRate/20 {
			return
		}
		pBefore = b.PlayIndex()
		if err := b.SetValue("c1", 47e-9); err != nil {
			t.Errorf("SetValue: %v", err)
		}
		pAfter = b.PlayIndex()
	})
	if pBefore < 0 {
		t.Fatal("the change was never made")
	}
	// Frames captured at k hold the network's output for output frame
	// k − Latency() (+ the kernel delay): the old network up to pBefore,
	// the new one from pAfter on.
	if oldEnd-lat > pBefore {
		t.Fatalf("old block ends at %d, after the change at output %d", oldEnd, pBefore)
	}
	newFrom := pAfter + lat + testRate/10
	if newFrom+testRate > frames {
		t.Fatalf("new block %d…%d beyond the recording (%d)", newFrom, newFrom+testRate, frames)
	}
	after, err := b.Expected(freqs)
	if err != nil {
		t.Fatal(err)
	}
	var moved float64
	for i, f := range freqs {
		hOld, _, _ := ratioAt(t, rec.x, int(oldFrom), testRate, f)
		hNew, _, _ := ratioAt(t, rec.x, int(newFrom), testRate, f)
		if w := before.Points[i].H; !near(hOld, w) {
			t.Errorf("%g Hz before: %.3f dB %.2f°, want %.3f dB %.2f°", f, dB(hOld), deg(hOld), dB(w), deg(w))
		}
		if w := after.Points[i].H; !near(hNew, w) {
			t.Errorf("%g Hz after: %.3f dB %.2f°, want %.3f dB %.2f°", f, dB(hNew), deg(hNew), dB(w), deg(w))
		}
		moved = math.Max(moved, math.Abs(dB(hNew)-dB(hOld)))
	}
	if moved < 1 {
		t.Errorf("the response moved at most %.2f dB; the change did not show", moved)
	}
	if v, ok := b.Value("C1"); !ok || v != 47e-9 {
		t.Errorf("Value(C1) = %g, %v after SetValue", v, ok)
	}
	if e, ok := b.Netlist().Element("C1"); !ok || e.Value != 47e-9 {
		t.Errorf("Netlist() C1 = %+v", e)
	}
}

// TestSetValueErrors covers refused changes: nothing changes.
func TestSetValueErrors(t *testing.T) {
	b := openBench(t, Config{})
	for _, c := range []struct {
		name, elem string
		v          float64
		want       string
	}{
		{"no element", "R9", 1e3, `no element "R9"; it has Rin, U1, Rf, R2, L1, C1`},
		{"amplifier", "U1", 1, "U1"},
		{"negative", "C1", -1e-9, "C1"},
		{"NaN", "R2", math.NaN(), "R2"},
	} {
		t.Run(c.name, func(t *testing.T) {
			err := b.SetValue(c.elem, c.v)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("SetValue(%s, %g) = %v, want an error containing %q", c.elem, c.v, err, c.want)
			}
			if v, _ := b.Value("C1"); v != 27e-9 {
				t.Errorf("C1 = %g after a refused change", v)
			}
		})
	}
}
