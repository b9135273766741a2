package multitone

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// ErrInterferer is wrapped by the error SetInterferers returns for a
// frequency it cannot fit out.
var ErrInterferer = errors.New("multitone: interferer cannot be told from the tones")

// minInterfererShare is the least share of an interferer's energy that
// must lie outside the span of the tones and the other interferers; a
// line closer to a tone than about a tenth of a bin falls below it.
const minInterfererShare = 0.01

// interferers fits sinusoids at known frequencies off the bin grid out of
// a period, jointly with the tones and DC, by least squares. With the tone
// and DC columns T (orthogonal over a period) and the interferer columns
// H, the interferer coefficients are η = S⁻¹·(Hᵀx − HᵀT(TᵀT)⁻¹Tᵀx) with the
// Schur complement S = HᵀH − HᵀT(TᵀT)⁻¹TᵀH; subtracting H·η from x then
// leaves the tones at their least-squares values. Everything but Hᵀx is
// read off the spectra, so a period costs one dot product per column and
// one pass over the spectrum.
type interferers struct {
	cols  [][]float64    // the columns h_j over one period: cos, sin per line
	spec  [][]complex128 // their spectra, the same FFT as the inputs
	sInv  *mat.SymDense  // S⁻¹
	bins  []int          // tone bins
	r, et []float64      // scratch: right-hand side, coefficients
	n     int            // period
}

// SetInterferers makes AnalyzeInto fit sinusoids at the given frequencies
// (hertz; mains hum lines, typically) out of both inputs before it reads
// the tones: a line off the bin grid otherwise leaks into every tone bin,
// and into the tone bins near it by up to its whole amplitude. Lines at
// or below 0 or at or above Nyquist, and repeats, are ignored; nil or
// empty removes the interferers. It returns an error wrapping
// ErrInterferer, and keeps the previous setting, when a line lies too
// close to a tone to be told from it (design the multitone with
// [Options.Avoid] to keep the tones clear). It allocates; call it when the
// lines change, not per period.
func (a *Analyzer) SetInterferers(freqs []float64) error {
	n, rate := a.m.Len(), a.m.Rate()
	var lines []float64
next:
	for _, f := range freqs {
		if !(f > 0 && f < rate/2) {
			continue
		}
		for _, l := range lines {
			if l == f {
				continue next
			}
		}
		lines = append(lines, f)
	}
	if len(lines) == 0 {
		a.hum = nil
		return nil
	}
	in := &interferers{n: n}
	for _, t := range a.m.tones {
		in.bins = append(in.bins, t.Bin)
	}
	for _, f := range lines {
		c, s := make([]float64, n), make([]float64, n)
		for i := range n {
			cyc := f * float64(i) / rate
			cyc -= math.Floor(cyc)
			s[i], c[i] = math.Sincos(2 * math.Pi * cyc)
		}
		in.cols = append(in.cols, c, s)
	}
	m := len(in.cols)
	for _, c := range in.cols {
		in.spec = append(in.spec, a.fft.Coefficients(nil, c))
	}
	// S scaled by each column's norm: the diagonal of its inverse is
	// 1/(the share of the column independent of all others).
	norm := make([]float64, m)
	for i, c := range in.cols {
		norm[i] = math.Sqrt(floats.Dot(c, c))
	}
	scaled := mat.NewSymDense(m, nil)
	for i := range m {
		for j := i; j < m; j++ {
			v := floats.Dot(in.cols[i], in.cols[j]) - in.toneProj(in.spec[i], in.spec[j])
			scaled.SetSym(i, j, v/(norm[i]*norm[j]))
		}
	}
	var chol mat.Cholesky
	var inv mat.SymDense
	if !chol.Factorize(scaled) || chol.InverseTo(&inv) != nil {
		return fmt.Errorf("%w: the lines %v Hz leave the tones no room; design the multitone with Options.Avoid", ErrInterferer, lines)
	}
	for i := range m {
		if inv.At(i, i) > 1/minInterfererShare {
			return fmt.Errorf("%w: the line at %g Hz lies within a fraction of a bin of a tone; design the multitone with Options.Avoid", ErrInterferer, lines[i/2])
		}
	}
	in.sInv = mat.NewSymDense(m, nil)
	for i := range m {
		for j := i; j < m; j++ {
			in.sInv.SetSym(i, j, inv.At(i, j)/(norm[i]*norm[j]))
		}
	}
	in.r, in.et = make([]float64, m), make([]float64, m)
	a.hum = in
	return nil
}

// toneProj returns uᵀT(TᵀT)⁻¹Tᵀv for two real signals given by their
// half spectra U and V (unnormalised FFT): the part of uᵀv that lies in
// the span of DC and the tones. A cosine and a sine column of tone bin k
// have energy n/2 and project u onto Re U_k and −Im U_k.
func (in *interferers) toneProj(u, v []complex128) float64 {
	s := real(u[0]) * real(v[0]) / float64(in.n)
	for _, b := range in.bins {
		s += 2 / float64(in.n) * (real(u[b])*real(v[b]) + imag(u[b])*imag(v[b]))
	}
	return s
}

// remove fits the interferers out of the period x whose spectrum is X,
// in place on X. It does not allocate.
func (in *interferers) remove(X []complex128, x []float64) {
	for j, c := range in.cols {
		in.r[j] = floats.Dot(c, x) - in.toneProj(in.spec[j], X)
	}
	m := len(in.cols)
	for i := range m {
		var v float64
		for j := range m {
			v += in.sInv.At(i, j) * in.r[j]
		}
		in.et[i] = v
	}
	for j, sp := range in.spec {
		e := complex(in.et[j], 0)
		for b := range X {
			X[b] -= e * sp[b]
		}
	}
}
