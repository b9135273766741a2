package plot

import "testing"

// TestBrailleCodePoints checks the dot layout against code points named in
// the Unicode Braille Patterns chart, U+2800–U+28FF (from memory: the
// chart names each pattern by its dots, BRAILLE PATTERN DOTS-n…).
func TestBrailleCodePoints(t *testing.T) {
	tests := []struct {
		name     string // Unicode character name
		want     rune
		col, row []int // dots set, as (col, row) pairs
	}{
		{"BRAILLE PATTERN BLANK", '\u2800', nil, nil},
		{"BRAILLE PATTERN DOTS-1", '\u2801', []int{0}, []int{0}},
		{"BRAILLE PATTERN DOTS-2", '\u2802', []int{0}, []int{1}},
		{"BRAILLE PATTERN DOTS-3", '\u2804', []int{0}, []int{2}},
		{"BRAILLE PATTERN DOTS-4", '\u2808', []int{1}, []int{0}},
		{"BRAILLE PATTERN DOTS-5", '\u2810', []int{1}, []int{1}},
		{"BRAILLE PATTERN DOTS-6", '\u2820', []int{1}, []int{2}},
		{"BRAILLE PATTERN DOTS-7", '\u2840', []int{0}, []int{3}},
		{"BRAILLE PATTERN DOTS-8", '\u2880', []int{1}, []int{3}},
		{"BRAILLE PATTERN DOTS-1237 (left column)", '\u2847', []int{0, 0, 0, 0}, []int{0, 1, 2, 3}},
		{"BRAILLE PATTERN DOTS-78 (bottom row)", '\u28C0', []int{0, 1}, []int{3, 3}},
		{"BRAILLE PATTERN DOTS-12345678", '\u28FF',
			[]int{0, 0, 0, 0, 1, 1, 1, 1}, []int{0, 1, 2, 3, 0, 1, 2, 3}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var bits uint8
			for i := range tt.col {
				bits |= dotBits[tt.row[i]][tt.col[i]]
			}
			if got := braille(bits); got != tt.want {
				t.Errorf("braille(%#02x) = %U, want %U", bits, got, tt.want)
			}
		})
	}
}

// TestLoneDotCodePoint renders single points into a 1×1 plot cell and
// checks the rune, so the whole path from value to code point is covered.
func TestLoneDotCodePoint(t *testing.T) {
	// One plot column (2 dots) spanning 100 Hz–1 kHz, one plot row (4
	// dots) spanning 0–3: dot x 0 at 100 Hz, 1 at 1 kHz; dot y 0 at 3.
	tests := []struct {
		name string
		f, v float64
		want rune // from the Unicode Braille Patterns chart (from memory)
	}{
		{"dots-1 top left", 100, 3, '\u2801'},
		{"dots-2", 100, 2, '\u2802'},
		{"dots-3", 100, 1, '\u2804'},
		{"dots-7 bottom left", 100, 0, '\u2840'},
		{"dots-4 top right", 1000, 3, '\u2808'},
		{"dots-8 bottom right", 1000, 0, '\u2880'},
	}
	var c Canvas
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p := Panel{Y: Axis{Min: 0, Max: 3}, Series: []Series{{Freq: []float64{tt.f}, Value: []float64{tt.v}}}}
			g := c.Render(1, 1, Options{From: 100, To: 1000}, p)
			if got := g.At(0, 0).Rune; got != tt.want {
				t.Errorf("got %U, want %U", got, tt.want)
			}
		})
	}
}

func TestASCIIDots(t *testing.T) {
	// Expected characters follow the rule stated on asciiDots (our own
	// convention, not an outside source): where the dots sit decides.
	bit := func(col, row int) uint8 { return uint8(unicodeDot(col, row)) }
	tests := []struct {
		name string
		bits uint8
		want rune
	}{
		{"empty", 0, ' '},
		{"top row", bit(0, 0) | bit(1, 0), '\''},
		{"rows 0-1", bit(0, 0) | bit(1, 1), '\''},
		{"row 1", bit(0, 1), '-'},
		{"rows 1-2", bit(0, 1) | bit(1, 2), '-'},
		{"row 2", bit(1, 2), '-'},
		{"rows 2-3", bit(0, 2) | bit(1, 3), '.'},
		{"bottom row", bit(0, 3) | bit(1, 3), '.'},
		{"left column full", bit(0, 0) | bit(0, 1) | bit(0, 2) | bit(0, 3), '|'},
		{"falling", bit(0, 0) | bit(0, 1) | bit(1, 2) | bit(1, 3), '\\'},
		{"rising", bit(0, 3) | bit(0, 2) | bit(1, 1) | bit(1, 0), '/'},
		{"both columns full", 0xFF, '|'},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := asciiDots(tt.bits); got != tt.want {
				t.Errorf("asciiDots(%#02x) = %q, want %q", tt.bits, got, tt.want)
			}
		})
	}
}
