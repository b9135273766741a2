package tui

import (
	"strings"
	"testing"
)

// FuzzParseMode checks that any text either names a mode that prints
// back to a name ParseMode accepts, or gives an error that lists the
// modes.
func FuzzParseMode(f *testing.F) {
	for _, s := range []string{"stepped", "live multitone", "tone", "ANY", " any signal ", "", "chirp", "\x00"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		m, err := ParseMode(s)
		if err != nil {
			if !strings.Contains(err.Error(), "use stepped, multitone, tone or any") {
				t.Fatalf("error %q does not list the modes", err)
			}
			return
		}
		if !m.Valid() {
			t.Fatalf("ParseMode(%q) = invalid %d", s, m)
		}
		if back, err := ParseMode(m.String()); err != nil || back != m {
			t.Fatalf("round trip of %v: %v, %v", m, back, err)
		}
	})
}
