package tui

import (
	"slices"
	"strings"

	tea "github.com/charmbracelet/bubbletea"
)

// Binding is one action's keys and its help text.
type Binding struct {
	// Keys are the key names as Bubble Tea spells them (tea.KeyMsg's
	// String): "q", "ctrl+c", "left", "shift+left", " " for space.
	Keys []string
	// Help is the key as shown in the help, e.g. "←/h".
	Help string
	// Desc says what the key does, e.g. "cursor left".
	Desc string
}

// Matches reports whether msg is one of the binding's keys.
func (b Binding) Matches(msg tea.KeyMsg) bool {
	return slices.Contains(b.Keys, msg.String())
}

func bind(help, desc string, keys ...string) Binding {
	return Binding{Keys: keys, Help: help, Desc: desc}
}

// KeyMap holds every key of the screen. [DefaultKeyMap] gives the
// standard letters; a caller may change them before [New].
type KeyMap struct {
	// Measuring.
	Mode, ModeBack, StartPause, Mute, LevelUp, LevelDown Binding
	// Cursor.
	Left, Right, FastLeft, FastRight, Peak, Notch, Corner Binding
	// Traces and view.
	Store, Forget, Refs, Prediction, Difference, Scale, Wrap Binding
	// Files.
	SaveTrace, SavePicture Binding
	// Demo bench.
	NextPart, PrevPart, ValueUp, ValueDown Binding
	// Screen.
	Help, Close, Quit Binding
}

// DefaultKeyMap returns the standard keys.
func DefaultKeyMap() KeyMap {
	return KeyMap{
		Mode:        bind("m", "next way of measuring", "m"),
		ModeBack:    bind("M", "previous way of measuring", "M"),
		StartPause:  bind("space", "start / pause", " "),
		Mute:        bind("x", "mute / unmute, at once", "x"),
		LevelUp:     bind("+", "output level up (capped)", "+", "="),
		LevelDown:   bind("-", "output level down", "-", "_"),
		Left:        bind("←/h", "cursor left (tone down)", "left", "h"),
		Right:       bind("→/l", "cursor right (tone up)", "right", "l"),
		FastLeft:    bind("H", "cursor far left", "H", "shift+left", "pgup"),
		FastRight:   bind("L", "cursor far right", "L", "shift+right", "pgdown"),
		Peak:        bind("p", "cursor to the peak", "p"),
		Notch:       bind("n", "cursor to the notch", "n"),
		Corner:      bind("c", "cursor to next −3 dB corner", "c"),
		Store:       bind("r", "store live as a reference", "r"),
		Forget:      bind("R", "forget stored references", "R"),
		Refs:        bind("o", "show / hide references", "o"),
		Prediction:  bind("e", "show / hide the prediction", "e"),
		Difference:  bind("d", "show / hide live − reference", "d"),
		Scale:       bind("a", "automatic / fixed scales", "a"),
		Wrap:        bind("w", "phase wrapped / unwrapped", "w"),
		SaveTrace:   bind("s", "save the live trace (CSV)", "s"),
		SavePicture: bind("S", "save picture (text, SVG, PNG)", "S"),
		NextPart:    bind("tab", "demo: next component", "tab"),
		PrevPart:    bind("shift+tab", "demo: previous component", "shift+tab"),
		ValueUp:     bind("]", "demo: value up (E-series)", "]"),
		ValueDown:   bind("[", "demo: value down (E-series)", "["),
		Help:        bind("?", "this help", "?"),
		Close:       bind("esc", "close help, clear message", "esc"),
		Quit:        bind("q", "quit (also ctrl+c)", "q", "ctrl+c"),
	}
}

// ShortHelp returns the keys shown on the bottom line.
func (k KeyMap) ShortHelp() []Binding {
	return []Binding{k.StartPause, k.Mute, k.LevelUp, k.LevelDown, k.Mode, k.Store, k.SaveTrace, k.Help, k.Quit}
}

// FullHelp returns every key in groups, as listed by the help overlay.
func (k KeyMap) FullHelp() [][]Binding {
	return [][]Binding{
		{k.StartPause, k.Mute, k.LevelUp, k.LevelDown, k.Mode, k.ModeBack},
		{k.Left, k.Right, k.FastLeft, k.FastRight, k.Peak, k.Notch, k.Corner},
		{k.Store, k.Forget, k.Refs, k.Prediction, k.Difference, k.Scale, k.Wrap},
		{k.SaveTrace, k.SavePicture, k.NextPart, k.PrevPart, k.ValueUp, k.ValueDown},
		{k.Help, k.Close, k.Quit},
	}
}

// helpGroupTitle names group i of FullHelp.
func helpGroupTitle(i int) string {
	switch i {
	case 0:
		return "Measure"
	case 1:
		return "Cursor"
	case 2:
		return "Traces"
	case 3:
		return "Files and demo"
	}
	return "Screen"
}

// shortHelpText renders ShortHelp for the bottom line.
func (k KeyMap) shortHelpText() string {
	return strings.Join([]string{
		k.StartPause.Help + " start/pause",
		k.Mute.Help + " mute",
		k.LevelUp.Help + "/" + k.LevelDown.Help + " level",
		k.Mode.Help + " mode",
		k.Store.Help + " store",
		k.SaveTrace.Help + " save",
		k.Help.Help + " keys",
		k.Quit.Help + " quit",
	}, "  ")
}
