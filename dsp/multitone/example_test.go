package multitone_test

import (
	"fmt"
	"math"

	"tonetrace/dsp/multitone"
)

func ExampleDesign() {
	m, err := multitone.Design(multitone.Options{
		Rate: 48000, Period: 16384, From: 20, To: 20000,
		LevelDBFS: -20, CapDBFS: -10,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	t := m.Tones()
	fmt.Printf("%d tones, %.2f Hz bins, %.2f periods/s\n", m.NumTones(), m.BinWidth(), m.Rate()/float64(m.Len()))
	fmt.Printf("lowest bin %d (%.2f Hz), highest bin %d (%.2f Hz)\n", t[0].Bin, t[0].Freq, t[len(t)-1].Bin, t[len(t)-1].Freq)
	fmt.Printf("peak %.1f dBFS\n", m.PeakDBFS())
	// Output:
	// 31 tones, 2.93 Hz bins, 2.93 periods/s
	// lowest bin 7 (20.51 Hz), highest bin 6825 (19995.12 Hz)
	// peak -20.0 dBFS
}

func ExampleDesign_error() {
	_, err := multitone.Design(multitone.Options{
		Rate: 48000, Period: 8192, From: 20, To: 20000,
		LevelDBFS: -3, CapDBFS: -10,
	})
	fmt.Println(err)
	// Output:
	// multitone: invalid options: LevelDBFS -3 is above the cap CapDBFS -10; lower the level or raise the cap (at most 0 dBFS)
}

func ExampleAnalyzer() {
	m, _ := multitone.Design(multitone.Options{
		Rate: 48000, Period: 4096, From: 100, To: 10000, PerDecade: 3,
		LevelDBFS: -10, CapDBFS: -10,
	})
	// A circuit that halves the signal and delays it by 2 samples (whole
	// periods loop, so the delay wraps around): −6.02 dB and a phase of
	// −360°·f·2/48000 at every tone.
	ref := m.Period()
	n := len(ref)
	resp := make([]float64, n)
	for i := range resp {
		resp[i] = 0.5 * ref[(i-2+n)%n]
	}
	f, err := multitone.NewAnalyzer(m).Analyze(ref, resp)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range f.Tones {
		gain := 20 * math.Log10(math.Hypot(real(r.H), imag(r.H)))
		phase := math.Atan2(imag(r.H), real(r.H)) * 180 / math.Pi
		fmt.Printf("%8.2f Hz %6.2f dB %8.2f°\n", r.Freq, gain, phase)
	}
	// Output:
	//   105.47 Hz  -6.02 dB    -1.58°
	//   222.66 Hz  -6.02 dB    -3.34°
	//   457.03 Hz  -6.02 dB    -6.86°
	//   996.09 Hz  -6.02 dB   -14.94°
	//  2144.53 Hz  -6.02 dB   -32.17°
	//  4652.34 Hz  -6.02 dB   -69.79°
	//  9996.09 Hz  -6.02 dB  -149.94°
}

func ExampleAverager() {
	m, _ := multitone.Design(multitone.Options{
		Rate: 48000, Period: 2048, From: 200, To: 2000, PerDecade: 2,
		LevelDBFS: -10, CapDBFS: -10,
	})
	an := multitone.NewAnalyzer(m)
	avg := multitone.NewAverager(m)
	ref := m.Period()
	resp := make([]float64, len(ref))
	var f multitone.Frame
	// Three periods of a circuit whose gain drifts: ×0.99, ×1.00, ×1.01.
	for _, g := range []float64{0.99, 1.00, 1.01} {
		for i, v := range ref {
			resp[i] = g * v
		}
		if err := an.AnalyzeInto(&f, ref, resp); err != nil {
			fmt.Println(err)
			return
		}
		avg.Add(&f)
	}
	// The scatter gives the standard error of the mean gain, 0.01/√3
	// relative (0.050 dB); the phase did not move.
	for _, p := range avg.Trace().Points {
		fmt.Printf("%7.2f Hz %+.4f dB ± %.3f dB, phase ± %.2f°\n", p.Freq, p.GainDB(), p.GainU, p.PhaseU)
	}
	// Output:
	//  210.94 Hz +0.0000 dB ± 0.050 dB, phase ± 0.00°
	//  679.69 Hz +0.0000 dB ± 0.050 dB, phase ± 0.00°
	// 1992.19 Hz +0.0000 dB ± 0.050 dB, phase ± 0.00°
}
