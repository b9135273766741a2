package eseries_test

import (
	"fmt"

	"tonetrace/dsp/eseries"
)

func ExampleNearest() {
	// A fitted 4.62 kΩ and 1.09 nF, rounded to stock parts.
	fmt.Println(eseries.Nearest(4620, eseries.E12))
	fmt.Println(eseries.Nearest(4620, eseries.E96))
	fmt.Println(eseries.Nearest(1.09e-9, eseries.E24))
	// Past 9.1 the next decade's 10 is nearer.
	fmt.Println(eseries.Nearest(9.6e3, eseries.E24))
	// Output:
	// 4700
	// 4640
	// 1.1e-09
	// 10000
}

func ExampleNeighbours() {
	lo, hi := eseries.Neighbours(5000, eseries.E12)
	fmt.Println(lo, hi)
	// Output: 4700 5600
}

func ExampleParse() {
	s, err := eseries.Parse("e24")
	fmt.Println(s, err)
	_, err = eseries.Parse("E20")
	fmt.Println(err)
	// Output:
	// E24 <nil>
	// eseries: unknown series "E20"; use one of E6, E12, E24, E48, E96, E192
}
