package simulate

import (
	"math"

	"tonetrace/dsp/mna"
)

// The test networks, with the values of REFERENCES.md §5 where it has
// them.

// rcLowPass is R = 10 kΩ, C = 15 nF, fc = 1061.0330 Hz (REFERENCES.md §5).
func rcLowPass(r, c float64) *mna.Descriptor {
	return new(circuit).R("R1", "in", "out", r).C("C1", "out", "0", c).build("in", "out")
}

// rlcBandPass is the series RLC with the output across R: L = 10 mH,
// C = 100 nF, R = 100 Ω, f₀ = 5032.921 Hz, Q = 3.16228 (REFERENCES.md §5).
func rlcBandPass() *mna.Descriptor {
	return new(circuit).L("L1", "in", "a", 10e-3).C("C1", "a", "out", 100e-9).R("R1", "out", "0", 100).build("in", "out")
}

// sallenKey is the unity-gain Sallen-Key low-pass R1 = R2 = 10 kΩ,
// C1 = 22 nF (feedback), C2 = 10 nF (to ground) with an ideal op-amp
// follower (a nullor row), f₀ = 1073.022 Hz, Q = 0.741620
// (REFERENCES.md §5).
func sallenKey() *mna.Descriptor {
	return new(circuit).
		R("R1", "in", "a", 10e3).R("R2", "a", "b", 10e3).
		C("C1", "a", "out", 22e-9).C("C2", "b", "0", 10e-9).
		U("U1", "out", "b", "out").
		build("in", "out")
}

// twinT is the twin-T notch R, R, R/2; C, C, 2C with R = 10 kΩ,
// C = 15 nF, f₀ = 1061.03 Hz, ideal source, no load (REFERENCES.md §5).
func twinT() *mna.Descriptor {
	const r, c = 10e3, 15e-9
	return new(circuit).
		R("R1", "in", "m", r).R("R2", "m", "out", r).C("C3", "m", "0", 2*c).
		C("C1", "in", "n", c).C("C2", "n", "out", c).R("R3", "n", "0", r/2).
		build("in", "out")
}

// twinTFormula is H = (s² + ω₀²)/(s² + 4ω₀s + ω₀²), ω₀ = 1/(RC)
// (REFERENCES.md §5 [V]).
func twinTFormula(f float64) complex128 {
	w0 := 1 / (10e3 * 15e-9)
	s := complex(0, 2*math.Pi*f)
	return (s*s + complex(w0*w0, 0)) / (s*s + complex(4*w0, 0)*s + complex(w0*w0, 0))
}

// network20 is a 20-element chain of the kind the bench measures: a
// 100 Ω source, an RC coupling high-pass (15 Hz) into a follower, an RLC
// low-pass (7.3 kHz, Q 0.46), a unity-gain Sallen-Key low-pass (1073 Hz),
// an RC low-pass (7.2 kHz) and an inverting stage of gain −2.2 with a
// 7.2 kHz feedback pole, loaded by 47 kΩ ∥ 100 pF. The load capacitor sits
// on an ideal op-amp output, a loop of a capacitor and a voltage source:
// the reduction must treat it as algebraic. Elements: Rs C1 R1 U1 R2 L1
// C2 R3 R4 C3 C4 U2 R5 C5 Ri Rf Cf U3 RL CL — 20, 8 of them reactive.
func network20() *mna.Descriptor {
	return network20With(22e3)
}

// network20With is network20 with the feedback resistor Rf changed.
func network20With(rf float64) *mna.Descriptor {
	return new(circuit).
		R("Rs", "src", "in", 100).
		C("C1", "in", "a", 220e-9).R("R1", "a", "0", 47e3).
		U("U1", "b", "a", "b").
		R("R2", "b", "c", 1e3).L("L1", "c", "d", 10e-3).C("C2", "d", "0", 47e-9).
		R("R3", "d", "e", 10e3).R("R4", "e", "f", 10e3).C("C3", "e", "g", 22e-9).C("C4", "f", "0", 10e-9).
		U("U2", "g", "f", "g").
		R("R5", "g", "h", 4.7e3).C("C5", "h", "0", 4.7e-9).
		R("Ri", "h", "i", 10e3).R("Rf", "i", "out", rf).C("Cf", "i", "out", 1e-9).
		U("U3", "out", "0", "i").
		R("RL", "out", "0", 47e3).C("CL", "out", "0", 100e-12).
		build("src", "out")
}

// differentiator is an ideal op-amp differentiator, H = −sRC with
// R = 10 kΩ, C = 1 nF: improper (gain rising without bound).
func differentiator() *mna.Descriptor {
	return new(circuit).C("C1", "in", "a", 1e-9).R("R1", "a", "out", 10e3).U("U1", "out", "0", "a").build("in", "out")
}
