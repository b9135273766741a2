package wavfile

import (
	"bytes"
	"math"
	"path/filepath"
	"testing"
)

// benchSeconds is the length of the benchmark recordings: 60 s of stereo
// at 48 kHz, as a long analyze run would read.
const (
	benchSeconds = 60
	benchRate    = 48000
)

func benchAudio() *Audio {
	a := &Audio{Rate: benchRate, Channels: make([][]float64, 2)}
	for c := range a.Channels {
		a.Channels[c] = make([]float64, benchSeconds*benchRate)
		for n := range a.Channels[c] {
			a.Channels[c][n] = 0.5 * math.Sin(2*math.Pi*float64((c+1)*1000*n)/benchRate)
		}
	}
	return a
}

// reportRealtime adds how many times faster than real time one operation
// on benchSeconds of audio ran.
func reportRealtime(b *testing.B) {
	b.ReportMetric(benchSeconds*float64(b.N)/b.Elapsed().Seconds(), "x-realtime")
}

func BenchmarkReadFile(b *testing.B) {
	a := benchAudio()
	for _, enc := range []Encoding{Float32, PCM24, PCM16} {
		b.Run(enc.String(), func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "bench.wav")
			if err := WriteFile(path, a, enc); err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			for b.Loop() {
				if _, err := ReadFile(path); err != nil {
					b.Fatal(err)
				}
			}
			reportRealtime(b)
		})
	}
}

// BenchmarkDecoderReadFrames decodes the same recordings held in memory
// (no file system) through caller-owned buffers of 4096 frames: the
// decoding cost alone.
func BenchmarkDecoderReadFrames(b *testing.B) {
	a := benchAudio()
	for _, enc := range []Encoding{Float32, PCM24} {
		b.Run(enc.String(), func(b *testing.B) {
			var file bytes.Buffer
			if err := Write(&file, a, enc); err != nil {
				b.Fatal(err)
			}
			dst := [][]float64{make([]float64, 4096), make([]float64, 4096)}
			r := bytes.NewReader(nil)
			b.ReportAllocs()
			for b.Loop() {
				r.Reset(file.Bytes())
				d, err := NewDecoder(r)
				if err != nil {
					b.Fatal(err)
				}
				for {
					if _, err := d.ReadFrames(dst); err != nil {
						break
					}
				}
			}
			reportRealtime(b)
		})
	}
}

func BenchmarkWriteFile(b *testing.B) {
	a := benchAudio()
	for _, enc := range []Encoding{Float32, PCM24} {
		b.Run(enc.String(), func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "bench.wav")
			b.ReportAllocs()
			for b.Loop() {
				if err := WriteFile(path, a, enc); err != nil {
					b.Fatal(err)
				}
			}
			reportRealtime(b)
		})
	}
}
