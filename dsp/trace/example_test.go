package trace_test

import (
	"fmt"
	"math/cmplx"
	"os"
	"strings"

	"tonetrace/dsp/trace"
)

func ExampleWrite() {
	t := &trace.Trace{}
	t.SetMeta("tool", "tonetrace 0.1.0")
	t.SetMeta("network", "RC low-pass, R 10k, C 15n")
	// The RC low-pass of REFERENCES.md §5 at fc = 1061.033 Hz: −3.0103 dB, −45°.
	p := trace.FromPolar(1061.033, -3.0103, -45)
	p.Coherence = 0.9999
	t.Points = append(t.Points, trace.FromPolar(106.1033, -0.0432, -5.7106), p)
	if err := trace.Write(os.Stdout, t); err != nil {
		fmt.Println(err)
	}
	// Output:
	// # tool: tonetrace 0.1.0
	// # network: RC low-pass, R 10k, C 15n
	// freq_hz,gain_db,phase_deg,coherence
	// 106.1033,-0.0432,-5.7106,
	// 1061.033,-3.0103,-45,0.9999
}

func ExampleRead() {
	in := `# tool: tonetrace 0.1.0
freq_hz,gain_db,phase_deg,gain_u_db
100,-0.04,-5.71,0.002
200,-0.17,-11.3,
`
	t, err := trace.Read(strings.NewReader(in))
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range t.Points {
		fmt.Printf("%g Hz: %.2f dB, %.2f°, |H| %.4f, u %v\n", p.Freq, p.GainDB(), p.PhaseDeg(), cmplx.Abs(p.H), p.GainU)
	}
	// Output:
	// 100 Hz: -0.04 dB, -5.71°, |H| 0.9954, u 0.002
	// 200 Hz: -0.17 dB, -11.30°, |H| 0.9806, u NaN
}

func ExampleParseError() {
	_, err := trace.Read(strings.NewReader("freq_hz,gain_db,phase_deg\n100,-0.04,-5.71\n200,abc,-11.3\n"))
	fmt.Println(err)
	// Output:
	// line 3, column 2: gain_db "abc" is not a number; write a decimal number such as -3.01
}
