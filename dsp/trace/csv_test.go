package trace

import (
	"bytes"
	"errors"
	"flag"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// Relative precision of the written digits: half a unit in the last of
// n significant digits is at most 5·10^−n of the value.
const (
	freqRel  = 5e-10 // 10 digits
	gainRel  = 5e-7  // 7 digits
	phaseRel = 5e-7  // 7 digits
	cohRel   = 5e-7  // 7 digits
	fourRel  = 5e-4  // 4 digits: uncertainties, SNR, THD
	// floatSlack covers the float64 arithmetic of rebuilding H from gain
	// and phase and taking them apart again.
	floatSlack = 1e-12
)

// closeRel reports whether got is within rel of want (relative), plus an
// absolute slack; NaNs and equal infinities match.
func closeRel(got, want, rel float64) bool {
	if math.IsNaN(want) || math.IsNaN(got) {
		return math.IsNaN(want) && math.IsNaN(got)
	}
	if math.IsInf(want, 0) || math.IsInf(got, 0) {
		return got == want
	}
	return math.Abs(got-want) <= rel*math.Abs(want)+floatSlack
}

// samePoints compares two point lists within the precision of the format.
func samePoints(t *testing.T, got, want []Point) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%d points, want %d", len(got), len(want))
	}
	for i := range want {
		g, w := got[i], want[i]
		if !closeRel(g.Freq, w.Freq, freqRel) {
			t.Fatalf("point %d: freq %v, want %v", i, g.Freq, w.Freq)
		}
		if !closeRel(g.GainDB(), w.GainDB(), gainRel) {
			t.Fatalf("point %d: gain %v dB, want %v dB", i, g.GainDB(), w.GainDB())
		}
		if w.H != 0 && math.Abs(WrapDeg(g.PhaseDeg()-w.PhaseDeg())) > phaseRel*math.Abs(w.PhaseDeg())+floatSlack {
			t.Fatalf("point %d: phase %v°, want %v°", i, g.PhaseDeg(), w.PhaseDeg())
		}
		for c := firstColumn; c <= lastColumn; c++ {
			rel := fourRel
			if c == ColCoherence {
				rel = cohRel
			}
			if !closeRel(c.Value(g), c.Value(w), rel) {
				t.Fatalf("point %d: %v %v, want %v", i, c, c.Value(g), c.Value(w))
			}
		}
	}
}

// randomTrace returns n points, log-spaced with jitter from 10 Hz, with
// random ratios and optional values (some missing).
func randomTrace(rng *rand.Rand, n int) *Trace {
	t := &Trace{Meta: []MetaItem{{"tool", "tonetrace test"}, {"seed", "1"}}}
	f := 10.0
	for range n {
		f *= 1 + 0.02*rng.Float64() + 1e-6
		p := FromPolar(f, -100+120*rng.Float64(), -180+360*rng.Float64())
		maybe := func(v float64) float64 {
			if rng.IntN(4) == 0 {
				return math.NaN()
			}
			return v
		}
		p.GainU = maybe(rng.Float64() * 0.1)
		p.PhaseU = maybe(rng.Float64())
		p.Coherence = maybe(1 - rng.Float64()*rng.Float64()*0.01)
		p.SNR = maybe(100 * rng.Float64())
		p.THD = maybe(rng.ExpFloat64() * 0.01)
		t.Points = append(t.Points, p)
	}
	return t
}

func TestRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for _, n := range []int{0, 1, 2, 500} {
		want := randomTrace(rng, n)
		if n > 1 {
			want.Points[1].H = 0 // a zero ratio: "-inf"
		}
		var buf bytes.Buffer
		if err := Write(&buf, want); err != nil {
			t.Fatal(err)
		}
		got, err := Read(&buf)
		if err != nil {
			t.Fatalf("%d points: %v\n%s", n, err, buf.String())
		}
		samePoints(t, got.Points, want.Points)
		if len(got.Meta) != len(want.Meta) || got.Meta[0] != want.Meta[0] || got.Meta[1] != want.Meta[1] {
			t.Errorf("meta %v, want %v", got.Meta, want.Meta)
		}
	}
}

// TestRoundTripCloseFrequencies: frequencies closer than 10 significant
// digits are written with more digits, so they stay distinct and ordered.
func TestRoundTripCloseFrequencies(t *testing.T) {
	f := []float64{999.99999999990, 999.99999999995, 1000, 1000.0000000001, 1000.00000001, 1000.0000001, 2000}
	tr := &Trace{}
	for _, v := range f {
		tr.Points = append(tr.Points, FromPolar(v, 0, 0))
	}
	var buf bytes.Buffer
	if err := Write(&buf, tr); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	got, err := Read(&buf)
	if err != nil {
		t.Fatalf("%v\n%s", err, text)
	}
	for i := range f {
		if !closeRel(got.Points[i].Freq, f[i], freqRel) {
			t.Errorf("point %d: %v, want %v", i, got.Points[i].Freq, f[i])
		}
		if i > 0 && !(got.Points[i].Freq > got.Points[i-1].Freq) {
			t.Errorf("point %d: %v not above %v", i, got.Points[i].Freq, got.Points[i-1].Freq)
		}
	}
	if !strings.Contains(text, "\n2000,") || !strings.Contains(text, "\n1000.0000001,") {
		t.Errorf("well-separated frequencies not written with 10 digits:\n%s", text)
	}
}

// TestAppendNum checks the number format: correctly rounded significant
// digits (round half to even on the binary value, as strconv does [CP]),
// plain decimals for ordinary magnitudes, exponents beyond them.
func TestAppendNum(t *testing.T) {
	cases := []struct {
		x      float64
		sig    int
		maxExp int
		want   string
	}{
		{1000, 10, 10, "1000"},
		{1061.0330105711, 10, 10, "1061.033011"},
		{20000, 10, 10, "20000"},
		{999.99999999996, 10, 10, "1000"},
		{1e10, 10, 10, "1e+10"},
		{12345.678, 10, 10, "12345.678"},
		{0.1, 7, 7, "0.1"},
		{-0.0432137, 7, 7, "-0.0432137"},
		{-5.710593137, 7, 7, "-5.710593"},
		{-179.99999996, 7, 7, "-180"},
		{123.456, 4, 7, "123.5"},
		{0.00001234, 4, 7, "0.00001234"},
		{1e-6, 4, 7, "0.000001"},
		{5e-7, 4, 7, "5e-07"},
		{1234567, 7, 7, "1234567"},
		{12345678, 7, 7, "1.234568e+07"},
		{0.99999999, 7, 7, "1"},
		{0.9999999, 7, 7, "0.9999999"},
		{0, 7, 7, "0"},
		{math.Copysign(0, -1), 7, 7, "0"},
		{math.NaN(), 7, 7, ""},
		{math.Inf(1), 7, 7, "inf"},
		{math.Inf(-1), 7, 7, "-inf"},
	}
	for _, tc := range cases {
		got := string(appendNum(nil, tc.x, tc.sig, tc.maxExp))
		if got != tc.want {
			t.Errorf("appendNum(%v, %d) = %q, want %q", tc.x, tc.sig, got, tc.want)
		}
		if v, err := strconv.ParseFloat(got, 64); tc.want != "" && (err != nil || !closeRel(v, tc.x, 5*math.Pow(10, -float64(tc.sig)))) {
			t.Errorf("appendNum(%v) = %q reads back as %v, %v", tc.x, got, v, err)
		}
	}
}

// goldenTrace is the RC low-pass of REFERENCES.md §5 (R = 10 kΩ,
// C = 15 nF) at the table's frequencies, with the quantities a
// measurement carries.
func goldenTrace() *Trace {
	fc := 1 / (2 * math.Pi * rcRC)
	t := &Trace{Meta: []MetaItem{
		{"tool", "tonetrace 0.1.0"},
		{"command", "predict rc.cir -o out.csv"},
		{"network", "RC low-pass, R 10k, C 15n"},
	}}
	for i, r := range []float64{0.1, 0.5, 1, 2, 10} {
		p := NewPoint(r*fc, rcLowPass(r*fc))
		p.GainU = 0.002 * float64(i+1)
		p.PhaseU = 0.01 * float64(i+1)
		if i != 2 {
			p.SNR = 80 - 3*float64(i)
		}
		t.Points = append(t.Points, p)
	}
	return t
}

// TestGolden compares Write's output with testdata/golden.csv (refresh with
// go test ./dsp/trace -update) and checks the written gains and phases
// against the table of REFERENCES.md §5 (ngspice-39 [V]).
func TestGolden(t *testing.T) {
	var buf bytes.Buffer
	if err := Write(&buf, goldenTrace(), ColCoherence); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join("testdata", "golden.csv")
	if *update {
		if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (create it with go test ./dsp/trace -update)", err)
	}
	if !bytes.Equal(buf.Bytes(), want) {
		t.Errorf("Write output differs from %s (refresh with -update if the change is intended):\n%s", path, buf.String())
	}
	got, err := Read(bytes.NewReader(want))
	if err != nil {
		t.Fatal(err)
	}
	table := [][2]float64{ // REFERENCES.md §5, low-pass column
		{-0.0432, -5.7106}, {-0.9691, -26.5651}, {-3.0103, -45.0000}, {-6.9897, -63.4349}, {-20.0432, -84.2894},
	}
	// The table has 4 decimals; the file 7 significant digits.
	const tableTol = 5e-5 + 5e-7*100
	for i, p := range got.Points {
		if math.Abs(p.GainDB()-table[i][0]) > tableTol || math.Abs(p.PhaseDeg()-table[i][1]) > tableTol {
			t.Errorf("row %d: %.5f dB, %.5f°; table %.4f dB, %.4f°", i, p.GainDB(), p.PhaseDeg(), table[i][0], table[i][1])
		}
	}
	if !strings.Contains(string(want), "freq_hz,gain_db,phase_deg,gain_u_db,phase_u_deg,coherence,snr_db\n") {
		t.Errorf("golden header lacks the forced coherence column or misorders columns:\n%s", want)
	}
}

func TestWriteColumns(t *testing.T) {
	base := func() *Trace {
		return &Trace{Points: []Point{FromPolar(100, -1, -10), FromPolar(200, -2, -20)}}
	}
	withTHD := base()
	withTHD.Points[1].THD = 0.05
	withInf := base()
	withInf.Points[0].SNR = math.Inf(1)
	cases := []struct {
		name   string
		t      *Trace
		always []Column
		header string
		row2   string
	}{
		{"mandatory only", base(), nil, "freq_hz,gain_db,phase_deg", "200,-2,-20"},
		{"forced coherence", base(), []Column{ColCoherence}, "freq_hz,gain_db,phase_deg,coherence", "200,-2,-20,"},
		{"forced columns in fixed order", base(), []Column{ColTHD, ColGainU, ColTHD}, "freq_hz,gain_db,phase_deg,gain_u_db,thd_pct", "200,-2,-20,,"},
		{"one value makes a column", withTHD, nil, "freq_hz,gain_db,phase_deg,thd_pct", "200,-2,-20,0.05"},
		{"infinite SNR", withInf, nil, "freq_hz,gain_db,phase_deg,snr_db", "200,-2,-20,"},
	}
	for _, tc := range cases {
		var buf bytes.Buffer
		if err := Write(&buf, tc.t, tc.always...); err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
		if lines[0] != tc.header || lines[2] != tc.row2 {
			t.Errorf("%s: wrote\n%s\nwant header %q and second row %q", tc.name, buf.String(), tc.header, tc.row2)
		}
	}
	var buf bytes.Buffer
	if err := Write(&buf, withInf); err != nil {
		t.Fatal(err)
	}
	got, err := Read(&buf)
	if err != nil || !math.IsInf(got.Points[0].SNR, 1) {
		t.Errorf("infinite SNR read back as %v, %v", got.Points[0].SNR, err)
	}
}

func TestWriteMeta(t *testing.T) {
	tr := &Trace{Meta: []MetaItem{
		{"command", "analyze rec.wav\n-o out.csv"},
		{"time: utc", " 2025-01-02T03:04:05Z "},
		{"empty", ""},
		{"", "no key"},
		{"tab\tkey", "value\r\nwith CR LF"},
	}}
	var buf bytes.Buffer
	if err := Write(&buf, tr); err != nil {
		t.Fatal(err)
	}
	wantText := "# command: analyze rec.wav -o out.csv\n" +
		"# time_ utc: 2025-01-02T03:04:05Z\n" +
		"# empty:\n" +
		"# : no key\n" +
		"# tab key: value  with CR LF\n" +
		"freq_hz,gain_db,phase_deg\n"
	if buf.String() != wantText {
		t.Errorf("wrote\n%q\nwant\n%q", buf.String(), wantText)
	}
	got, err := Read(&buf)
	if err != nil {
		t.Fatal(err)
	}
	want := []MetaItem{
		{"command", "analyze rec.wav -o out.csv"},
		{"time_ utc", "2025-01-02T03:04:05Z"},
		{"empty", ""},
		{"", "no key"},
		{"tab key", "value  with CR LF"},
	}
	if len(got.Meta) != len(want) {
		t.Fatalf("meta %q, want %q", got.Meta, want)
	}
	for i := range want {
		if got.Meta[i] != want[i] {
			t.Errorf("meta %d: %q, want %q", i, got.Meta[i], want[i])
		}
	}
}

// TestReadLenient reads testdata/handwritten.csv: a BOM, CR LF line ends,
// quoted header names, spaces around fields, optional columns out of
// order, an unknown column, blank lines and a comment after the header.
func TestReadLenient(t *testing.T) {
	tr, err := LoadFile(filepath.Join("testdata", "handwritten.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Points) != 3 {
		t.Fatalf("%d points, want 3", len(tr.Points))
	}
	p := tr.Points[1]
	if !closeRel(p.Freq, 1061.033, freqRel) || !closeRel(p.GainDB(), -3.0103, gainRel) || !closeRel(p.PhaseDeg(), -45, phaseRel) {
		t.Errorf("row 2: %v Hz, %v dB, %v°", p.Freq, p.GainDB(), p.PhaseDeg())
	}
	if p.THD != 0.012 || p.Coherence != 0.9991 || !math.IsNaN(p.GainU) || !math.IsNaN(tr.Points[0].THD) {
		t.Errorf("row 2 optional values THD %v, coherence %v, gain_u %v; row 1 THD %v", p.THD, p.Coherence, p.GainU, tr.Points[0].THD)
	}
	if v, _ := tr.MetaValue(IgnoredColumnsKey); v != "temperature_c" {
		t.Errorf("ignored columns %q, want temperature_c", v)
	}
	if v, _ := tr.MetaValue("note"); v != "added after the header" {
		t.Errorf("note %q", v)
	}
	if v, _ := tr.MetaValue("tool"); v != "hand: edited" {
		t.Errorf("tool %q, want the value after the first colon", v)
	}
}

func TestReadErrors(t *testing.T) {
	const hdr = "freq_hz,gain_db,phase_deg\n"
	cases := []struct {
		name       string
		in         string
		line, col  int
		kind       error
		fragment   string
		wantOutput string
	}{
		{"empty input", "", 1, 0, ErrHeader, "no header row: the input is empty or holds only comments", ""},
		{"comments only", "# tool: x\n\n", 3, 0, ErrHeader, "no header row", ""},
		{"data before header", "# a: b\n100,-0.04,-5.71\n", 2, 0, ErrHeader, `the header row is missing: found data "100,-0.04,-5.71" first; add the line freq_hz,gain_db,phase_deg above the rows`, ""},
		{"upper-case header", "Freq_Hz,gain_db,phase_deg\n", 1, 1, ErrHeader, `header column "Freq_Hz" must be written "freq_hz" (names are case-sensitive)`, ""},
		{"columns swapped", "freq_hz,phase_deg,gain_db\n", 1, 2, ErrHeader, `header column 2 is "phase_deg", want "gain_db"`, ""},
		{"short header", "freq_hz,gain_db\n", 1, 3, ErrHeader, "the header has no phase_deg column; it must start freq_hz,gain_db,phase_deg", ""},
		{"empty header column", "freq_hz,gain_db,phase_deg,\n", 1, 4, ErrHeader, "header column 4 is empty; remove the stray comma", ""},
		{"duplicate column", "freq_hz,gain_db,phase_deg,coherence,snr_db,coherence\n", 1, 6, ErrHeader, `column "coherence" appears twice (columns 4 and 6)`, ""},
		{"too few fields", hdr + "100,1\n", 2, 0, ErrFieldCount, "the row has 2 fields but the header has 3", ""},
		{"too many fields", hdr + "100,1,2,3\n", 2, 0, ErrFieldCount, "the row has 4 fields but the header has 3", ""},
		{"gain not a number", "# x: y\n\n" + hdr + "100,1,2\n200,1,2\n300,abc,2\n", 6, 2, ErrSyntax, `gain_db "abc" is not a number; write a decimal number such as -3.01`, ""},
		{"empty frequency", hdr + ",1,2\n", 2, 1, ErrSyntax, "freq_hz is empty", ""},
		{"optional not a number", "freq_hz,gain_db,phase_deg,coherence\n100,1,2,high\n", 2, 4, ErrSyntax, `coherence "high" is not a number; write a decimal number, or leave the field empty`, ""},
		{"NaN frequency", hdr + "nan,1,2\n", 2, 1, ErrRange, "freq_hz is NaN; frequencies must be finite", ""},
		{"infinite frequency", hdr + "inf,1,2\n", 2, 1, ErrRange, "freq_hz is +Inf", ""},
		{"negative frequency", hdr + "-5,1,2\n", 2, 1, ErrRange, "freq_hz -5 is negative", ""},
		{"NaN gain", hdr + "100,NaN,2\n", 2, 2, ErrRange, "gain_db is NaN; write a finite gain, or -inf for a zero response", ""},
		{"gain beyond range", hdr + "100,7000,2\n", 2, 2, ErrRange, "gain_db 7000 is beyond ±6000 dB", ""},
		{"infinite phase", hdr + "100,1,-inf\n", 2, 3, ErrRange, "phase_deg is -Inf", ""},
		{"descending frequency", hdr + "100,1,2\n\n300,1,2\n200,1,2\n", 5, 1, ErrOrder, "freq_hz 200 is not above 300 on line 4; rows must be in strictly ascending frequency", ""},
		{"repeated frequency", hdr + "100,1,2\n100,1,2\n", 3, 1, ErrOrder, "freq_hz 100 is not above 100 on line 2", ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Read(strings.NewReader(tc.in))
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v, want a *ParseError", err)
			}
			if pe.Line != tc.line || pe.Column != tc.col {
				t.Errorf("position line %d column %d, want line %d column %d (%v)", pe.Line, pe.Column, tc.line, tc.col, err)
			}
			if !errors.Is(err, tc.kind) {
				t.Errorf("error %v does not wrap %v", err, tc.kind)
			}
			if !strings.Contains(err.Error(), tc.fragment) {
				t.Errorf("error %q\n  does not contain %q", err, tc.fragment)
			}
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error %q spans lines", err)
			}
		})
	}
}

func TestWriteErrors(t *testing.T) {
	pts := func(ps ...Point) *Trace { return &Trace{Points: ps} }
	cases := []struct {
		name   string
		t      *Trace
		always []Column
		kind   error
		frag   string
	}{
		{"nil trace", nil, nil, nil, "nil trace"},
		{"NaN frequency", pts(FromPolar(math.NaN(), 0, 0)), nil, ErrRange, "point 0: frequency NaN Hz; frequencies must be finite and not negative"},
		{"negative frequency", pts(FromPolar(-1, 0, 0)), nil, ErrRange, "frequency -1 Hz"},
		{"descending", pts(FromPolar(200, 0, 0), FromPolar(100, 0, 0)), nil, ErrOrder, "point 1: frequency 100 Hz is not above point 0's 200 Hz; sort the points"},
		{"duplicate", pts(FromPolar(100, 0, 0), FromPolar(100, 0, 0)), nil, ErrOrder, "is not above point 0's 100 Hz"},
		{"NaN ratio", pts(NewPoint(100, cmplx.NaN())), nil, ErrRange, "H = (NaN+NaNi) is not finite"},
		{"infinite ratio", pts(NewPoint(100, cmplx.Inf())), nil, ErrRange, "is not finite"},
		{"tiny ratio", pts(NewPoint(100, 1e-305)), nil, ErrRange, "gain -6100 dB is beyond ±6000 dB; use H = 0"},
		{"invalid column", pts(FromPolar(100, 0, 0)), []Column{Column(9)}, nil, "invalid column 9"},
	}
	for _, tc := range cases {
		var buf bytes.Buffer
		err := Write(&buf, tc.t, tc.always...)
		if err == nil || !strings.Contains(err.Error(), tc.frag) {
			t.Errorf("%s: error %v, want one containing %q", tc.name, err, tc.frag)
			continue
		}
		if tc.kind != nil && !errors.Is(err, tc.kind) {
			t.Errorf("%s: error %v does not wrap %v", tc.name, err, tc.kind)
		}
		if buf.Len() != 0 {
			t.Errorf("%s: %d bytes written before the error", tc.name, buf.Len())
		}
	}
}

func TestSaveLoadFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.csv")
	want := goldenTrace()
	if err := SaveFile(path, want); err != nil {
		t.Fatal(err)
	}
	got, err := LoadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	samePoints(t, got.Points, want.Points)
	before, _ := os.ReadFile(path)

	// Failed saves leave the old file and no temporary file behind.
	bad := &Trace{Points: []Point{FromPolar(200, 0, 0), FromPolar(100, 0, 0)}}
	if err := SaveFile(path, bad); err == nil || !strings.Contains(err.Error(), "out.csv") {
		t.Errorf("unsorted trace: error %v, want one naming out.csv", err)
	}
	if err := os.Mkdir(filepath.Join(dir, "sub.csv"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := SaveFile(filepath.Join(dir, "sub.csv"), want); err == nil {
		t.Error("saving over a directory succeeded")
	}
	if err := SaveFile(filepath.Join(dir, "missing", "x.csv"), want); err == nil {
		t.Error("saving into a missing directory succeeded")
	}
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Error("a failed save changed the existing file")
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if e.Name() != "out.csv" && e.Name() != "sub.csv" {
			t.Errorf("left behind %s", e.Name())
		}
	}

	// Load errors name the file and the position.
	badPath := filepath.Join(dir, "bad.csv")
	if err := os.WriteFile(badPath, []byte("freq_hz,gain_db,phase_deg\n100,x,0\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = LoadFile(badPath)
	var pe *ParseError
	if !errors.As(err, &pe) || !strings.Contains(err.Error(), "trace: "+badPath+": line 2, column 2: gain_db \"x\" is not a number") {
		t.Errorf("error %v, want one naming the file, line 2, column 2", err)
	}
	if _, err := LoadFile(filepath.Join(dir, "none.csv")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v, want os.ErrNotExist", err)
	}
}
