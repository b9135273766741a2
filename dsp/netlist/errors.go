package netlist

import (
	"cmp"
	"errors"
	"fmt"
	"slices"
	"strconv"
	"strings"
)

// Error is one problem found in a netlist: where it is, what is wrong and
// how to fix it. Parse returns one *Error, or several joined with
// [errors.Join]; use [errors.As] to reach them.
type Error struct {
	// File is the name given to Parse (a path for ParseFile), or "" for
	// text given directly.
	File string
	// Line is the 1-based line of the problem, or 0 when it concerns the
	// whole netlist (no elements, an input node given by the caller that
	// is absent).
	Line int
	// Column is the 1-based column of the offending field, counted in
	// characters (a tab counts as one), or 0 when unknown.
	Column int
	// Msg says what is wrong; it is one line.
	Msg string
	// Hint says how to fix it; it is one line, possibly empty.
	Hint string
	// Err is the underlying error, if any: a *config.ParseError for a
	// value that does not parse.
	Err error
}

// Error reads like
// `crossover.cir:7:12: R4: bad resistance "4k7x": unknown unit "x"; hint: …`,
// always on one line. Without a file name the position reads
// "line 7, column 12: "; without any position the message starts with
// "netlist: ".
func (e *Error) Error() string {
	var b strings.Builder
	switch {
	case e.File != "":
		b.WriteString(e.File)
		if e.Line > 0 {
			b.WriteString(":" + strconv.Itoa(e.Line))
			if e.Column > 0 {
				b.WriteString(":" + strconv.Itoa(e.Column))
			}
		}
	case e.Line > 0:
		b.WriteString("line " + strconv.Itoa(e.Line))
		if e.Column > 0 {
			b.WriteString(", column " + strconv.Itoa(e.Column))
		}
	default:
		b.WriteString("netlist")
	}
	b.WriteString(": ")
	b.WriteString(e.Msg)
	if e.Hint != "" {
		b.WriteString("; hint: ")
		b.WriteString(e.Hint)
	}
	return b.String()
}

// Unwrap returns the underlying error, or nil.
func (e *Error) Unwrap() error { return e.Err }

// MaxProblems is the number of problems Parse reports at most; a further
// *Error then says how many more there were.
const MaxProblems = 20

// ErrNoElement is wrapped by the error [Netlist.SetValue] returns for a
// name that is not in the netlist.
var ErrNoElement = errors.New("netlist: no such element")

// problems collects the problems of one parse, keeping the first
// MaxProblems and counting the rest.
type problems struct {
	file string
	list []*Error
	more int
}

// full reports whether further problems are only counted; callers skip
// building expensive hints then.
func (p *problems) full() bool { return len(p.list) >= MaxProblems }

func (p *problems) add(t token, msg, hint string, err error) {
	if p.full() {
		p.more++
		return
	}
	p.list = append(p.list, &Error{File: p.file, Line: t.line, Column: t.col, Msg: msg, Hint: hint, Err: err})
}

// addf is add with a formatted message.
func (p *problems) addf(t token, hint string, format string, args ...any) {
	if p.full() {
		p.more++
		return
	}
	p.add(t, fmt.Sprintf(format, args...), hint, nil)
}

// err returns nil, the single problem, or all problems sorted by position
// and joined.
func (p *problems) err() error {
	if len(p.list) == 0 {
		return nil
	}
	slices.SortStableFunc(p.list, func(a, b *Error) int {
		return cmp.Or(cmp.Compare(a.Line, b.Line), cmp.Compare(a.Column, b.Column))
	})
	errs := make([]error, 0, len(p.list)+1)
	for _, e := range p.list {
		errs = append(errs, e)
	}
	if p.more > 0 {
		errs = append(errs, &Error{File: p.file,
			Msg:  fmt.Sprintf("%d more problems not shown", p.more),
			Hint: "fix the ones above and read the netlist again"})
	}
	if len(errs) == 1 {
		return errs[0]
	}
	return errors.Join(errs...)
}
