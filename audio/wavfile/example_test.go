package wavfile_test

import (
	"bytes"
	"fmt"

	"tonetrace/audio/wavfile"
)

func Example() {
	a := &wavfile.Audio{Rate: 48000, Channels: [][]float64{
		{0, 0.5, -0.25}, // reference
		{0, -0.5, 1.0},  // response; +1.0 clips to the largest 24-bit code
	}}
	var buf bytes.Buffer
	if err := wavfile.Write(&buf, a, wavfile.PCM24); err != nil {
		fmt.Println(err)
		return
	}
	b, err := wavfile.Read(&buf)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(b.Rate, len(b.Channels), b.Frames(), b.Format)
	fmt.Println(b.Channels[0])
	fmt.Printf("%.9f\n", b.Channels[1][2])
	// Output:
	// 48000 2 3 pcm24
	// [0 0.5 -0.25]
	// 0.999999881
}

func ExampleDecoder() {
	var buf bytes.Buffer
	a := &wavfile.Audio{Rate: 8000, Channels: [][]float64{{0.1, 0.2, 0.3, 0.4, 0.5}}}
	if err := wavfile.Write(&buf, a, wavfile.Float32); err != nil {
		fmt.Println(err)
		return
	}
	d, err := wavfile.NewDecoder(&buf)
	if err != nil {
		fmt.Println(err)
		return
	}
	dst := [][]float64{make([]float64, 2)} // caller-owned block of 2 frames
	for {
		n, err := d.ReadFrames(dst)
		if err != nil {
			fmt.Println(err)
			break
		}
		fmt.Printf("%.3f\n", dst[0][:n])
	}
	// Output:
	// [0.100 0.200]
	// [0.300 0.400]
	// [0.500]
	// EOF
}

func ExampleFormatError() {
	_, err := wavfile.Read(bytes.NewReader([]byte("ID3\x04\x00\x00\x00\x00\x00\x00\x00\x00")))
	fmt.Println(err)
	// Output:
	// wavfile: not a WAV file: starts with "ID3" instead of "RIFF" (an MP3 file); convert it to WAV, e.g. with sox in.mp3 out.wav
}
