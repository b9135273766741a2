package config

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/pelletier/go-toml/v2"
	"github.com/pelletier/go-toml/v2/unstable"
)

// FileError is a problem in the settings file that is not about one
// setting's value: a TOML syntax error, an unknown key or table, or a table
// written as a value.
type FileError struct {
	// Path is the file name as given to [Load] or [Parse].
	Path string
	// Line and Column locate the problem, both counted from 1.
	Line, Column int
	// Key is the dotted key concerned, "" for syntax errors.
	Key string
	// Msg says what is wrong and how to fix it.
	Msg string
	// Known lists the keys accepted where Key was found (for unknown
	// keys), else nil.
	Known []string
	// Err is the underlying *toml.DecodeError for syntax errors, else nil.
	Err error
}

// Error returns "path:line:column: message".
func (e *FileError) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s", e.Path, e.Line, e.Column, e.Msg)
}

// Unwrap returns Err.
func (e *FileError) Unwrap() error { return e.Err }

// DefaultPath returns the settings file's usual place,
// tonetrace/config.toml in the user's configuration directory
// ($XDG_CONFIG_HOME or ~/.config on Linux; see [os.UserConfigDir]).
func DefaultPath() (string, error) {
	dir, err := os.UserConfigDir()
	if err != nil {
		return "", fmt.Errorf("config: no configuration directory: %w", err)
	}
	return filepath.Join(dir, "tonetrace", "config.toml"), nil
}

// Load returns the defaults overlaid with the settings file at path.
//
// With path "" it reads [DefaultPath]; a missing file there (or no
// configuration directory at all) is fine and yields the defaults. A
// missing file at a path given explicitly is an error.
//
// Load checks the file's syntax, its keys and the form of each value (see
// [Parse]); it does not check ranges, because flags applied afterwards may
// change them: call [Settings.Validate] when every source is applied.
func Load(path string) (*Settings, error) {
	explicit := path != ""
	if !explicit {
		p, err := DefaultPath()
		if err != nil {
			return Defaults(), nil
		}
		path = p
	}
	data, err := os.ReadFile(path)
	if err != nil {
		if !explicit && errors.Is(err, fs.ErrNotExist) {
			return Defaults(), nil
		}
		return nil, fmt.Errorf("config: %w", err)
	}
	return Parse(data, path)
}

// Parse returns the defaults overlaid with the settings file content data;
// name is the file's name for origins and messages. It reports every
// problem it finds (up to 20), joined with [errors.Join]: a *[FileError] for TOML
// syntax errors (with line and column), unknown keys and tables (with the
// keys accepted there) and tables written as values; a *[SettingError]
// for a value of the wrong type or form (with its origin "name:line").
// On error the returned Settings is nil.
//
// Keys are matched exactly, case included, as TOML requires. Files larger
// than [MaxFileSize] are refused.
func Parse(data []byte, name string) (*Settings, error) {
	if len(data) > MaxFileSize {
		return nil, &FileError{Path: name, Line: 1, Column: 1,
			Msg: fmt.Sprintf("%d bytes is too large for a settings file (at most %d); is this the right file?", len(data), MaxFileSize)}
	}
	data = bytes.TrimPrefix(data, []byte("\ufeff")) // a UTF-8 byte order mark
	var doc map[string]any
	if err := toml.Unmarshal(data, &doc); err != nil {
		return nil, syntaxError(name, err)
	}
	entries, err := keyPositions(data)
	if err != nil { // not expected after a successful Unmarshal
		fe := &FileError{Path: name, Line: 1, Column: 1, Msg: "invalid TOML: " + err.Error(), Err: err}
		var pe *unstable.ParserError
		if errors.As(err, &pe) {
			if off := cap(data) - cap(pe.Highlight); off >= 0 && off <= len(data) {
				fe.Line = bytes.Count(data[:off], []byte("\n")) + 1
				fe.Column = off - (bytes.LastIndexByte(data[:off], '\n') + 1) + 1
			}
		}
		return nil, fe
	}

	s := Defaults()
	s.file = name
	var errs []error
	var bad [][]string
	for _, e := range entries {
		err := s.applyEntry(doc, e, name, &bad)
		if err == nil {
			continue
		}
		if len(errs) == maxProblems {
			errs = append(errs, &FileError{Path: name, Line: e.line, Column: e.col,
				Msg: "more problems from here on are not shown; fix the ones above first"})
			break
		}
		errs = append(errs, err)
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}
	return s, nil
}

// MaxFileSize is the largest settings file Parse reads, in bytes. The
// complete commented file is under 4 KiB; the limit keeps a wrong file
// (a recording, a log) from being decoded at length.
const MaxFileSize = 64 << 10

// maxProblems is the most problems Parse reports from one file; a file
// with more is probably not a settings file at all.
const maxProblems = 20

// syntaxError turns a go-toml error into a *FileError.
func syntaxError(name string, err error) error {
	fe := &FileError{Path: name, Msg: "invalid TOML: " + strings.TrimPrefix(err.Error(), "toml: "), Err: err}
	var de *toml.DecodeError
	if errors.As(err, &de) {
		fe.Line, fe.Column = de.Position()
	}
	fe.Line, fe.Column = max(fe.Line, 1), max(fe.Column, 1)
	return fe
}

// entry is one key found in the file: a table header or a key/value.
type entry struct {
	path      []string // key parts, table prefix included
	line, col int      // of the key's first character
	header    bool     // a [table] or [[table]] header
	array     bool     // a [[table]] header
}

// keyPositions walks the document with go-toml's parser and lists every
// table header and every leaf key/value with its position, in document
// order. Keys inside inline tables are listed with their full path.
func keyPositions(data []byte) ([]entry, error) {
	var p unstable.Parser
	p.Reset(data)
	var out []entry
	var table []string
	// Line starts, so that each position costs a binary search rather
	// than a scan from the top (Parser.Shape scans).
	starts := []int{0}
	for i, c := range data {
		if c == '\n' {
			starts = append(starts, i+1)
		}
	}
	pos := func(n *unstable.Node) (int, int) {
		off := int(n.Raw.Offset)
		line, _ := slices.BinarySearch(starts, off+1) // first start after off
		return line, off - starts[line-1] + 1
	}
	keyParts := func(it unstable.Iterator, prefix []string) ([]string, *unstable.Node) {
		parts := append([]string(nil), prefix...)
		var first *unstable.Node
		for it.Next() {
			if first == nil {
				first = it.Node()
			}
			parts = append(parts, string(it.Node().Data))
		}
		return parts, first
	}
	var keyval func(n *unstable.Node, prefix []string)
	keyval = func(n *unstable.Node, prefix []string) {
		path, first := keyParts(n.Key(), prefix)
		line, col := pos(first)
		v := n.Value()
		if v.Kind == unstable.InlineTable && !isSetting(path) {
			out = append(out, entry{path: path, line: line, col: col, header: true})
			it := v.Children()
			for it.Next() {
				keyval(it.Node(), path)
			}
			return
		}
		out = append(out, entry{path: path, line: line, col: col})
	}
	for p.NextExpression() {
		e := p.Expression()
		switch e.Kind {
		case unstable.Table, unstable.ArrayTable:
			path, first := keyParts(e.Key(), nil)
			line, col := pos(first)
			table = path
			out = append(out, entry{path: path, line: line, col: col, header: true, array: e.Kind == unstable.ArrayTable})
		case unstable.KeyValue:
			keyval(e, table)
		}
	}
	return out, p.Error()
}

// isSetting reports whether path is [table, name] of a setting.
func isSetting(path []string) bool {
	if len(path) != 2 {
		return false
	}
	for i := range specs {
		if specs[i].table() == path[0] && specs[i].name() == path[1] {
			return true
		}
	}
	return false
}

// isTable reports whether name is a settings table.
func isTable(name string) bool { return slices.Contains(tables, name) }

// tableKeys lists the names in table t.
func tableKeys(t string) []string {
	var names []string
	for i := range specs {
		if specs[i].table() == t {
			names = append(names, specs[i].name())
		}
	}
	return names
}

// displayKey joins key parts with dots, quoting parts that are not bare
// TOML keys.
func displayKey(path []string) string {
	parts := make([]string, len(path))
	for i, p := range path {
		bare := p != ""
		for j := 0; j < len(p); j++ {
			c := p[j]
			if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_' || c == '-') {
				bare = false
				break
			}
		}
		if bare {
			parts[i] = p
		} else {
			parts[i] = quoteTOML(p)
		}
	}
	return strings.Join(parts, ".")
}

// quoteKey puts a displayed key in double quotes unless it already
// carries quotes of its own.
func quoteKey(k string) string {
	if strings.Contains(k, `"`) {
		return k
	}
	return `"` + k + `"`
}

// applyEntry checks one entry of the file and stores its value in s.
// Headers found wrong are added to *bad, and entries under them are not
// reported again.
func (s *Settings) applyEntry(doc map[string]any, e entry, name string, bad *[][]string) error {
	for _, p := range *bad {
		if len(e.path) > len(p) && slices.Equal(e.path[:len(p)], p) {
			return nil
		}
	}
	key := displayKey(e.path)
	fe := func(msg string, known []string) error {
		if e.header {
			*bad = append(*bad, e.path)
		}
		return &FileError{Path: name, Line: e.line, Column: e.col, Key: key, Msg: msg, Known: known}
	}
	top := e.path[0]
	switch {
	case e.array:
		return fe(fmt.Sprintf("[[%s]] is an array of tables; settings take single tables such as [%s]", key, key), nil)
	case len(e.path) == 1 && isTable(top):
		if e.header {
			return nil
		}
		return fe(fmt.Sprintf("%s must be a table of settings such as [%s], not a value", key, key), tableKeys(top))
	case len(e.path) == 1 && !e.header:
		msg := fmt.Sprintf("unknown key %s outside any table; known tables: %s", quoteKey(key), strings.Join(tables, ", "))
		if t := tableOf(top); t != "" {
			msg += fmt.Sprintf("; %s belongs under [%s]", top, t)
		}
		return fe(msg, tables)
	case !isTable(top):
		msg := fmt.Sprintf("unknown table %s; known tables: %s", quoteKey(displayKey(e.path[:1])), strings.Join(tables, ", "))
		if m := closest(top, tables); m != "" {
			msg += fmt.Sprintf("; did you mean [%s]?", m)
		}
		if !e.header {
			*bad = append(*bad, e.path[:1])
		}
		return fe(msg, tables)
	case isSetting(e.path):
		if e.header {
			return fe(fmt.Sprintf("%s is a setting, not a table", key), nil)
		}
		return s.setTOML(top+"."+e.path[1], lookupValue(doc, e.path), fmt.Sprintf("%s:%d", name, e.line))
	default:
		inner := displayKey(e.path[1:])
		what := "key"
		if e.header {
			what = "table"
		}
		msg := fmt.Sprintf("unknown %s %s in [%s]; known keys there: %s", what, quoteKey(inner), top, strings.Join(tableKeys(top), ", "))
		if m := closest(inner, tableKeys(top)); m != "" {
			msg += fmt.Sprintf("; did you mean %q?", m)
		}
		return fe(msg, tableKeys(top))
	}
}

// tableOf returns the table holding a setting named name, if exactly one
// does.
func tableOf(name string) string {
	found := ""
	for i := range specs {
		if specs[i].name() == name {
			if found != "" {
				return ""
			}
			found = specs[i].table()
		}
	}
	return found
}

// lookupValue returns the decoded value at path in doc.
func lookupValue(doc map[string]any, path []string) any {
	var cur any = doc
	for _, p := range path {
		m, ok := cur.(map[string]any)
		if !ok {
			return nil
		}
		cur = m[p]
	}
	return cur
}

// setTOML stores a decoded TOML value for key, recording origin.
func (s *Settings) setTOML(key string, v any, origin string) error {
	sp, _ := lookup(key)
	fail := func(value string, err error) error {
		return &SettingError{Key: key, Value: value, Origin: origin, Allowed: "expected " + sp.accepted(), Err: err}
	}
	var err error
	switch x := v.(type) {
	case string:
		if err = sp.setText(s, x); err != nil {
			return fail(quoteTOML(x), err)
		}
	case int64:
		switch {
		case sp.str != nil:
			return fail(strconv.FormatInt(x, 10), errors.New("a number where text is expected"))
		case sp.n != nil:
			if int64(int(x)) != x {
				return fail(strconv.FormatInt(x, 10), errors.New("the number is too large"))
			}
			*sp.n(s) = int(x)
		default:
			err = sp.setNumber(s, float64(x))
		}
		if err != nil {
			return fail(strconv.FormatInt(x, 10), err)
		}
	case float64:
		if sp.str != nil {
			return fail(num(x), errors.New("a number where text is expected"))
		}
		if err = sp.setNumber(s, x); err != nil {
			return fail(num(x), err)
		}
	default:
		return fail(tomlValueText(v), fmt.Errorf("%s is the wrong type", tomlTypeName(v)))
	}
	s.setOrigin(key, origin)
	return nil
}

// tomlTypeName names the TOML type of a decoded value.
func tomlTypeName(v any) string {
	switch v.(type) {
	case bool:
		return "a boolean"
	case []any:
		return "an array"
	case map[string]any:
		return "a table"
	case time.Time, toml.LocalDate, toml.LocalDateTime, toml.LocalTime:
		return "a date or time"
	}
	return fmt.Sprintf("a %T", v)
}

// tomlValueText writes a decoded value shortly for a message.
func tomlValueText(v any) string {
	switch x := v.(type) {
	case bool:
		return strconv.FormatBool(x)
	case []any:
		return "[…]"
	case map[string]any:
		return "{…}"
	}
	return fmt.Sprint(v)
}

// fileHeader opens every written settings file.
const fileHeader = `# tonetrace settings.
#
# Every key is optional: a missing key keeps its default, and command-line
# flags override this file. Units: frequencies are numbers in Hz or text
# such as "1.5 kHz"; levels numbers in dBFS or text such as "-20 dBFS";
# durations numbers in ms or text such as "20 ms"; resistances numbers in
# ohms or text such as "4k7" or "4.7 kΩ"; capacitances numbers in farads or
# text such as "100p", "2n2" or "15 nF".
#
# Test signals can damage hearing, tweeters and inputs: keep level_dbfs low
# (start near -40 dBFS), keep the cap, mute monitors during sweeps.
`

// WriteTOML writes s as a commented settings file: a header explaining the
// units, then every table and key with a comment giving its meaning,
// default and limits. Reading the file back with [Parse] gives settings
// equal to s (origins aside; text that is not valid UTF-8 is written with
// U+FFFD in place of the bad bytes).
func (s *Settings) WriteTOML(w io.Writer) error {
	def := Defaults()
	var b strings.Builder
	b.WriteString(fileHeader)
	for _, t := range tables {
		fmt.Fprintf(&b, "\n[%s]\n", t)
		for i := range specs {
			sp := &specs[i]
			if sp.table() != t {
				continue
			}
			fmt.Fprintf(&b, "\n# %s\n# %s\n%s = %s%s\n", sp.desc, sp.limits(def), sp.name(), sp.text(s), sp.readable(s))
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// readable returns " # 100 pF"-style comments for values whose base unit
// is awkward to read, else "".
func (sp *spec) readable(s *Settings) string {
	switch sp.kind {
	case kindFrequency:
		if v := *sp.f(s); v >= 1000 || v <= -1000 {
			return "  # " + FormatFrequency(v)
		}
	case kindResistance:
		if v := *sp.f(s); v >= 1000 || (v != 0 && v < 1) {
			return "  # " + FormatResistance(v)
		}
	case kindCapacitance:
		if v := *sp.f(s); v != 0 {
			return "  # " + FormatCapacitance(v)
		}
	}
	return ""
}

// WriteDefault writes a commented settings file holding the defaults to
// path, creating its directory (mode 0755) as needed. It refuses to
// replace an existing file. The file reads back with [Load] as settings
// equal to [Defaults].
func WriteDefault(path string) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return fmt.Errorf("config: %w", err)
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("config: %s already exists; edit it, or remove it to start again from the defaults", path)
		}
		return fmt.Errorf("config: %w", err)
	}
	if err := Defaults().WriteTOML(f); err != nil {
		f.Close()
		os.Remove(path)
		return fmt.Errorf("config: writing %s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		os.Remove(path)
		return fmt.Errorf("config: writing %s: %w", path, err)
	}
	return nil
}

// Describe writes the effective settings as TOML with each value's origin
// as a trailing comment, e.g.
//
//	[sweep]
//	from_hz = 20     # default
//	to_hz   = 30000  # --to
//
// The text is itself a valid settings file.
func (s *Settings) Describe(w io.Writer) error {
	var b strings.Builder
	if s.file != "" {
		fmt.Fprintf(&b, "# settings file: %s\n", s.file)
	} else {
		b.WriteString("# settings file: none read\n")
	}
	for ti, t := range tables {
		if ti > 0 {
			b.WriteByte('\n')
		}
		fmt.Fprintf(&b, "[%s]\n", t)
		var rows [][2]string
		nameW, valW := 0, 0
		for i := range specs {
			sp := &specs[i]
			if sp.table() != t {
				continue
			}
			rows = append(rows, [2]string{sp.name(), sp.text(s)})
			nameW = max(nameW, len(sp.name()))
			valW = max(valW, len(sp.text(s)))
		}
		for _, r := range rows {
			key := t + "." + r[0]
			sp, _ := lookup(key)
			note := s.Origin(key)
			if rd := strings.TrimPrefix(sp.readable(s), "  # "); rd != "" {
				note = rd + ", " + note
			}
			fmt.Fprintf(&b, "%-*s = %-*s  # %s\n", nameW, r[0], valW, r[1], note)
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}
