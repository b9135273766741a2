package plot

// brailleBase is U+2800 BRAILLE PATTERN BLANK; a pattern is brailleBase
// plus its dot bits.
const brailleBase = 0x2800

// dotBits[row][col] is the bit of the dot at (col, row) of a cell, col 0–1
// left to right, row 0–3 top to bottom: dots 1 2 3 7 down the left
// column, 4 5 6 8 down the right, dot n being bit n−1.
var dotBits = [4][2]uint8{
	{0x01, 0x08},
	{0x02, 0x10},
	{0x04, 0x20},
	{0x40, 0x80},
}

// braille returns the braille pattern with the given dot bits.
func braille(bits uint8) rune { return brailleBase + rune(bits) }

// asciiDots returns an ASCII character that stands for a cell's dot bits
// by where the dots sit: ' (top), - (middle), . (bottom), | for dots
// spanning three or more rows, / or \ when such a span rises or falls
// from the left column to the right.
func asciiDots(bits uint8) rune {
	if bits == 0 {
		return ' '
	}
	top, bot := 4, -1
	var sum [2]int // sum of dot rows per column
	var cnt [2]int
	for r := 0; r < 4; r++ {
		for c := 0; c < 2; c++ {
			if bits&dotBits[r][c] != 0 {
				top = min(top, r)
				bot = max(bot, r)
				sum[c] += r
				cnt[c]++
			}
		}
	}
	if bot-top >= 2 {
		if cnt[0] > 0 && cnt[1] > 0 {
			// Compare mean rows without dividing: l/cl vs r/cr.
			l, r := sum[0]*cnt[1], sum[1]*cnt[0]
			d := cnt[0] * cnt[1]
			switch {
			case l+d <= r:
				return '\\'
			case r+d <= l:
				return '/'
			}
		}
		return '|'
	}
	switch top + bot {
	case 0, 1:
		return '\''
	case 5, 6:
		return '.'
	}
	return '-'
}
