// Package multitone designs a periodic multitone stimulus and measures a
// two-input transfer function from it, one period at a time: the engine of
// the live view, which measures the whole band several times a second.
//
// A multitone is a sum of cosines that all complete a whole number of
// cycles in one period of Period samples,
//
//	x[i] = Σ_k A_k·cos(2π·m_k·i/Period + φ_k),  f_k = m_k·Rate/Period,
//
// played in a loop. At 48 kHz a period of 16384 samples has 2.93 Hz bins
// and repeats 2.9 times a second; 8192 samples give 5.86 Hz bins and 5.9
// periods a second. The bins m_k are odd and log-spaced, chosen so that
// second harmonics, second-order intermodulation and third harmonics miss
// every stimulus bin ([Design] states the rule). Schroeder's phases keep
// the crest factor low; an optional iterative [Reduction] lowers it
// further, which matters for sparse log-spaced tones where Schroeder's
// formula helps little.
//
// Measuring. Both outputs play the period; one returns straight to the
// reference input, the other through the circuit to the response input.
// An [Analyzer] takes exactly one period of each input, transforms both
// with a rectangular window (gonum dsp/fourier) and reads each tone's bin:
// H = response/reference per tone, with the noise at each tone estimated
// from the empty bins around it, giving an SNR and a first-order
// uncertainty of gain and phase. An [Averager] combines periods.
//
// The first period. A circuit driven by a periodic signal reaches its
// periodic steady state only after its transient has decayed. The engine
// must discard at least the first whole period captured after the stimulus
// starts, after any change of stimulus or level, and after any gap in the
// input stream; circuits with long time constants (a corner far below the
// lowest tone) may need more than one. This package does not know when
// such events happen and does not discard anything itself.
//
// Typical use:
//
//	m, err := multitone.Design(multitone.Options{
//		Rate: 48000, Period: 16384, From: 20, To: 20000,
//		LevelDBFS: -20, CapDBFS: -6, Reduction: multitone.ReduceLp,
//	})
//	// play m.Period() in a loop on both outputs …
//	an := multitone.NewAnalyzer(m)
//	avg := multitone.NewAverager(m)
//	var f multitone.Frame
//	// for each captured period after the first:
//	if err := an.AnalyzeInto(&f, ref, resp); err == nil {
//		avg.Add(&f)
//	}
//	tr := avg.Trace()
package multitone
