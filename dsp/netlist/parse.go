package netlist

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"unicode"
	"unicode/utf8"

	"tonetrace/config"
)

// MaxBytes is the largest netlist Parse reads, 1 MiB; netlists are a few
// hundred bytes.
const MaxBytes = 1 << 20

// Default input and output node names, used when the netlist has no .io
// line and the caller gives none.
const (
	DefaultIn  = "in"
	DefaultOut = "out"
)

// Options adjust how a netlist is read. The zero value reads the netlist
// as written.
type Options struct {
	// In and Out, when not empty, name the input and output nodes and
	// override the netlist's .io line (and the defaults "in" and "out");
	// they are compared without regard to case, and "gnd" or "0" is
	// rejected. Command-line flags set them.
	In, Out string
}

// Parse reads a netlist from r with the zero [Options]; name is used in
// messages and stored in [Netlist.Name] ("" for text given directly).
func Parse(r io.Reader, name string) (*Netlist, error) { return Options{}.Parse(r, name) }

// ParseFile reads the netlist in the file at path with the zero
// [Options]; messages name the path as given.
func ParseFile(path string) (*Netlist, error) { return Options{}.ParseFile(path) }

// ParseFile reads the netlist in the file at path; messages name the path
// as given.
func (o Options) ParseFile(path string) (*Netlist, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("netlist: %w", err)
	}
	defer f.Close()
	return o.Parse(f, path)
}

// Parse reads a netlist from r (at most [MaxBytes]) and checks it; name is
// used in messages and stored in [Netlist.Name].
//
// On any problem Parse returns a nil netlist and an error: one *[Error],
// or up to [MaxProblems] of them joined with [errors.Join] and sorted by
// position (plus one saying how many more there were). An error reading r
// is returned wrapped, without position. The checks are listed in the
// package documentation.
func (o Options) Parse(r io.Reader, name string) (*Netlist, error) {
	data, err := io.ReadAll(io.LimitReader(r, MaxBytes+1))
	if err != nil {
		if name == "" {
			return nil, fmt.Errorf("netlist: reading: %w", err)
		}
		return nil, fmt.Errorf("netlist: reading %s: %w", name, err)
	}
	if len(data) > MaxBytes {
		return nil, &Error{File: name, Msg: fmt.Sprintf("the netlist is larger than %d bytes", MaxBytes),
			Hint: "a netlist holds one short line per element; check that this is the right file"}
	}
	return o.parse(string(data), name)
}

// token is one field of a line with its position.
type token struct {
	text      string
	line, col int
}

// end returns a position one space past the token, where a missing field
// belongs.
func (t token) end() token {
	return token{line: t.line, col: t.col + utf8.RuneCountInString(t.text) + 1}
}

// logical is one element or directive line, continuation lines included.
type logical struct {
	toks []token
	line int
}

// item is an element with the positions of its fields.
type item struct {
	el    Element
	name  token
	nodes []token
	value token
}

// nodeInfo records how a node is used by the elements.
type nodeInfo struct {
	first token // first terminal on the node
	count int   // element terminals on the node
	elem  int   // index in items of the last element touching it
}

type parser struct {
	probs    problems
	title    string
	lines    []logical
	firstRow int // line of the first element or directive, 0 if none

	items   []item
	names   map[string]int    // folded element name → line
	canon   map[string]string // folded node name → spelling of first use
	nodes   map[string]*nodeInfo
	order   []string        // non-ground nodes, first use first
	tainted map[string]bool // folded names of fields on broken element lines
	io      *[2]token       // the .io line's nodes
	ioLine  int
	ioBad   bool // a .io line did not parse
	nElems  int  // element lines seen, broken ones included
}

func (o Options) parse(text, name string) (*Netlist, error) {
	p := &parser{
		probs:   problems{file: name},
		names:   map[string]int{},
		canon:   map[string]string{},
		nodes:   map[string]*nodeInfo{},
		tainted: map[string]bool{},
	}
	p.split(strings.TrimPrefix(text, "\ufeff"))
	skipping := false // inside .control … .endc
	for _, l := range p.lines {
		first := l.toks[0].text
		switch {
		case skipping:
			skipping = !strings.EqualFold(first, ".endc")
		case first[0] == '.':
			skipping = p.directive(l)
		default:
			p.element(l)
		}
	}
	n := &Netlist{Name: name, Title: p.title}
	p.check(o, n)
	if err := p.probs.err(); err != nil {
		return nil, err
	}
	n.Elements = make([]Element, len(p.items))
	for i := range p.items {
		n.Elements[i] = p.items[i].el
	}
	return n, nil
}

// split cuts the text into logical lines: comments and blank lines are
// dropped (the first comment with text becomes the title), continuation
// lines are joined to the line before, and nothing after .end is read.
func (p *parser) split(text string) {
	for row := 1; ; row++ {
		line, rest, more := strings.Cut(text, "\n")
		text = rest
		line = strings.TrimSuffix(line, "\r")
		lead := strings.TrimLeftFunc(line, unicode.IsSpace)
		if strings.HasPrefix(lead, "*") {
			if p.title == "" {
				p.title = strings.TrimSpace(strings.TrimLeft(lead, "*"))
			}
		} else {
			content := line
			if i := strings.IndexByte(line, ';'); i >= 0 {
				content = line[:i]
			}
			toks := fields(content, row, nil)
			switch {
			case len(toks) == 0:
			case toks[0].text[0] == '+':
				plus := token{text: "+", line: row, col: toks[0].col}
				if toks[0].text == "+" {
					toks = toks[1:]
				} else {
					toks[0].text, toks[0].col = toks[0].text[1:], toks[0].col+1
				}
				if len(p.lines) == 0 {
					p.probs.add(plus, "continuation line ('+') with no line before it to continue",
						"a '+' at the start of a line continues the element above; remove the '+' or join the line to an element", nil)
				} else {
					last := &p.lines[len(p.lines)-1]
					last.toks = append(last.toks, toks...)
				}
			case strings.EqualFold(toks[0].text, ".end"):
				return
			default:
				if p.firstRow == 0 {
					p.firstRow = row
				}
				p.lines = append(p.lines, logical{toks: toks, line: row})
			}
		}
		if !more {
			return
		}
	}
}

// fields splits s at white space (unicode.IsSpace) and appends the fields
// with their 1-based line and column (in runes) to dst.
func fields(s string, row int, dst []token) []token {
	start, startCol, col := -1, 0, 1
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		if unicode.IsSpace(r) {
			if start >= 0 {
				dst = append(dst, token{s[start:i], row, startCol})
				start = -1
			}
		} else if start < 0 {
			start, startCol = i, col
		}
		i += size
		col++
	}
	if start >= 0 {
		dst = append(dst, token{s[start:], row, startCol})
	}
	return dst
}

// fold returns the key under which names that differ only in case
// compare equal.
func fold(s string) string {
	for i := 0; i < len(s); i++ {
		if c := s[i]; c >= utf8.RuneSelf || ('A' <= c && c <= 'Z') {
			return strings.ToLower(strings.ToUpper(s))
		}
	}
	return s
}

// isGround reports whether a node name is ground: "0" or "gnd" in any
// case.
func isGround(s string) bool { return s == Ground || strings.EqualFold(s, "gnd") }

// directive handles a line starting with '.'; it reports whether a
// .control block starts, whose lines are skipped up to .endc.
func (p *parser) directive(l logical) bool {
	d := l.toks[0]
	switch strings.ToLower(d.text) {
	case ".io":
		args := l.toks[1:]
		switch {
		case p.io != nil:
			p.ioBad = true
			p.probs.addf(d, "keep one .io line", "second .io line; the first is at line %d", p.ioLine)
		case len(args) < 2:
			p.ioBad = true
			p.probs.addf(l.toks[len(l.toks)-1].end(), `write ".io IN OUT" with the input node first, e.g. ".io in out"`,
				".io needs two nodes, the input and the output; found %d", len(args))
		case len(args) > 2:
			p.ioBad = true
			p.probs.addf(args[2], `write ".io IN OUT" with the input node first; start a comment with ';'`,
				".io takes two nodes, the input and the output; found %d", len(args))
		default:
			p.io, p.ioLine = &[2]token{args[0], args[1]}, l.line
			for _, a := range args {
				if !isGround(a.text) {
					p.canonical(a.text)
				}
			}
		}
	case ".control":
		p.probs.addf(d, "remove the .control … .endc block; tonetrace chooses the frequencies itself",
			"SPICE control block %q is not part of a netlist", d.text)
		return true
	default:
		p.probs.addf(d, "tonetrace knows .io (input and output nodes) and .end; remove SPICE analysis, model and option lines",
			"unknown directive %q", d.text)
	}
	return false
}

// canonical returns the spelling of a node's first use, registering s as
// that spelling when the node is new.
func (p *parser) canonical(s string) string {
	k := fold(s)
	if c, ok := p.canon[k]; ok {
		return c
	}
	p.canon[k] = s
	return s
}

// kindOf maps an element letter to its kind.
func kindOf(r rune) (Kind, bool) {
	switch unicode.ToUpper(r) {
	case 'R':
		return Resistor, true
	case 'C':
		return Capacitor, true
	case 'L':
		return Inductor, true
	case 'E':
		return VCVS, true
	case 'U':
		return OpAmp, true
	}
	return 0, false
}

// shape describes an element kind's line.
type shape struct {
	nodes    int
	what     string // "a resistor"
	terms    string // terminal names
	quantity string // "resistance", or "" for no value
	accepted string // the value forms, for hints
	example  string
}

var shapes = [...]shape{
	Resistor: {2, "a resistor", "two nodes", "resistance",
		`a resistance in ohms without spaces, e.g. "470", "4.7k", "4k7", "R47", "1meg" (or "1M"), "4.7kΩ" or "100ohm"`, "R1 in out 10k"},
	Capacitor: {2, "a capacitor", "two nodes", "capacitance",
		`a capacitance in farads without spaces, e.g. "15n", "15nF", "2n2", "100p", "4.7u", "4µ7" or "1e-9"`, "C1 out 0 15n"},
	Inductor: {2, "an inductor", "two nodes", "inductance",
		`an inductance in henries without spaces, e.g. "10m", "10mH", "4m7", "2u2" or "100nH"`, "L1 a b 10m"},
	VCVS: {4, "a voltage-controlled voltage source", "four nodes (out+ out− in+ in−)", "gain",
		`a voltage gain as a plain ratio, e.g. "2", "-1", "0.5", "1meg" or "1e6"`, "E1 out 0 a b 2"},
	OpAmp: {3, "an ideal op-amp", "three nodes (output, non-inverting input, inverting input)", "", "", "U1 out inp inn"},
}

const knownLetters = "R resistor, C capacitor, L inductor, E voltage-controlled voltage source, U ideal op-amp"

// element handles an element line.
func (p *parser) element(l logical) {
	p.nElems++
	nameTok := l.toks[0]
	name := nameTok.text
	r, _ := utf8.DecodeRuneInString(name)
	kind, ok := kindOf(r)
	if !ok {
		p.taint(l.toks[1:])
		p.probs.add(nameTok, fmt.Sprintf("unknown element %q: the first letter names the kind; known: %s", name, knownLetters),
			p.letterHint(unicode.ToUpper(r), l.line), nil)
		return
	}
	key := fold(name)
	if first, dup := p.names[key]; dup {
		p.probs.addf(nameTok, "give each element its own name; names compare without regard to case",
			"duplicate element name %q; it is already used at line %d", name, first)
	} else {
		p.names[key] = l.line
	}

	sh := shapes[kind]
	args := l.toks[1:]
	want := sh.nodes
	if sh.quantity != "" {
		want++
	}
	if len(args) != want {
		p.taint(args)
		p.fieldCount(l, kind, args)
		return
	}

	it := item{el: Element{Name: name, Kind: kind, Line: l.line}, name: nameTok, nodes: args[:sh.nodes]}
	it.el.Nodes = make([]string, sh.nodes)
	for i, t := range it.nodes {
		if isGround(t.text) {
			it.el.Nodes[i] = Ground
		} else {
			it.el.Nodes[i] = p.canonical(t.text)
		}
	}
	if sh.quantity != "" {
		it.value = args[sh.nodes]
		it.el.Value = p.value(kind, name, it.value)
	}
	p.terminals(it)
	p.items = append(p.items, it)
	p.use(len(p.items) - 1)
}

// taint marks the fields of a broken line: problems about their nodes
// would only repeat the line's own problem.
func (p *parser) taint(args []token) {
	for _, a := range args {
		p.tainted[fold(a.text)] = true
	}
}

// letterHint explains a letter tonetrace does not know.
func (p *parser) letterHint(r rune, line int) string {
	var h string
	switch r {
	case 'V', 'I':
		h = "the fixture drives the input node itself; remove the source and name its node with \".io IN OUT\""
	case 'X':
		h = "subcircuits are not supported; write their elements out, using U for an ideal op-amp"
	case 'G', 'F', 'H':
		h = "of the controlled sources only E (voltage-controlled voltage source) is supported"
	case 'D', 'Q', 'M', 'J':
		h = "only linear elements are supported; model the device's small-signal behaviour with R, C, L and E"
	case 'K':
		h = "coupled inductors are not supported"
	default:
		h = "start the line with one of the letters R, C, L, E or U, or with '*' for a comment"
	}
	if line == p.firstRow {
		h += "; if this is a SPICE title line, start it with '*'"
	}
	return h
}

// fieldCount reports an element line with the wrong number of fields.
func (p *parser) fieldCount(l logical, kind Kind, args []token) {
	sh := shapes[kind]
	name := l.toks[0].text
	form := fmt.Sprintf("%s takes %s", sh.what, sh.terms)
	if sh.quantity != "" {
		form += " and a " + sh.quantity
	} else {
		form += " and no value"
	}
	hint := fmt.Sprintf("write e.g. %q", sh.example)
	if l.line == p.firstRow {
		hint += "; if this is a SPICE title line, start it with '*'"
	}
	nn, hasValue := sh.nodes, sh.quantity != ""
	switch {
	case hasValue && len(args) == nn:
		// One field short: either a node or the value is missing.
		last := args[len(args)-1]
		if looksLikeValue(kind, last.text) {
			p.probs.addf(last.end(), hint, "%s has %s and a value; %s", name, count(nn-1, "node"), form)
		} else {
			p.probs.addf(last.end(), hint, "%s: missing %s; %s", name, sh.quantity, form)
		}
		return
	case len(args) < nn:
		p.probs.addf(l.toks[len(l.toks)-1].end(), hint, "%s has %s; %s", name, count(len(args), "node"), form)
		return
	}
	extra := args[nn]
	if hasValue {
		extra = args[nn+1]
		switch {
		case looksLikeUnit(extra.text):
			hint = fmt.Sprintf("write the value and its unit without a space, e.g. %q", args[nn].text+extra.text)
		case strings.Contains(extra.text, "="):
			hint = "SPICE parameters such as tc= or m= are not supported; remove them"
		default:
			hint += "; start a comment with ';'"
		}
	} else {
		hint += "; for an amplifier with a finite gain use E"
	}
	p.probs.addf(extra, hint, "%s has too many fields; %s", name, form)
}

// looksLikeValue reports whether s reads as a value of the kind and is not
// a plain integer (which could just as well be a node name).
func looksLikeValue(kind Kind, s string) bool {
	allDigits := true
	for i := 0; i < len(s); i++ {
		allDigits = allDigits && isDigit(s[i])
	}
	if allDigits {
		return false
	}
	_, err := parseValue(kind, s)
	return err == nil
}

// looksLikeUnit reports whether s is a unit or prefix written apart from
// its number, as in "4.7 kΩ".
func looksLikeUnit(s string) bool {
	for _, u := range []string{"Ω", "Ω", "ohm", "ohms", "F", "H", "k", "kΩ", "kohm", "meg", "M", "MΩ",
		"p", "pF", "n", "nF", "nH", "u", "uF", "uH", "µ", "µF", "µH", "m", "mF", "mH"} {
		if s == u || strings.EqualFold(s, u) && len(s) > 1 {
			return true
		}
	}
	return false
}

// count writes "1 node", "3 nodes".
func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}

func isDigit(c byte) bool { return '0' <= c && c <= '9' }

// splitNumber splits a value into its number ("4.7", "-1e3", "") and the
// rest ("k", "meg", "nF").
func splitNumber(s string) (num, suffix string) {
	s = strings.Replace(s, "\u2212", "-", 1)
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	m := i
	for i < len(s) && (isDigit(s[i]) || s[i] == '.') {
		i++
	}
	if i == m || (i == m+1 && s[m] == '.') {
		return "", s
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		k := j
		for k < len(s) && isDigit(s[k]) {
			k++
		}
		if k > j {
			i = k
		}
	}
	return s[:i], s[i:]
}

// valueError is a value that tonetrace could read but will not, because
// SPICE reads the same text differently.
type valueError struct{ msg, hint string }

func (e *valueError) Error() string { return e.msg }

// parseValue reads a value for the kind; see the package documentation
// for the forms. Errors are *config.ParseError or *valueError.
func parseValue(kind Kind, text string) (float64, error) {
	num, suf := splitNumber(text)
	switch kind {
	case Resistor:
		if num != "" && (suf == "m" || len(suf) >= 2 && suf[0] == 'm' && isDigit(suf[1])) {
			ve := &valueError{
				msg:  fmt.Sprintf("%q is ambiguous: m means milli (SPICE reads M as milli too), but on a resistor it is often meant as mega", text),
				hint: fmt.Sprintf("write %q or %q for megohms, or %q for milliohms", num+"meg", num+"M", num+"mΩ"),
			}
			if suf != "m" { // an RKM code such as 4m7
				ve.hint = fmt.Sprintf("write %q for megohms, or %q for milliohms", num+"M"+suf[1:], text+"Ω")
			}
			return 0, ve
		}
		if num != "" && len(suf) >= 3 && strings.EqualFold(suf[:3], "meg") && isOhm(suf[3:]) {
			text = num + "M" + suf[3:]
		}
		return config.ParseResistance(text)
	case Capacitor:
		if num != "" && strings.EqualFold(suf, "f") {
			return 0, &valueError{
				msg:  fmt.Sprintf("%q is ambiguous: a bare F means farads here but femtofarads (10^-15) in SPICE", text),
				hint: fmt.Sprintf("give a prefix (%q for picofarads, %q for microfarads) or write %q for femtofarads", num+"p", num+"u", num+"e-15"),
			}
		}
		return config.ParseCapacitance(text)
	case Inductor:
		return config.ParseInductance(text)
	case VCVS:
		return config.ParseGain(text)
	}
	return 0, nil
}

func isOhm(u string) bool {
	switch strings.ToLower(u) {
	case "", "ω", "Ω", "ohm", "ohms", "r":
		return true
	}
	return false
}

// value parses an element's value and reports what is wrong with it;
// a value that does not parse is returned as 0.
func (p *parser) value(kind Kind, name string, t token) float64 {
	sh := shapes[kind]
	v, err := parseValue(kind, t.text)
	if err != nil {
		var ve *valueError
		var pe *config.ParseError
		switch {
		case errors.As(err, &ve):
			p.probs.add(t, name+": "+ve.msg, ve.hint, nil)
		case errors.As(err, &pe):
			hint := "write " + sh.accepted
			switch {
			case kind == Capacitor && strings.ContainsAny(t.text, "M"):
				hint = `SPICE reads M as milli: write "1m" or "1000u" for a millifarad; or ` + hint
			case strings.HasPrefix(t.text, "{") || strings.Contains(t.text, "="):
				hint = "parameters and expressions are not supported; " + hint
			}
			p.probs.add(t, fmt.Sprintf("%s: bad %s %q: %s", name, sh.quantity, t.text, pe.Reason), hint, err)
		default:
			p.probs.add(t, fmt.Sprintf("%s: bad %s %q: %v", name, sh.quantity, t.text, err), "write "+sh.accepted, err)
		}
		return 0
	}
	if kind != VCVS && v <= 0 {
		var hint string
		switch {
		case v < 0:
			hint = "remove the minus sign; a negative " + sh.quantity + " is not a physical part"
		case kind == Capacitor:
			hint = "a zero capacitance is an open circuit: remove the capacitor"
		default:
			hint = fmt.Sprintf("a zero %s is a short circuit: give both ends the same node name and remove %s", sh.quantity, name)
		}
		p.probs.addf(t, hint, "%s: the %s must be positive, not %q", name, sh.quantity, t.text)
	}
	return v
}

// terminals reports elements whose terminals make no sense together.
func (p *parser) terminals(it item) {
	e := &it.el
	n := e.Nodes
	switch e.Kind {
	case Resistor, Capacitor, Inductor:
		if n[0] == n[1] {
			p.probs.addf(it.nodes[1], "connect it between two different nodes, or remove it",
				"%s has both ends on node %q, so it does nothing", e.Name, n[0])
		}
	case VCVS:
		if n[0] == n[1] {
			p.probs.addf(it.nodes[1], "connect out− to another node (usually 0)",
				"%s has both output terminals on node %q, a short circuit across an ideal source", e.Name, n[0])
		}
		if n[2] == n[3] {
			p.probs.addf(it.nodes[3], "connect in− to another node (usually 0), or remove "+e.Name,
				"%s senses node %q against itself, so its output is always zero", e.Name, n[2])
		}
	case OpAmp:
		if n[0] == Ground {
			p.probs.addf(it.nodes[0], "give the output its own node; it is referred to ground internally",
				"%s has its output on ground, a short circuit across an ideal amplifier", e.Name)
		}
		if n[1] == n[2] {
			p.probs.addf(it.nodes[2], "connect the inverting input to the feedback network (to the output for a follower)",
				"%s has both inputs on node %q, which leaves its output undetermined", e.Name, n[1])
		}
	}
}

// use records the terminals of item i on its nodes.
func (p *parser) use(i int) {
	it := &p.items[i]
	for j, nd := range it.el.Nodes {
		if nd == Ground {
			continue
		}
		info := p.nodes[nd]
		if info == nil {
			info = &nodeInfo{first: it.nodes[j]}
			p.nodes[nd] = info
			p.order = append(p.order, nd)
		}
		info.count++
		info.elem = i
	}
}
