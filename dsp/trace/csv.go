package trace

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"tonetrace/config/atomicfile"
)

// Column is an optional column of the CSV form. The mandatory columns
// freq_hz, gain_db and phase_deg are always written first; the optional
// ones follow in the order of the constants below.
type Column int

// Optional columns, in the order they are written.
const (
	ColGainU     Column = iota + 1 // gain_u_db: Point.GainU, dB
	ColPhaseU                      // phase_u_deg: Point.PhaseU, degrees
	ColCoherence                   // coherence: Point.Coherence, 0 to 1
	ColSNR                         // snr_db: Point.SNR, dB
	ColTHD                         // thd_pct: Point.THD, percent
)

const (
	firstColumn = ColGainU
	lastColumn  = ColTHD
)

// String returns the column's header name, such as "gain_u_db".
func (c Column) String() string {
	switch c {
	case ColGainU:
		return "gain_u_db"
	case ColPhaseU:
		return "phase_u_deg"
	case ColCoherence:
		return "coherence"
	case ColSNR:
		return "snr_db"
	case ColTHD:
		return "thd_pct"
	}
	return "Column(" + strconv.Itoa(int(c)) + ")"
}

// ParseColumn returns the optional column with header name (case-sensitive),
// and whether there is one.
func ParseColumn(name string) (Column, bool) {
	for c := firstColumn; c <= lastColumn; c++ {
		if c.String() == name {
			return c, true
		}
	}
	return 0, false
}

// Value returns the quantity of p that column c holds (NaN when not
// measured). It panics for an invalid column.
func (c Column) Value(p Point) float64 {
	return *c.field(&p)
}

func (c Column) field(p *Point) *float64 {
	switch c {
	case ColGainU:
		return &p.GainU
	case ColPhaseU:
		return &p.PhaseU
	case ColCoherence:
		return &p.Coherence
	case ColSNR:
		return &p.SNR
	case ColTHD:
		return &p.THD
	}
	panic(fmt.Sprintf("trace: invalid column %d", int(c)))
}

// digits is the number of significant digits written for the column.
func (c Column) digits() int {
	if c == ColCoherence {
		return 7 // 1 − γ² drives the uncertainty: keep the nines
	}
	return 4
}

// Significant digits written for the mandatory columns.
const (
	freqDigits  = 10
	gainDigits  = 7
	phaseDigits = 7
)

// MaxGainDB is the largest magnitude of a finite gain_db the CSV form
// holds, in dB. Beyond it |H| is outside the normal float64 range; a zero
// ratio is written as "-inf".
const MaxGainDB = 6000

// IgnoredColumnsKey is the metadata key under which [Read] records, comma
// separated, the names of header columns it does not know and skipped.
const IgnoredColumnsKey = "ignored_columns"

// Mandatory header names.
const (
	nameFreq  = "freq_hz"
	nameGain  = "gain_db"
	namePhase = "phase_deg"
)

// Errors wrapped by [ParseError] and by [Write]'s errors; test with
// [errors.Is].
var (
	ErrHeader     = errors.New("trace: bad header row")
	ErrFieldCount = errors.New("trace: wrong number of fields")
	ErrSyntax     = errors.New("trace: not a number")
	ErrRange      = errors.New("trace: value out of range")
	ErrOrder      = errors.New("trace: frequencies not in ascending order")
)

// ParseError reports a problem at a position of a trace CSV, like
// encoding/csv's ParseError.
type ParseError struct {
	// Line is the 1-based line number.
	Line int
	// Column is the 1-based field number, or 0 when the line as a whole
	// is at fault.
	Column int
	// Err says what is wrong and how to fix it; it wraps one of ErrHeader,
	// ErrFieldCount, ErrSyntax, ErrRange or ErrOrder.
	Err error
}

func (e *ParseError) Error() string {
	if e.Column > 0 {
		return fmt.Sprintf("line %d, column %d: %v", e.Line, e.Column, e.Err)
	}
	return fmt.Sprintf("line %d: %v", e.Line, e.Err)
}

func (e *ParseError) Unwrap() error { return e.Err }

// detail is an error message that wraps a sentinel without repeating it.
type detail struct {
	kind error
	msg  string
}

func (d *detail) Error() string { return d.msg }
func (d *detail) Unwrap() error { return d.kind }

func errorf(kind error, format string, args ...any) error {
	return &detail{kind: kind, msg: fmt.Sprintf(format, args...)}
}

// Write writes t in the CSV form described in the package documentation:
// the metadata as "# key: value" lines, the header, then one row per point.
//
// An optional column is written when any point has a value for it (not
// NaN) or when it is listed in always (analyze always writes coherence).
// Numbers are written in plain decimal notation, with an exponent only
// below 1e−6 or from 1e10 (frequency) or 1e7 (other quantities) up:
// frequency to 10 significant digits (more where two frequencies closer
// than that would otherwise merge), gain and phase to 7, coherence to 7,
// uncertainties, SNR and THD to 4. A zero ratio H is written with gain
// "-inf" and phase 0; a NaN optional value as an empty field; an infinite
// one as "inf" or "-inf". Phase is wrapped to (−180, 180].
//
// Metadata keys and values are written on one line each: control
// characters (such as line breaks) become spaces, surrounding spaces are
// dropped, and a colon in a key becomes '_'. [Read] returns them so.
//
// Write returns an error, before writing anything, when a frequency is NaN,
// infinite, negative or not above the one before it, when H is NaN or
// infinite or its gain is beyond ±MaxGainDB, or when always holds an
// invalid column.
func Write(w io.Writer, t *Trace, always ...Column) error {
	if t == nil {
		return errors.New("trace: Write of a nil trace")
	}
	cols, err := columns(t, always)
	if err != nil {
		return err
	}
	if err := checkPoints(t.Points); err != nil {
		return err
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	line := make([]byte, 0, 256)
	for _, m := range t.Meta {
		line = append(line[:0], "# "...)
		line = append(line, cleanKey(m.Key)...)
		line = append(line, ':')
		if v := cleanText(m.Value); v != "" {
			line = append(line, ' ')
			line = append(line, v...)
		}
		line = append(line, '\n')
		bw.Write(line)
	}
	line = append(line[:0], nameFreq+","+nameGain+","+namePhase...)
	for _, c := range cols {
		line = append(line, ',')
		line = append(line, c.String()...)
	}
	line = append(line, '\n')
	bw.Write(line)

	prev := math.Inf(-1) // the previous frequency as written
	for i, p := range t.Points {
		line = line[:0]
		next := math.Inf(1)
		if i+1 < len(t.Points) {
			next = t.Points[i+1].Freq
		}
		line, prev = appendFreq(line, p.Freq, prev, next)
		line = append(line, ',')
		if p.H == 0 {
			line = append(line, "-inf,0"...)
		} else {
			line = appendNum(line, p.GainDB(), gainDigits, 7)
			line = append(line, ',')
			n := len(line)
			line = appendNum(line, p.PhaseDeg(), phaseDigits, 7)
			if string(line[n:]) == "-180" { // rounded onto the excluded end
				line = append(line[:n], "180"...)
			}
		}
		for _, c := range cols {
			line = append(line, ',')
			line = appendNum(line, c.Value(p), c.digits(), 7)
		}
		line = append(line, '\n')
		bw.Write(line)
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("trace: writing: %w", err)
	}
	return nil
}

// columns returns the optional columns to write, in order.
func columns(t *Trace, always []Column) ([]Column, error) {
	var want [lastColumn + 1]bool
	for _, c := range always {
		if c < firstColumn || c > lastColumn {
			return nil, fmt.Errorf("trace: Write: invalid column %d; use the Col constants", int(c))
		}
		want[c] = true
	}
	for _, p := range t.Points {
		for c := firstColumn; c <= lastColumn; c++ {
			if !math.IsNaN(c.Value(p)) {
				want[c] = true
			}
		}
	}
	var cols []Column
	for c := firstColumn; c <= lastColumn; c++ {
		if want[c] {
			cols = append(cols, c)
		}
	}
	return cols, nil
}

// checkPoints returns an error for a point Write cannot represent.
func checkPoints(points []Point) error {
	for i, p := range points {
		switch {
		case math.IsNaN(p.Freq) || math.IsInf(p.Freq, 0) || p.Freq < 0:
			return errorf(ErrRange, "trace: point %d: frequency %v Hz; frequencies must be finite and not negative", i, p.Freq)
		case i > 0 && !(p.Freq > points[i-1].Freq):
			return errorf(ErrOrder, "trace: point %d: frequency %v Hz is not above point %d's %v Hz; sort the points by frequency and merge duplicates",
				i, p.Freq, i-1, points[i-1].Freq)
		}
		re, im := real(p.H), imag(p.H)
		if re-re != 0 || im-im != 0 {
			return errorf(ErrRange, "trace: point %d at %v Hz: H = %v is not finite; only finite ratios can be written", i, p.Freq, p.H)
		}
		// The slack lets a gain read as exactly ±MaxGainDB be written back
		// after the round trip through H.
		if g := p.GainDB(); p.H != 0 && math.Abs(g) > MaxGainDB*(1+1e-12) {
			return errorf(ErrRange, "trace: point %d at %v Hz: gain %v dB is beyond ±%d dB; use H = 0 for a zero response", i, p.Freq, g, MaxGainDB)
		}
	}
	return nil
}

// appendFreq appends f to 10 significant digits, or exactly when the
// rounded value would not lie strictly between prev (the previous value as
// written) and next (the next exact frequency). It returns the line and
// the value as written.
func appendFreq(line []byte, f, prev, next float64) ([]byte, float64) {
	n := len(line)
	// Rounding moves f by at most 5e−10 relative: only a neighbour within
	// 1e−9 relative needs the written value checked.
	near := f-prev <= 1e-9*f || next-f <= 1e-9*f
	line = appendNum(line, f, freqDigits, 10)
	if !near {
		return line, f
	}
	v, err := strconv.ParseFloat(string(line[n:]), 64)
	if err == nil && v > prev && v < next {
		return line, v
	}
	line = strconv.AppendFloat(line[:n], f, 'g', -1, 64)
	return line, f
}

// appendNum appends x rounded to sig significant digits, in plain decimal
// notation when 1e−6 ≤ |x| < 10^maxExp, with an exponent otherwise, and
// with trailing zeros dropped. NaN appends nothing; infinities "inf" and
// "-inf"; zero "0".
func appendNum(b []byte, x float64, sig, maxExp int) []byte {
	switch {
	case math.IsNaN(x):
		return b
	case math.IsInf(x, 1):
		return append(b, "inf"...)
	case math.IsInf(x, -1):
		return append(b, "-inf"...)
	case x == 0:
		return append(b, '0')
	}
	var tmp [40]byte
	e := strconv.AppendFloat(tmp[:0], x, 'e', sig-1, 64) // "-d.ddddde±XX"
	neg := e[0] == '-'
	if neg {
		e = e[1:]
	}
	k := len(e) - 1
	for e[k] != 'e' {
		k--
	}
	exp, _ := strconv.Atoi(string(e[k+1:]))
	if exp < -6 || exp >= maxExp {
		return strconv.AppendFloat(b, x, 'g', sig, 64)
	}
	// Digits without the point, trailing zeros dropped.
	var digs [40]byte
	d := append(digs[:0], e[0])
	if k > 1 {
		d = append(d, e[2:k]...)
	}
	for len(d) > 1 && d[len(d)-1] == '0' {
		d = d[:len(d)-1]
	}
	if neg {
		b = append(b, '-')
	}
	if exp >= 0 {
		whole := exp + 1
		if len(d) <= whole {
			b = append(b, d...)
			for range whole - len(d) {
				b = append(b, '0')
			}
			return b
		}
		b = append(b, d[:whole]...)
		b = append(b, '.')
		return append(b, d[whole:]...)
	}
	b = append(b, '0', '.')
	for range -exp - 1 {
		b = append(b, '0')
	}
	return append(b, d...)
}

// cleanText replaces control characters with spaces and trims spaces.
func cleanText(s string) string {
	if strings.IndexFunc(s, isControl) >= 0 {
		s = strings.Map(func(r rune) rune {
			if isControl(r) {
				return ' '
			}
			return r
		}, s)
	}
	return strings.TrimSpace(s)
}

// cleanKey is cleanText with colons replaced by '_'.
func cleanKey(s string) string { return strings.ReplaceAll(cleanText(s), ":", "_") }

func isControl(r rune) bool {
	return r < 0x20 || r == 0x7F || (r >= 0x80 && r < 0xA0) || r == '\u2028' || r == '\u2029'
}

// Read reads a trace in the CSV form described in the package
// documentation.
//
// Comment lines ("#") hold "key: value" metadata: the text before the first
// colon, trimmed, is the key, the rest, trimmed, the value (a comment with
// no colon is a key with an empty value; a bare "#" is skipped). They may
// appear anywhere and keep their order. Blank lines are skipped, a UTF-8
// byte order mark and CR LF line ends are accepted, and spaces around
// fields are ignored.
//
// The header must start freq_hz,gain_db,phase_deg (case-sensitive);
// known optional columns may follow in any order. Columns with other
// names are skipped and their names recorded under the metadata key
// [IgnoredColumnsKey]. Every row has as many fields as the header.
// Frequencies must be finite, not negative and strictly ascending; gains
// finite within ±MaxGainDB or "-inf" (H = 0); phases finite, in degrees
// (any range). H is rebuilt as 10^(gain/20)·e^(j·phase). An empty optional
// field, or "nan", reads as NaN.
//
// Errors are [*ParseError] values, or an I/O error from r.
func Read(r io.Reader) (*Trace, error) {
	var sb strings.Builder
	if _, err := io.Copy(&sb, r); err != nil {
		return nil, fmt.Errorf("trace: reading: %w", err)
	}
	text := strings.TrimPrefix(sb.String(), "\uFEFF")

	t := &Trace{}
	var (
		lineNo   int
		header   bool
		nfields  int
		cols     []Column // per field after the third; 0 for ignored
		ignored  []string
		prevFreq = math.Inf(-1)
		prevLine int
	)
	for len(text) > 0 {
		lineNo++
		var line string
		if i := strings.IndexByte(text, '\n'); i >= 0 {
			line, text = text[:i], text[i+1:]
		} else {
			line, text = text, ""
		}
		line = strings.TrimSuffix(line, "\r")
		trimmed := strings.TrimSpace(line)
		switch {
		case trimmed == "":
			continue
		case trimmed[0] == '#':
			if m, ok := parseMeta(trimmed[1:]); ok {
				t.Meta = append(t.Meta, m)
			}
			continue
		case !header:
			var err error
			if cols, ignored, err = parseHeader(trimmed, lineNo); err != nil {
				return nil, err
			}
			header = true
			nfields = 3 + len(cols)
			continue
		}
		p, err := parseRow(trimmed, lineNo, nfields, cols)
		if err != nil {
			return nil, err
		}
		if !(p.Freq > prevFreq) {
			return nil, &ParseError{Line: lineNo, Column: 1, Err: errorf(ErrOrder,
				"%s %v is not above %v on line %d; rows must be in strictly ascending frequency — sort the rows by %s and merge duplicates",
				nameFreq, p.Freq, prevFreq, prevLine, nameFreq)}
		}
		prevFreq, prevLine = p.Freq, lineNo
		t.Points = append(t.Points, p)
	}
	if !header {
		return nil, &ParseError{Line: lineNo + 1, Err: errorf(ErrHeader,
			"no header row: the input is empty or holds only comments; a trace needs the header %s,%s,%s and a row per point",
			nameFreq, nameGain, namePhase)}
	}
	if len(ignored) > 0 {
		t.SetMeta(IgnoredColumnsKey, strings.Join(ignored, ","))
	}
	return t, nil
}

// parseMeta splits a comment's text into a metadata item.
func parseMeta(s string) (MetaItem, bool) {
	s = strings.TrimSpace(s)
	if s == "" {
		return MetaItem{}, false
	}
	k, v, _ := strings.Cut(s, ":")
	return MetaItem{Key: strings.TrimSpace(k), Value: strings.TrimSpace(v)}, true
}

// field trims spaces and one pair of surrounding double quotes.
func field(s string) string {
	s = strings.TrimSpace(s)
	if len(s) >= 2 && s[0] == '"' && s[len(s)-1] == '"' {
		s = strings.TrimSpace(s[1 : len(s)-1])
	}
	return s
}

// parseHeader checks a header row and maps its optional fields to columns.
func parseHeader(line string, lineNo int) (cols []Column, ignored []string, err error) {
	names := strings.Split(line, ",")
	mandatory := [3]string{nameFreq, nameGain, namePhase}
	herr := func(col int, format string, args ...any) error {
		return &ParseError{Line: lineNo, Column: col, Err: errorf(ErrHeader, format, args...)}
	}
	want := nameFreq + "," + nameGain + "," + namePhase
	for i, m := range mandatory {
		if i >= len(names) {
			return nil, nil, herr(i+1, "the header has no %s column; it must start %s", m, want)
		}
		got := field(names[i])
		if got == m {
			continue
		}
		if strings.EqualFold(got, m) {
			return nil, nil, herr(i+1, "header column %q must be written %q (names are case-sensitive); the header must start %s", got, m, want)
		}
		if i == 0 {
			if _, err := strconv.ParseFloat(got, 64); err == nil {
				return nil, nil, herr(0, "the header row is missing: found data %q first; add the line %s above the rows", shorten(line), want)
			}
		}
		return nil, nil, herr(i+1, "header column %d is %q, want %q; the header must start %s", i+1, shorten(got), m, want)
	}
	seen := map[string]int{}
	for i, raw := range names[3:] {
		col := i + 4
		name := field(raw)
		if name == "" {
			return nil, nil, herr(col, "header column %d is empty; remove the stray comma or name the column", col)
		}
		if first, dup := seen[name]; dup {
			return nil, nil, herr(col, "column %q appears twice (columns %d and %d); remove one", shorten(name), first, col)
		}
		seen[name] = col
		c, ok := ParseColumn(name)
		if !ok {
			ignored = append(ignored, name)
		}
		cols = append(cols, c) // 0 for an ignored column
	}
	return cols, ignored, nil
}

// parseRow parses one data row.
func parseRow(line string, lineNo, nfields int, cols []Column) (Point, error) {
	var f [3]float64
	p := Point{}
	n := strings.Count(line, ",") + 1
	if n != nfields {
		return p, &ParseError{Line: lineNo, Err: errorf(ErrFieldCount,
			"the row has %d fields but the header has %d; give every column a field (leave an optional one empty when it was not measured)", n, nfields)}
	}
	rest := line
	for i := range nfields {
		var s string
		if j := strings.IndexByte(rest, ','); j >= 0 {
			s, rest = rest[:j], rest[j+1:]
		} else {
			s, rest = rest, ""
		}
		s = field(s)
		col := i + 1
		perr := func(kind error, format string, args ...any) error {
			return &ParseError{Line: lineNo, Column: col, Err: errorf(kind, format, args...)}
		}
		if i >= 3 {
			c := cols[i-3]
			if c == 0 {
				continue // ignored column
			}
			v := math.NaN()
			if s != "" {
				var err error
				if v, err = strconv.ParseFloat(s, 64); err != nil && !errors.Is(err, strconv.ErrRange) {
					return p, perr(ErrSyntax, "%s %q is not a number; write a decimal number, or leave the field empty when not measured", c, shorten(s))
				}
			}
			*c.field(&p) = v
			continue
		}
		name := [3]string{nameFreq, nameGain, namePhase}[i]
		if s == "" {
			return p, perr(ErrSyntax, "%s is empty; every row needs a frequency, a gain and a phase", name)
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil && !errors.Is(err, strconv.ErrRange) {
			return p, perr(ErrSyntax, "%s %q is not a number; write a decimal number such as %s", name, shorten(s), [3]string{"1000", "-3.01", "-45"}[i])
		}
		switch {
		case i == 0 && (math.IsNaN(v) || math.IsInf(v, 0)):
			return p, perr(ErrRange, "%s is %v; frequencies must be finite numbers of hertz", name, v)
		case i == 0 && v < 0:
			return p, perr(ErrRange, "%s %v is negative; frequencies are 0 Hz or more", name, v)
		case i == 1 && (math.IsNaN(v) || math.IsInf(v, 1)):
			return p, perr(ErrRange, "%s is %v; write a finite gain, or -inf for a zero response", name, v)
		case i == 1 && !math.IsInf(v, -1) && math.Abs(v) > MaxGainDB:
			return p, perr(ErrRange, "%s %v is beyond ±%d dB; write -inf for a zero response", name, v, MaxGainDB)
		case i == 2 && (math.IsNaN(v) || math.IsInf(v, 0)):
			return p, perr(ErrRange, "%s is %v; phases must be finite numbers of degrees", name, v)
		}
		f[i] = v
		if i == 2 {
			// Wrap first: degrees near the float64 limit would overflow
			// on conversion to radians.
			p = FromPolar(f[0], f[1], WrapDeg(f[2]))
		}
	}
	return p, nil
}

// shorten cuts a quoted excerpt to a readable length.
func shorten(s string) string {
	const limit = 40
	if len(s) <= limit {
		return s
	}
	return s[:limit] + "…"
}

// SaveFile writes t to the file at path (see [Write]) atomically: it writes
// a temporary file in the same directory, flushes it to disk and renames
// it over path. On any error the temporary file is removed and an existing
// file at path is left as it was. The new file has permissions 0644.
func SaveFile(path string, t *Trace, always ...Column) error {
	if t == nil {
		return errors.New("trace: SaveFile of a nil trace")
	}
	if _, err := columns(t, always); err != nil {
		return err
	}
	if err := checkPoints(t.Points); err != nil {
		return fmt.Errorf("%w (not writing %s)", err, path)
	}
	return atomicfile.Write(path, func(w io.Writer) error { return Write(w, t, always...) })
}

// LoadFile reads the trace CSV at path (see [Read]). Errors name the file:
// "trace: out.csv: line 7, column 2: …"; a [*ParseError] inside is found
// with [errors.As].
func LoadFile(path string) (*Trace, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("trace: %w", err)
	}
	defer f.Close()
	t, err := Read(f)
	if err != nil {
		var pe *ParseError
		if errors.As(err, &pe) {
			return nil, fmt.Errorf("trace: %s: %w", path, err)
		}
		return nil, fmt.Errorf("%w (reading %s)", err, path)
	}
	return t, nil
}
