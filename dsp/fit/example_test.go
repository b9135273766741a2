package fit_test

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"tonetrace/dsp/fit"
	"tonetrace/dsp/mna"
	"tonetrace/dsp/netlist"
	"tonetrace/dsp/trace"
)

// A first-order RC low-pass, H = 1/(1 + jωRC).
func lowPass(r, c float64) *fit.Func {
	return fit.NewFunc([]string{"R1", "C1"}, []float64{r, c},
		func(f float64, p []float64) complex128 {
			return 1 / complex(1, 2*math.Pi*f*p[0]*p[1])
		})
}

func ExampleFit() {
	// A "measured" trace of 10 kΩ and 14.3 nF, every 1/3 octave from 100 Hz.
	var meas []trace.Point
	for i := 0; i < 21; i++ {
		f := 100 * math.Pow(2, float64(i)/3)
		meas = append(meas, trace.NewPoint(f, 1/complex(1, 2*math.Pi*f*10e3*14.3e-9)))
	}
	// Fit C1 with R1 held at its nominal 10 kΩ, starting from 22 nF.
	res, err := fit.Fit(lowPass(10e3, 22e-9), meas, []string{"C1"}, fit.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	c := res.Components[0]
	fmt.Printf("%s = %.4g F; nearest E12 %.2g, E24 %.2g, E96 %.3g\n", c.Name, c.Value, c.E12, c.E24, c.E96)

	// R1 and C1 together cannot be fitted: only R1·C1 shapes the response.
	_, err = fit.Fit(lowPass(10e3, 22e-9), meas, []string{"R1", "C1"}, fit.Options{})
	var ni *fit.NotIdentifiableError
	fmt.Println(errors.As(err, &ni), err)
	// Output:
	// C1 = 1.43e-08 F; nearest E12 1.5e-08, E24 1.5e-08, E96 1.43e-08
	// true fit: R1 and C1 only act through their product; fix one of them
}

func ExampleNewNetlistModel() {
	n, err := netlist.Parse(strings.NewReader("R1 in out 10k\nC1 out 0 10n\n"), "")
	if err != nil {
		fmt.Println(err)
		return
	}
	// Measured through a 100 Ω output into a 10 kΩ input; the real part
	// is 6.8 nF.
	fx := mna.Fixture{SourceOhms: 100, LoadOhms: 10e3}
	truth, _ := fit.NewNetlistModel(n, fx)
	freqs := []float64{100, 300, 1000, 3000, 10000}
	h := make([]complex128, len(freqs))
	if err := truth.Evaluate(h, freqs, []int{1}, []float64{6.8e-9}); err != nil {
		fmt.Println(err)
		return
	}
	meas := make([]trace.Point, len(freqs))
	for i := range freqs {
		meas[i] = trace.NewPoint(freqs[i], h[i])
	}

	m, _ := fit.NewNetlistModel(n, fx)
	res, err := fit.Fit(m, meas, []string{"C1"}, fit.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%s = %.3g F (E12 %.2g)\n", res.Components[0].Name, res.Components[0].Value, res.Components[0].E12)
	// Output:
	// C1 = 6.8e-09 F (E12 6.8e-09)
}
