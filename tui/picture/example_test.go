package picture_test

import (
	"bytes"
	"errors"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"

	"tonetrace/dsp/trace"
	"tonetrace/tui/picture"
)

// rcTrace returns the RC low-pass of REFERENCES.md §5 (R 10 kΩ, C 15 nF)
// at 10 points per decade from 20 Hz to 20 kHz.
func rcTrace() *trace.Trace {
	t := &trace.Trace{}
	for f := 20.0; f <= 20e3*1.0001; f *= math.Pow(10, 0.1) {
		t.Points = append(t.Points, trace.NewPoint(f, 1/complex(1, 2*math.Pi*f*10e3*15e-9)))
	}
	return t
}

func ExampleWrite() {
	var buf bytes.Buffer
	err := picture.Write(&buf, "png", picture.Options{Width: 640, Height: 480, Title: "RC low-pass"},
		picture.Series{Name: "measured", Trace: rcTrace()})
	if err != nil {
		fmt.Println(err)
		return
	}
	cfg, err := png.DecodeConfig(&buf)
	fmt.Println(cfg.Width, cfg.Height, err)
	// Output: 640 480 <nil>
}

func ExampleWriteFile() {
	dir, err := os.MkdirTemp("", "picture")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)

	rc := rcTrace()
	err = picture.WriteFile(filepath.Join(dir, "bode.svg"), picture.Options{Unwrap: true},
		picture.Series{Name: "measured", Trace: rc},
		picture.Series{Name: "predicted", Trace: rc, Dashed: true})
	fmt.Println(err)

	err = picture.WriteFile("bode.pdf", picture.Options{},
		picture.Series{Name: "measured", Trace: rc})
	fmt.Println(errors.Is(err, picture.ErrFormat))
	fmt.Println(err)
	// Output:
	// <nil>
	// true
	// picture: unknown picture format: cannot tell the format of "bode.pdf" from its extension; name the file .svg or .png
}
