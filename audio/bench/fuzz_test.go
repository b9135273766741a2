package bench

import (
	"strings"
	"testing"
)

// FuzzParseFaults checks that ParseFaults never panics, that what it accepts
// survives a round trip through FormatFaults, and that its errors name the
// package and say how to fix the list.
func FuzzParseFaults(f *testing.F) {
	for _, s := range []string{"", "swap,hum", " dead-ref , clip", "invert,dropout,drift,unplug", "swp", "hum,hum", "swap,,", "dead-dut\x00"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fs, err := ParseFaults(s)
		if err != nil {
			msg := err.Error()
			if !strings.HasPrefix(msg, "bench: ") || !(strings.Contains(msg, "known faults") || strings.Contains(msg, "once")) {
				t.Fatalf("unclear error for %q: %v", s, err)
			}
			return
		}
		again, err := ParseFaults(FormatFaults(fs))
		if err != nil || FormatFaults(again) != FormatFaults(fs) {
			t.Fatalf("round trip of %q: %v → %v, %v", s, fs, again, err)
		}
		if _, err := resolveFaults(fs); err != nil {
			t.Fatalf("accepted %q but Open would refuse it: %v", s, err)
		}
	})
}
