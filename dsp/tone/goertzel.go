package tone

import "math"

const (
	// chunkLen is the number of samples one Goertzel recurrence runs before
	// its state is folded into the result and restarted. The rounding
	// error of the recurrence grows with its length, worst near ω = 0 and
	// π; restarting every chunkLen samples keeps the error nearly
	// independent of the block length (about 1e−12 relative at 20 Hz of
	// 48 kHz over 10 s, against 4e−9 for one unbroken recurrence).
	chunkLen = 256
	// lanes is how many chunks the hot loops run side by side, so that
	// they are bound by arithmetic throughput rather than by the latency
	// of one recurrence (six keeps every state in a register).
	lanes = 6
	// group is the span of samples the lanes cover together.
	group = lanes * chunkLen
)

// Goertzel returns X(ω) = Σ x[n]·e^{−jωn} over the whole of x, with
// ω = 2π·freq/rate in radians per sample; freq and rate are in the same
// unit (normally hertz). Any finite ω is allowed: freq need not fall on a
// DFT bin and may lie above rate/2 or below zero.
//
// It runs the Goertzel recurrence s[n] = x[n] + 2cos ω·s[n−1] − s[n−2] and
// forms X = e^{−jω(N−1)}·(s[N−1] − e^{−jω}·s[N−2]), restarting the
// recurrence every 256 samples and summing the phase-shifted partial
// results to bound rounding error. For A·cos(ωn+φ) over a whole number of
// cycles, 2·|X|/N = A and arg X = φ.
//
// An empty x gives 0. The result is NaN when ω is not finite (for example
// when rate is 0). It does not allocate.
func Goertzel(x []float64, freq, rate float64) complex128 {
	w := 2 * math.Pi * freq / rate
	if math.IsNaN(w) || math.IsInf(w, 0) {
		return complex(math.NaN(), math.NaN())
	}
	return project(x, w)
}

// fold turns the final state (s1, s2) = (s[e], s[e−1]) of a recurrence
// started at zero into its share of X(ω): (s1 − e^{−jω}·s2)·ph, where
// sw, cw are sin ω, cos ω and ph = e^{−jω·e} for the index e of the chunk's
// last sample.
func fold(s1, s2, sw, cw float64, ph complex128) complex128 {
	return complex(s1-cw*s2, sw*s2) * ph
}

// project returns X(ω) = Σ x[n]·e^{−jωn} by chunked Goertzel recurrences,
// six chunks at a time. The fold phases e^{−jω·e} advance from chunk to
// chunk by multiplication with e^{−jω·chunkLen} (rounding drift about
// 1e−16 per chunk), the tail's is computed afresh.
func project(x []float64, w float64) complex128 {
	sw, cw := math.Sincos(w)
	c := 2 * cw
	n := len(x)
	full := n / group * group
	var acc complex128
	ps, pc := math.Sincos(-w * (chunkLen - 1))
	ph := complex(pc, ps)
	ss, sc := math.Sincos(-w * chunkLen)
	step := complex(sc, ss)
	for b := 0; b < full; b += group {
		x0 := x[b : b+chunkLen : b+chunkLen]
		x1 := x[b+chunkLen : b+2*chunkLen : b+2*chunkLen]
		x2 := x[b+2*chunkLen : b+3*chunkLen : b+3*chunkLen]
		x3 := x[b+3*chunkLen : b+4*chunkLen : b+4*chunkLen]
		x4 := x[b+4*chunkLen : b+5*chunkLen : b+5*chunkLen]
		x5 := x[b+5*chunkLen : b+6*chunkLen : b+6*chunkLen]
		// s[n] = c·s[n−1] + (x[n] − s[n−2]), two samples per turn so that
		// the two state variables of each lane swap roles instead of being
		// copied; the subtraction is off the critical path.
		var a1, a2, b1, b2, d1, d2, e1, e2, g1, g2, h1, h2 float64
		for i := 0; i < chunkLen; i += 2 {
			a2 = c*a1 + (x0[i] - a2)
			b2 = c*b1 + (x1[i] - b2)
			d2 = c*d1 + (x2[i] - d2)
			e2 = c*e1 + (x3[i] - e2)
			g2 = c*g1 + (x4[i] - g2)
			h2 = c*h1 + (x5[i] - h2)
			a1 = c*a2 + (x0[i+1] - a1)
			b1 = c*b2 + (x1[i+1] - b1)
			d1 = c*d2 + (x2[i+1] - d1)
			e1 = c*e2 + (x3[i+1] - e1)
			g1 = c*g2 + (x4[i+1] - g1)
			h1 = c*h2 + (x5[i+1] - h1)
		}
		acc += fold(a1, a2, sw, cw, ph)
		ph *= step
		acc += fold(b1, b2, sw, cw, ph)
		ph *= step
		acc += fold(d1, d2, sw, cw, ph)
		ph *= step
		acc += fold(e1, e2, sw, cw, ph)
		ph *= step
		acc += fold(g1, g2, sw, cw, ph)
		ph *= step
		acc += fold(h1, h2, sw, cw, ph)
		ph *= step
	}
	for b := full; b < n; b += chunkLen {
		e := min(b+chunkLen, n)
		var s1, s2 float64
		for _, v := range x[b:e] {
			s1, s2 = c*s1+(v-s2), s1
		}
		ps, pc := math.Sincos(-w * float64(e-1))
		acc += fold(s1, s2, sw, cw, complex(pc, ps))
	}
	return acc
}

// goertzelBank evaluates X(kω) for k = 1..k (k ≤ maxHarmonic) into
// dst[0..k−1] and returns Σ x[n].
func goertzelBank(x []float64, w float64, k int, dst *[maxHarmonic]complex128) float64 {
	for h := range k {
		dst[h] = project(x, float64(h+1)*w)
	}
	return sum(x)
}

// sum returns Σ x[n] with four partial sums per chunk.
func sum(x []float64) float64 {
	var total float64
	for b := 0; b < len(x); b += group {
		seg := x[b:min(b+group, len(x))]
		var s0, s1, s2, s3 float64
		i := 0
		for ; i+4 <= len(seg); i += 4 {
			s0 += seg[i]
			s1 += seg[i+1]
			s2 += seg[i+2]
			s3 += seg[i+3]
		}
		for ; i < len(seg); i++ {
			s0 += seg[i]
		}
		total += (s0 + s1) + (s2 + s3)
	}
	return total
}

// seeds holds, for each lane of a group, the model values Re(c·e^{jkωn})
// at the lane's first sample n (m) and at n − 1 (p), which start the
// recurrence m[n+1] = 2cos(kω)·m[n] − m[n−1].
type seeds struct{ m, p [lanes]float64 }

// set fills the seeds of one group from rot = c·e^{jkω·b}, the complex
// model at the group's first sample b, and advances rot to the next group
// by multiplication with step = e^{jkω·chunkLen}; back = e^{−jkω}.
func (s *seeds) set(rot *complex128, step, back complex128) {
	for l := range lanes {
		z := *rot
		s.m[l] = real(z)
		s.p[l] = real(z * back)
		*rot = z * step
	}
}

// residualSumSq returns Σ (x[n] − m[n])² for the model
// m[n] = dc + Σ_{k=1..5} Re(c[k−1]·e^{jkωn}); entries of c past the fitted
// harmonics must be zero. Each harmonic is synthesised by the recurrence
// m[n+1] = 2cos(kω)·m[n] − m[n−1], restarted at every chunk from seeds
// rotated along chunk by chunk (drift about 1e−16 per chunk) and run on six
// chunks at a time. The first harmonic's pass writes x − dc − m₁
// to a stack buffer, later passes subtract theirs, and the last one sums
// the squares.
func residualSumSq(x []float64, w, dc float64, c *[maxHarmonic]complex128) float64 {
	var hs [maxHarmonic]int // fitted harmonics (index into c)
	nh := 0
	for h := range maxHarmonic {
		if c[h] != 0 {
			hs[nh] = h
			nh++
		}
	}
	var co [maxHarmonic]float64
	var back, step, rot [maxHarmonic]complex128
	for h := range maxHarmonic {
		sn, cs := math.Sincos(float64(h+1) * w)
		co[h] = 2 * cs
		back[h] = complex(cs, -sn)
		sn, cs = math.Sincos(float64(h+1) * w * chunkLen)
		step[h] = complex(cs, sn)
		rot[h] = c[h] // the model at n = 0
	}
	n := len(x)
	full := n / group * group
	var buf [group]float64
	var sd seeds
	var ss float64
	for b := 0; b < full; b += group {
		xs := x[b : b+group : b+group]
		if nh == 0 {
			ss += sumSqDev(xs, dc)
			continue
		}
		for j := range nh {
			h := hs[j]
			sd.set(&rot[h], step[h], back[h])
			switch {
			case nh == 1:
				ss += synthSquare(xs, dc, co[h], &sd)
			case j == 0:
				synthFirst(&buf, xs, dc, co[h], &sd)
			case j == nh-1:
				ss += synthSquare(buf[:], 0, co[h], &sd)
			default:
				synthSub(&buf, co[h], &sd)
			}
		}
	}
	// The tail, shorter than a group: one chunk at a time.
	for b := full; b < n; b += chunkLen {
		e := min(b+chunkLen, n)
		r := buf[:e-b]
		for i, v := range x[b:e] {
			r[i] = v - dc
		}
		for j := range nh {
			h := hs[j]
			kw := float64(h+1) * w
			sn, cs := math.Sincos(kw * float64(b))
			z := c[h] * complex(cs, sn)
			m, p := real(z), real(z*back[h])
			ch := co[h]
			for i := range r {
				r[i] -= m
				m, p = ch*m-p, m
			}
		}
		ss += sumSqDev(r, 0)
	}
	return ss
}

// sumSqDev returns Σ (x[i] − d)² with four partial sums.
func sumSqDev(x []float64, d float64) float64 {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		v0, v1, v2, v3 := x[i]-d, x[i+1]-d, x[i+2]-d, x[i+3]-d
		s0 += v0 * v0
		s1 += v1 * v1
		s2 += v2 * v2
		s3 += v3 * v3
	}
	for ; i < len(x); i++ {
		v := x[i] - d
		s0 += v * v
	}
	return (s0 + s1) + (s2 + s3)
}

// The lane loops below run the model recurrence on the six chunks of one
// group, two samples per turn: m holds the model at i and p the one
// before; p then takes i+1 and m i+2, so the states swap roles instead of
// being copied.

// synthFirst writes r = x − dc − model.
func synthFirst(r *[group]float64, x []float64, dc, co float64, s *seeds) {
	x0 := x[0:chunkLen:chunkLen]
	x1 := x[chunkLen : 2*chunkLen : 2*chunkLen]
	x2 := x[2*chunkLen : 3*chunkLen : 3*chunkLen]
	x3 := x[3*chunkLen : 4*chunkLen : 4*chunkLen]
	x4 := x[4*chunkLen : 5*chunkLen : 5*chunkLen]
	x5 := x[5*chunkLen : 6*chunkLen : 6*chunkLen]
	r0 := r[0:chunkLen:chunkLen]
	r1 := r[chunkLen : 2*chunkLen : 2*chunkLen]
	r2 := r[2*chunkLen : 3*chunkLen : 3*chunkLen]
	r3 := r[3*chunkLen : 4*chunkLen : 4*chunkLen]
	r4 := r[4*chunkLen : 5*chunkLen : 5*chunkLen]
	r5 := r[5*chunkLen : 6*chunkLen : 6*chunkLen]
	m0, m1, m2, m3, m4, m5 := s.m[0], s.m[1], s.m[2], s.m[3], s.m[4], s.m[5]
	p0, p1, p2, p3, p4, p5 := s.p[0], s.p[1], s.p[2], s.p[3], s.p[4], s.p[5]
	for i := 0; i < chunkLen; i += 2 {
		r0[i] = x0[i] - dc - m0
		r1[i] = x1[i] - dc - m1
		r2[i] = x2[i] - dc - m2
		r3[i] = x3[i] - dc - m3
		r4[i] = x4[i] - dc - m4
		r5[i] = x5[i] - dc - m5
		p0 = co*m0 - p0
		p1 = co*m1 - p1
		p2 = co*m2 - p2
		p3 = co*m3 - p3
		p4 = co*m4 - p4
		p5 = co*m5 - p5
		r0[i+1] = x0[i+1] - dc - p0
		r1[i+1] = x1[i+1] - dc - p1
		r2[i+1] = x2[i+1] - dc - p2
		r3[i+1] = x3[i+1] - dc - p3
		r4[i+1] = x4[i+1] - dc - p4
		r5[i+1] = x5[i+1] - dc - p5
		m0 = co*p0 - m0
		m1 = co*p1 - m1
		m2 = co*p2 - m2
		m3 = co*p3 - m3
		m4 = co*p4 - m4
		m5 = co*p5 - m5
	}
}

// synthSub subtracts the model from r.
func synthSub(r *[group]float64, co float64, s *seeds) {
	r0 := r[0:chunkLen:chunkLen]
	r1 := r[chunkLen : 2*chunkLen : 2*chunkLen]
	r2 := r[2*chunkLen : 3*chunkLen : 3*chunkLen]
	r3 := r[3*chunkLen : 4*chunkLen : 4*chunkLen]
	r4 := r[4*chunkLen : 5*chunkLen : 5*chunkLen]
	r5 := r[5*chunkLen : 6*chunkLen : 6*chunkLen]
	m0, m1, m2, m3, m4, m5 := s.m[0], s.m[1], s.m[2], s.m[3], s.m[4], s.m[5]
	p0, p1, p2, p3, p4, p5 := s.p[0], s.p[1], s.p[2], s.p[3], s.p[4], s.p[5]
	for i := 0; i < chunkLen; i += 2 {
		r0[i] -= m0
		r1[i] -= m1
		r2[i] -= m2
		r3[i] -= m3
		r4[i] -= m4
		r5[i] -= m5
		p0 = co*m0 - p0
		p1 = co*m1 - p1
		p2 = co*m2 - p2
		p3 = co*m3 - p3
		p4 = co*m4 - p4
		p5 = co*m5 - p5
		r0[i+1] -= p0
		r1[i+1] -= p1
		r2[i+1] -= p2
		r3[i+1] -= p3
		r4[i+1] -= p4
		r5[i+1] -= p5
		m0 = co*p0 - m0
		m1 = co*p1 - m1
		m2 = co*p2 - m2
		m3 = co*p3 - m3
		m4 = co*p4 - m4
		m5 = co*p5 - m5
	}
}

// synthSquare returns Σ (src − dc − model)² over the group; src is x for
// the only harmonic (with the DC level) or the buffer for the last of
// several (with dc = 0).
func synthSquare(src []float64, dc, co float64, s *seeds) float64 {
	x0 := src[0:chunkLen:chunkLen]
	x1 := src[chunkLen : 2*chunkLen : 2*chunkLen]
	x2 := src[2*chunkLen : 3*chunkLen : 3*chunkLen]
	x3 := src[3*chunkLen : 4*chunkLen : 4*chunkLen]
	x4 := src[4*chunkLen : 5*chunkLen : 5*chunkLen]
	x5 := src[5*chunkLen : 6*chunkLen : 6*chunkLen]
	m0, m1, m2, m3, m4, m5 := s.m[0], s.m[1], s.m[2], s.m[3], s.m[4], s.m[5]
	p0, p1, p2, p3, p4, p5 := s.p[0], s.p[1], s.p[2], s.p[3], s.p[4], s.p[5]
	var acc float64
	for i := 0; i < chunkLen; i += 2 {
		v0, v1, v2 := x0[i]-dc-m0, x1[i]-dc-m1, x2[i]-dc-m2
		v3, v4, v5 := x3[i]-dc-m3, x4[i]-dc-m4, x5[i]-dc-m5
		acc += (v0*v0 + v1*v1) + (v2*v2 + v3*v3) + (v4*v4 + v5*v5)
		p0 = co*m0 - p0
		p1 = co*m1 - p1
		p2 = co*m2 - p2
		p3 = co*m3 - p3
		p4 = co*m4 - p4
		p5 = co*m5 - p5
		v0, v1, v2 = x0[i+1]-dc-p0, x1[i+1]-dc-p1, x2[i+1]-dc-p2
		v3, v4, v5 = x3[i+1]-dc-p3, x4[i+1]-dc-p4, x5[i+1]-dc-p5
		acc += (v0*v0 + v1*v1) + (v2*v2 + v3*v3) + (v4*v4 + v5*v5)
		m0 = co*p0 - m0
		m1 = co*p1 - m1
		m2 = co*p2 - m2
		m3 = co*p3 - m3
		m4 = co*p4 - m4
		m5 = co*p5 - m5
	}
	return acc
}
