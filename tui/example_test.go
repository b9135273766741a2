package tui

import (
	"fmt"
	"strings"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/x/ansi"
	"github.com/muesli/termenv"
)

func ExampleParseMode() {
	m, err := ParseMode("multitone")
	fmt.Println(m, err)
	_, err = ParseMode("chirp")
	fmt.Println(err)
	// Output:
	// live multitone <nil>
	// tui: unknown mode "chirp"; use stepped, multitone, tone or any
}

func ExampleKeyMap_ShortHelp() {
	for _, b := range DefaultKeyMap().ShortHelp() {
		fmt.Printf("%-6s %s\n", b.Help, b.Desc)
	}
	// Output:
	// space  start / pause
	// x      mute / unmute, at once
	// +      output level up (capped)
	// -      output level down
	// m      next way of measuring
	// r      store live as a reference
	// s      save the live trace (CSV)
	// ?      this help
	// q      quit (also ctrl+c)
}

// ExampleNew feeds the screen a measured first-order RC low-pass
// (REFERENCES.md §5: R = 10 kΩ, C = 15 nF) and reads its parameters off
// the Cursor pane.
func ExampleNew() {
	// A clock that moves a second per reading draws every change at
	// once (frames are otherwise at most 1/30 s apart, drawn by a tick).
	now := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
	clock := func() time.Time { now = now.Add(time.Second); return now }
	m := New(newFake(), Options{Profile: termenv.Ascii, Cursor: 1000, Clock: clock})
	m.Update(tea.WindowSizeMsg{Width: 120, Height: 30})
	m.Update(TraceMsg{Trace: analytic(rcLowpass, logFreqs(20, 20e3, 61)), Complete: true})
	m.Update(tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune{'c'}}) // to the corner
	for _, line := range strings.Split(ansi.Strip(m.View()), "\n") {
		for _, what := range []string{"low-pass", "−3 dB at"} {
			if i := strings.Index(line, what); i >= 0 {
				fmt.Println(strings.TrimSpace(line[i:]))
			}
		}
	}
	// Output:
	// low-pass, passband 0.00 dB
	// −3 dB at 1.061 kHz (−45.0°)
}
