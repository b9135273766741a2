package bench

import (
	"math"
	"math/rand/v2"
	"sync/atomic"

	"tonetrace/audio"
	"tonetrace/dsp/simulate"
)

// rig is the simulated device: the state the bench's goroutine owns and
// advances one period at a time. Nothing in runPeriod allocates.
type rig struct {
	core   *audio.Core
	period int   // output frames per period
	delay  int64 // converter + buffer delay D in frames (the history lag)
	f      faultSet

	net, lead *simulate.Simulator // output 1 → network, output 2 → lead

	respGain, refGain float64 // lead gains: polarity, clip, disconnection
	hum               *humOsc

	hp    [2]highPass   // AC coupling of each input
	gain  [2]float64    // linear input gains
	aa    [2]lowPass2   // anti-alias filters at the capture rate
	noise [2]*rand.Rand // noise sources
	sigma float64       // noise RMS

	hist [2][]float64 // analog input signals by output frame index
	mask int64        // len(hist[c]) − 1
	ip   *interpolator

	holes      holeSchedule
	holeFrames *atomic.Int64 // frames lost to dropouts so far
	dropouts   *atomic.Int64 // dropouts begun so far
	unplugAt   int64         // output frame at which FaultUnplug strikes
	lost       bool

	outPos  int64 // index of the next output frame
	capPos  int64 // capture index of the next captured frame (holes included)
	capCore int64 // frames handed to the core's capture ring

	out []float32    // one period of output, interleaved
	in  []float32    // one period of capture (+1 frame under drift), interleaved
	x   [2][]float64 // DAC samples of outputs 1 and 2
	y   [2][]float64 // at the far end of the network and of the lead
}

// maxCapture returns the most frames one period can capture: the period,
// and under FaultDrift one frame in driftDen more.
func maxCapture(period int) int { return period + period/driftDen + 1 }

// runPeriod simulates one device period: capture from the analog history,
// hand capture and playout to the core, then send the new output through
// the network and the lead into the history.
func (r *rig) runPeriod() {
	p := int64(r.period)
	nc := r.period
	if r.f.drift {
		end := r.outPos + p
		nc = int(end + end/driftDen - r.capPos)
	}
	r.capture(nc)
	r.deliver(nc)
	r.analog()
	r.outPos += p
	if r.f.unplug && r.outPos >= r.unplugAt {
		r.core.SetLost()
		r.lost = true
	}
}

// capture converts nc frames of both inputs: sample the analog history at
// the capture instants, anti-alias filter, add the noise floor, clip to
// full scale.
func (r *rig) capture(nc int) {
	in := r.in[:2*nc]
	for i := range nc {
		k := r.capPos + int64(i)
		var v [2]float64
		if !r.f.drift {
			j := (k - r.delay) & r.mask
			v[0], v[1] = r.hist[0][j], r.hist[1][j]
		} else {
			// Capture frame k is taken at output position k·5000/5001.
			num := k * driftDen
			i0 := num / (driftDen + 1)
			rem := num - i0*(driftDen+1)
			i0 -= r.delay
			if rem == 0 {
				v[0], v[1] = r.hist[0][i0&r.mask], r.hist[1][i0&r.mask]
			} else {
				r.ip.weights(float64(rem) / (driftDen + 1))
				v[0], v[1] = r.ip.at(r.hist[0], r.mask, i0), r.ip.at(r.hist[1], r.mask, i0)
			}
		}
		for c := range 2 {
			s := r.aa[c].step(v[c])
			if r.sigma != 0 {
				s += r.sigma * r.noise[c].NormFloat64()
			}
			in[2*i+c] = float32(min(max(s, -1), 1))
		}
	}
}

// deliver hands the period to the core: one duplex callback when nothing is
// special; under drift or a dropout, a playback callback and capture
// callbacks for the frames that are not lost.
func (r *rig) deliver(nc int) {
	if !r.f.drift && r.capPos+int64(nc) <= r.holes.start {
		r.core.ProcessDuplex(r.out, r.in[:2*nc], nc)
		r.capCore += int64(nc)
		r.capPos += int64(nc)
		return
	}
	r.core.ProcessPlayback(r.out, r.period)
	for i := 0; i < nc; {
		k := r.capPos + int64(i)
		if k < r.holes.start {
			n := int(min(int64(nc-i), r.holes.start-k))
			r.core.ProcessCapture(r.in[2*i:], n)
			r.capCore += int64(n)
			i += n
			continue
		}
		if k == r.holes.start {
			r.dropouts.Add(1)
		}
		end := r.holes.start + r.holes.length
		n := int(min(int64(nc-i), end-k))
		r.holeFrames.Add(int64(n))
		i += n
		if k+int64(n) == end {
			r.holes.advance()
		}
	}
	r.capPos += int64(nc)
}

// analog runs the period's output through the network and the lead, applies
// the faults of the leads, and stores what reaches each input, after its
// coupling capacitor and gain, in the history.
func (r *rig) analog() {
	for i := range r.period {
		r.x[0][i] = float64(r.out[2*i])
		r.x[1][i] = float64(r.out[2*i+1])
	}
	r.net.Process(r.y[0], r.x[0])
	r.lead.Process(r.y[1], r.x[1])
	humOn := r.f.hum && !r.f.deadDUT
	for i := range r.period {
		resp := r.respGain * r.y[0][i]
		if humOn {
			resp += r.hum.next()
		}
		ref := r.refGain * r.y[1][i]
		if r.f.swap {
			resp, ref = ref, resp
		}
		j := (r.outPos + int64(i)) & r.mask
		r.hist[0][j] = r.gain[0] * r.hp[0].step(resp)
		r.hist[1][j] = r.gain[1] * r.hp[1].step(ref)
	}
	if humOn {
		r.hum.renormalise()
	}
}

// leadGains returns the gains of the response and the reference lead under
// the faults.
func leadGains(f faultSet) (resp, ref float64) {
	resp, ref = 1, 1
	if f.invert {
		resp = -resp
	}
	if f.clip {
		resp *= math.Pow(10, ClipGainDB/20)
	}
	if f.deadDUT {
		resp = 0
	}
	if f.deadRef {
		ref = 0
	}
	return resp, ref
}
