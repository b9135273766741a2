package trace

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzRead feeds arbitrary text to Read. It must never panic; errors must
// be one-line *ParseError values with a position; and a trace that reads
// must write, read back to the same points (within the format's
// precision) and write the same text again.
func FuzzRead(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "*.csv"))
	for _, name := range files {
		b, err := os.ReadFile(name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(string(b))
	}
	f.Add("freq_hz,gain_db,phase_deg\n100,-0.04,-5.71\n200,-inf,0\n")
	f.Add("# a: b\nfreq_hz,gain_db,phase_deg,snr_db,gain_u_db\n1e-7,6000,180,inf,\n2e10,-6000,-180,nan,0.5\n")
	f.Add("freq_hz,gain_db,phase_deg\n999.99999999990,0,0\n999.99999999995,0,0\n1000,0,0\n")
	f.Add("freq_hz,gain_db\n")
	f.Add("freq_hz,gain_db,phase_deg\n1,5999.9999999999999,1e308\n2,-6000,-1.7e308\n")

	f.Fuzz(func(t *testing.T, in string) {
		t1, err := Read(strings.NewReader(in))
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) || pe.Line < 1 || pe.Column < 0 {
				t.Fatalf("error %T %v is not a positioned *ParseError", err, err)
			}
			if strings.ContainsAny(err.Error(), "\n\r") {
				t.Fatalf("error %q spans lines", err)
			}
			return
		}
		var b1 bytes.Buffer
		if err := Write(&b1, t1); err != nil {
			t.Fatalf("Write of a trace Read accepted: %v", err)
		}
		t2, err := Read(bytes.NewReader(b1.Bytes()))
		if err != nil {
			t.Fatalf("Read of Write's output: %v\n%s", err, b1.String())
		}
		if len(t2.Points) != len(t1.Points) {
			t.Fatalf("%d points became %d", len(t1.Points), len(t2.Points))
		}
		for i := range t1.Points {
			p, q := t1.Points[i], t2.Points[i]
			if !closeRel(q.Freq, p.Freq, freqRel) || !closeRel(q.GainDB(), p.GainDB(), gainRel) {
				t.Fatalf("point %d: %v Hz %v dB became %v Hz %v dB", i, p.Freq, p.GainDB(), q.Freq, q.GainDB())
			}
			if p.H != 0 && math.Abs(WrapDeg(q.PhaseDeg()-p.PhaseDeg())) > phaseRel*math.Abs(p.PhaseDeg())+floatSlack {
				t.Fatalf("point %d: phase %v° became %v°", i, p.PhaseDeg(), q.PhaseDeg())
			}
			for c := firstColumn; c <= lastColumn; c++ {
				rel := fourRel
				if c == ColCoherence {
					rel = cohRel
				}
				// Values below 1e-300 may lose digits as subnormals.
				if v := c.Value(p); !closeRel(c.Value(q), v, rel) && !(math.Abs(v) < 1e-300) {
					t.Fatalf("point %d: %v %v became %v", i, c, v, c.Value(q))
				}
			}
		}
		var b2 bytes.Buffer
		if err := Write(&b2, t2); err != nil {
			t.Fatal(err)
		}
		if t3, err := Read(&b2); err != nil || len(t3.Points) != len(t1.Points) {
			t.Fatalf("third read: %v", err)
		}
	})
}
