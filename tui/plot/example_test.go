package plot_test

import (
	"fmt"
	"math"
	"strings"

	"tonetrace/tui/plot"
)

// lowpass returns the gain in dB of a first-order low-pass with corner fc
// at n log-spaced frequencies from lo to hi.
func lowpass(fc, lo, hi float64, n int) (freq, gain []float64) {
	for i := 0; i < n; i++ {
		f := lo * math.Pow(hi/lo, float64(i)/float64(n-1))
		freq = append(freq, f)
		gain = append(gain, -10*math.Log10(1+(f/fc)*(f/fc)))
	}
	return freq, gain
}

// printGrid prints a grid's rows without trailing spaces.
func printGrid(g plot.Grid) {
	for _, row := range strings.Split(g.String(), "\n") {
		fmt.Println(strings.TrimRight(row, " "))
	}
}

func ExampleRender() {
	freq, gain := lowpass(1061.033, 20, 20e3, 100)
	g := plot.Render(40, 6, plot.Options{From: 20, To: 20e3},
		plot.Panel{
			Title:  "Gain",
			Y:      plot.Axis{Min: -30, Max: 0, Unit: "dB"},
			Series: []plot.Series{{Name: "RC", Freq: freq, Value: gain}},
		})
	printGrid(g)
	// Output:
	//  dB Gain                              RC
	//   0┤⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠉⠓⠒⠒⠢⠤⢄⣀┈┈┈┈┈┈┈┈┼┈┈┈
	//    │        ┊           ┊   ⠉⠑⠒⠤⣀⡀  ┊
	// -20┤┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈┈┈┈┼┈┈┈┈┈┈┈┈⠈⠑⠒⠤⣀┈┈
	//    │        ┊           ┊           ┊ ⠉⠑
	//  Hz     50 100     500  1k      5k 10k
}

func ExampleCanvas_Bode() {
	freq, gain := lowpass(1061.033, 20, 20e3, 100)
	phase := make([]float64, len(freq))
	for i, f := range freq {
		phase[i] = -math.Atan(f/1061.033) * 180 / math.Pi
	}
	var c plot.Canvas // keep it: the next frame reuses its buffers
	g := c.Bode(30, 8, plot.Options{From: 20, To: 20e3, ASCII: true},
		plot.Axis{Min: -30, Max: 0}, plot.Axis{Min: -90, Max: 0, Step: 45},
		plot.Curve{Freq: freq, Gain: gain, Phase: phase})
	printGrid(*g)
	// Output:
	//  dB Gain
	//   0+'''''''''''''----.. . .+.
	// -20+. . . + . . . + . ''--...
	//    |      :       :        ''-
	//   0+''''''-----.. + . . . .+.
	// -45+. . . + . . ''--. . . .+.
	// -90+. . . + . . . + .''-----..
	//  Hz      100      1k      10k
}

func ExampleXMap() {
	g := plot.Render(80, 24, plot.Options{From: 20, To: 20e3}, plot.Panel{Y: plot.Axis{Min: -40, Max: 0}})
	col, ok := g.X.Col(1000)
	fmt.Println("1 kHz is in column", col, ok)
	fmt.Printf("column %d is centred on %.1f Hz\n", col, g.X.Freq(col))
	_, ok = g.X.Col(50e3)
	fmt.Println("50 kHz is on the plot:", ok)
	// Output:
	// 1 kHz is in column 47 true
	// column 47 is centred on 1046.1 Hz
	// 50 kHz is on the plot: false
}
