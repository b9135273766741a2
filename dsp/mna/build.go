package mna

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"

	"tonetrace/dsp/netlist"
)

// ErrSingular is wrapped by the errors of Build, the Solver and Network
// when the equations do not determine the response: a floating node, an
// amplifier without feedback, two voltage sources in parallel, or a node
// with no path to ground at the frequency asked (at 0 Hz capacitors are
// open). Test with errors.Is.
var ErrSingular = errors.New("mna: singular system")

// Default node names used when a Netlist leaves In or Out empty.
const (
	defaultIn  = "in"
	defaultOut = "out"
)

// Frequencies in Hz at which Build checks that the system can be solved.
// A system that is singular at both is singular at every frequency (its
// determinant, a polynomial in jω, vanishes identically); two unrelated
// frequencies keep an accidental resonance from failing the check.
var checkFreqs = [2]float64{1234.5678, 97531.0123}

// layout is where each node and branch sits in the vector of unknowns.
type layout struct {
	index map[string]int // folded node name → index; ground absent
	names []string       // node names as first written, by index
	slots []slot         // one per element, in element order
	in    int
	out   int
	src   int // index of the source current, or −1 (Norton source)
	n     int // number of unknowns
	fx    Fixture
}

// slot holds an element's node indices (−1 for ground) and its branch
// current index (−1 when it has none).
type slot struct {
	node   [4]int
	branch int
}

// Validate reports whether the fixture's values are usable, naming the
// first bad field and what it allows.
func (fx Fixture) Validate() error {
	if v := fx.SourceOhms; math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
		return fmt.Errorf("mna: fixture SourceOhms is %v; give the driving output's resistance in Ω, finite and 0 or more (0 for an ideal source)", v)
	}
	if v := fx.LoadOhms; math.IsNaN(v) || v < 0 {
		return fmt.Errorf("mna: fixture LoadOhms is %v; give the measuring input's resistance in Ω, more than 0 (0 or +Inf for no load)", v)
	}
	if v := fx.LoadFarads; math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
		return fmt.Errorf("mna: fixture LoadFarads is %v; give the measuring input's capacitance in F, finite and 0 or more (0 for none)", v)
	}
	return nil
}

// loaded reports whether the fixture puts a resistance across the output.
func (fx Fixture) loaded() bool { return fx.LoadOhms > 0 && !math.IsInf(fx.LoadOhms, 1) }

// Build stamps the MNA system of netlist n driven and loaded by fixture
// fx; see the package documentation for the stamps and the order of the
// unknowns. An empty n.In or n.Out means "in" or "out". Node names are
// compared without regard to case, and "0" and "gnd" are ground.
//
// Build returns an error, naming the element (and its file and line when
// known) or the fixture field, when a value is out of range (resistance
// not above 0, negative capacitance or inductance, non-finite values), an
// element has the wrong number of nodes or both ends on one node, two
// elements share a name, the input or output node is ground or not in
// the netlist, or the system is singular (wrapping ErrSingular): a node
// with no path to ground, an amplifier whose output does not reach its
// inputs, or equations that do not determine some unknown at any
// frequency.
//
// The ideal amplifier is a nullor: it forces its inputs to the same
// voltage whichever way round they are wired, so Build cannot tell
// negative from positive feedback, and it does not judge stability.
func Build(n *netlist.Netlist, fx Fixture) (*Descriptor, error) {
	lay, err := plan(n, fx)
	if err != nil {
		return nil, err
	}
	d := lay.alloc(n)
	lay.stamp(d, n.Elements)
	if err := lay.check(d, n.Elements, NewSolver(d)); err != nil {
		return nil, err
	}
	return d, nil
}

// isGround reports whether the folded node name is ground.
func isGround(folded string) bool { return folded == netlist.Ground || folded == "gnd" }

// nodeCount returns the number of nodes an element of kind k takes, or 0
// for an unknown kind.
func nodeCount(k netlist.Kind) int {
	switch k {
	case netlist.Resistor, netlist.Capacitor, netlist.Inductor:
		return 2
	case netlist.VCVS:
		return 4
	case netlist.OpAmp:
		return 3
	}
	return 0
}

// where names element e for messages: "file.cir:3: R1", "line 3: R1" or
// "R1".
func where(n *netlist.Netlist, i int) string {
	e := &n.Elements[i]
	name := e.Name
	if name == "" {
		name = "element " + strconv.Itoa(i+1) + " (" + e.Kind.String() + ")"
	}
	switch {
	case e.Line > 0 && n.Name != "":
		return n.Name + ":" + strconv.Itoa(e.Line) + ": " + name
	case e.Line > 0:
		return "line " + strconv.Itoa(e.Line) + ": " + name
	}
	return name
}

// checkValue reports whether v is a usable value for an element of kind
// k, saying what is allowed.
func checkValue(k netlist.Kind, v float64) error {
	finite := !math.IsNaN(v) && !math.IsInf(v, 0)
	switch k {
	case netlist.Resistor:
		if !finite || v <= 0 {
			return fmt.Errorf("resistance is %v Ω; it must be finite and above 0 (join the nodes for a short, remove the resistor for an open)", v)
		}
	case netlist.Capacitor:
		if !finite || v < 0 {
			return fmt.Errorf("capacitance is %v F; it must be finite and 0 or more", v)
		}
	case netlist.Inductor:
		if !finite || v < 0 {
			return fmt.Errorf("inductance is %v H; it must be finite and 0 or more", v)
		}
	case netlist.VCVS:
		if !finite {
			return fmt.Errorf("gain is %v; it must be finite", v)
		}
	}
	return nil
}

// plan checks the netlist and the fixture and places the unknowns.
func plan(n *netlist.Netlist, fx Fixture) (*layout, error) {
	if n == nil {
		return nil, errors.New("mna: Build of a nil netlist")
	}
	if err := fx.Validate(); err != nil {
		return nil, err
	}
	if len(n.Elements) == 0 {
		return nil, fmt.Errorf("mna: netlist %s has no elements; add at least one element between the input and output nodes", label(n))
	}
	l := &layout{index: make(map[string]int), slots: make([]slot, len(n.Elements)), fx: fx}
	names := make(map[string]int, len(n.Elements))
	for i := range n.Elements {
		e := &n.Elements[i]
		want := nodeCount(e.Kind)
		if want == 0 {
			return nil, fmt.Errorf("mna: %s: unknown element kind %d; use R, C, L, E or U", where(n, i), int(e.Kind))
		}
		if len(e.Nodes) != want {
			return nil, fmt.Errorf("mna: %s: %s takes %d nodes, got %d", where(n, i), e.Kind, want, len(e.Nodes))
		}
		if e.Name != "" {
			key := strings.ToLower(e.Name)
			if j, dup := names[key]; dup {
				return nil, fmt.Errorf("mna: %s: the name is already used by %s; give every element its own name", where(n, i), where(n, j))
			}
			names[key] = i
		}
		if err := checkValue(e.Kind, e.Value); err != nil {
			return nil, fmt.Errorf("mna: %s: %w", where(n, i), err)
		}
		s := &l.slots[i]
		s.node = [4]int{-1, -1, -1, -1}
		s.branch = -1
		for k, name := range e.Nodes {
			if name == "" {
				return nil, fmt.Errorf("mna: %s: node %d has no name", where(n, i), k+1)
			}
			s.node[k] = l.node(name)
		}
		switch e.Kind {
		case netlist.Resistor, netlist.Capacitor, netlist.Inductor:
			if s.node[0] == s.node[1] {
				return nil, fmt.Errorf("mna: %s: both ends are on node %s; connect it between two different nodes", where(n, i), e.Nodes[0])
			}
		case netlist.VCVS:
			if s.node[0] == s.node[1] {
				return nil, fmt.Errorf("mna: %s: both output nodes are %s, which shorts the source; connect its output between two different nodes", where(n, i), e.Nodes[0])
			}
		case netlist.OpAmp:
			if s.node[1] == s.node[2] {
				return nil, fmt.Errorf("mna: %s: both inputs are on node %s; an amplifier needs its + and − inputs on different nodes", where(n, i), e.Nodes[1])
			}
			if s.node[0] < 0 {
				return nil, fmt.Errorf("mna: %s: the output is ground, which shorts the amplifier; give it its own output node", where(n, i))
			}
		}
	}
	var err error
	if l.in, err = l.port(n, n.In, defaultIn, "input"); err != nil {
		return nil, err
	}
	if l.out, err = l.port(n, n.Out, defaultOut, "output"); err != nil {
		return nil, err
	}
	if err := l.floating(n); err != nil {
		return nil, err
	}
	// Branch currents after the node voltages, in element order.
	l.n = len(l.names)
	for i := range n.Elements {
		switch n.Elements[i].Kind {
		case netlist.Inductor, netlist.VCVS, netlist.OpAmp:
			l.slots[i].branch = l.n
			l.n++
		}
	}
	l.src = -1
	if fx.SourceOhms == 0 {
		l.src = l.n
		l.n++
	}
	return l, nil
}

// label names a netlist for messages.
func label(n *netlist.Netlist) string {
	switch {
	case n.Name != "":
		return strconv.Quote(n.Name)
	case n.Title != "":
		return strconv.Quote(n.Title)
	}
	return "(unnamed)"
}

// node returns the index of the named node, adding it when new; −1 for
// ground.
func (l *layout) node(name string) int {
	key := strings.ToLower(name)
	if isGround(key) {
		return -1
	}
	if i, ok := l.index[key]; ok {
		return i
	}
	l.index[key] = len(l.names)
	l.names = append(l.names, name)
	return len(l.names) - 1
}

// port looks up the input or output node.
func (l *layout) port(n *netlist.Netlist, name, def, what string) (int, error) {
	if name == "" {
		name = def
	}
	key := strings.ToLower(name)
	if isGround(key) {
		return 0, fmt.Errorf("mna: the %s node of netlist %s is ground; name a node of the network as its %s", what, label(n), what)
	}
	i, ok := l.index[key]
	if !ok {
		return 0, fmt.Errorf("mna: the %s node %q is not in netlist %s (its nodes are %s); name it with a .io line or connect an element to it", what, name, label(n), strings.Join(l.names, ", "))
	}
	return i, nil
}

// floating reports nodes that nothing connects to ground: no chain of
// resistors, capacitors, inductors, controlled-source outputs, amplifier
// outputs, the driving source or the load.
func (l *layout) floating(n *netlist.Netlist) error {
	nn := len(l.names)
	parent := make([]int, nn+1) // nn is ground
	for i := range parent {
		parent[i] = i
	}
	find := func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	join := func(a, b int) {
		if a < 0 {
			a = nn
		}
		if b < 0 {
			b = nn
		}
		parent[find(a)] = find(b)
	}
	for i, e := range n.Elements {
		s := l.slots[i]
		switch e.Kind {
		case netlist.Resistor, netlist.Capacitor, netlist.Inductor, netlist.VCVS:
			join(s.node[0], s.node[1])
		case netlist.OpAmp:
			join(s.node[0], -1)
		}
	}
	join(l.in, -1) // the source
	if l.fx.loaded() || l.fx.LoadFarads > 0 {
		join(l.out, -1)
	}
	var float []string
	g := find(nn)
	for i, name := range l.names {
		if find(i) != g {
			float = append(float, name)
		}
	}
	if len(float) == 0 {
		return nil
	}
	noun := "node " + float[0] + " floats"
	if len(float) > 1 {
		noun = "nodes " + strings.Join(float, ", ") + " float"
	}
	return fmt.Errorf("%w: in netlist %s %s: no resistor, capacitor, inductor, source output or amplifier output connects it to ground (amplifier and controlled-source inputs draw no current); connect it or remove what uses it",
		ErrSingular, label(n), noun)
}

// alloc makes the descriptor's storage.
func (l *layout) alloc(n *netlist.Netlist) *Descriptor {
	d := &Descriptor{
		G:        mat.NewDense(l.n, l.n, nil),
		C:        mat.NewDense(l.n, l.n, nil),
		B:        make([]float64, l.n),
		Out:      l.out,
		Unknowns: make([]string, 0, l.n),
		Fixture:  l.fx,
		Name:     n.Name,
	}
	if d.Name == "" {
		d.Name = n.Title
	}
	for _, name := range l.names {
		d.Unknowns = append(d.Unknowns, "V("+name+")")
	}
	for i, e := range n.Elements {
		if l.slots[i].branch >= 0 {
			name := e.Name
			if name == "" {
				name = e.Kind.String() + "#" + strconv.Itoa(i+1)
			}
			d.Unknowns = append(d.Unknowns, "I("+name+")")
		}
	}
	if l.src >= 0 {
		d.Unknowns = append(d.Unknowns, "I(source)")
	}
	return d
}

// stamp writes G, C and B from the element values, overwriting them.
func (l *layout) stamp(d *Descriptor, elems []netlist.Element) {
	d.G.Zero()
	d.C.Zero()
	clear(d.B)
	g, c := d.G.RawMatrix(), d.C.RawMatrix()
	add := func(m blas64.General, i, j int, v float64) {
		if i >= 0 && j >= 0 {
			m.Data[i*m.Stride+j] += v
		}
	}
	admit := func(m blas64.General, a, b int, y float64) {
		add(m, a, a, y)
		add(m, b, b, y)
		add(m, a, b, -y)
		add(m, b, a, -y)
	}
	for i, e := range elems {
		s := l.slots[i]
		a, b, k := s.node[0], s.node[1], s.branch
		switch e.Kind {
		case netlist.Resistor:
			admit(g, a, b, 1/e.Value)
		case netlist.Capacitor:
			admit(c, a, b, e.Value)
		case netlist.Inductor:
			add(g, a, k, 1)
			add(g, b, k, -1)
			add(g, k, a, 1)
			add(g, k, b, -1)
			add(c, k, k, -e.Value)
		case netlist.VCVS:
			add(g, a, k, 1)
			add(g, b, k, -1)
			add(g, k, a, 1)
			add(g, k, b, -1)
			add(g, k, s.node[2], -e.Value)
			add(g, k, s.node[3], e.Value)
		case netlist.OpAmp:
			// Nullor: the output current is free, the input voltage is
			// zero.
			add(g, a, k, 1)
			add(g, k, s.node[1], 1)
			add(g, k, s.node[2], -1)
		}
	}
	if l.src >= 0 {
		add(g, l.in, l.src, 1)
		add(g, l.src, l.in, 1)
		d.B[l.src] = 1
	} else {
		y := 1 / l.fx.SourceOhms
		add(g, l.in, l.in, y)
		d.B[l.in] = y
	}
	if l.fx.loaded() {
		add(g, l.out, l.out, 1/l.fx.LoadOhms)
	}
	add(c, l.out, l.out, l.fx.LoadFarads)
}

// check reports whether the stamped system can be solved: structurally
// (some assignment of equations to unknowns exists) and numerically (at
// one of checkFreqs). s is a solver of d whose buffers it may use.
func (l *layout) check(d *Descriptor, elems []netlist.Element, s *Solver) error {
	if free := l.undetermined(d); len(free) > 0 {
		if amps := l.noFeedback(elems); len(amps) > 0 {
			e := elems[amps[0]]
			return fmt.Errorf("%w: op-amp %s has no feedback: nothing leads from its output %s back to its inputs %s and %s; add a feedback path (a resistor or capacitor from the output to the inverting input)",
				ErrSingular, e.Name, e.Nodes[0], e.Nodes[1], e.Nodes[2])
		}
		names := make([]string, len(free))
		for i, j := range free {
			names[i] = d.Unknowns[j]
		}
		return fmt.Errorf("%w: the circuit's equations do not determine %s at any frequency; look for a node held by two voltage sources or amplifier outputs at once, or an amplifier whose inputs cannot follow its output",
			ErrSingular, strings.Join(names, ", "))
	}
	var first error
	for _, f := range checkFreqs {
		err := s.solve(f)
		if err == nil {
			return nil
		}
		if first == nil {
			first = err
		}
	}
	return fmt.Errorf("mna: the system is singular at every frequency (a loop of controlled sources or amplifiers with a loop gain of exactly 1?): %w", first)
}

// undetermined returns the unknowns left over by a maximum matching of
// equations to unknowns on the nonzero pattern of G + jωC; none when the
// system is structurally nonsingular.
func (l *layout) undetermined(d *Descriptor) []int {
	n := l.n
	g, c := d.G.RawMatrix(), d.C.RawMatrix()
	cols := make([][]int, n) // nonzero columns of each row
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if g.Data[i*g.Stride+j] != 0 || c.Data[i*c.Stride+j] != 0 {
				cols[i] = append(cols[i], j)
			}
		}
	}
	owner := make([]int, n) // row matched to each column, or −1
	for j := range owner {
		owner[j] = -1
	}
	seen := make([]bool, n)
	var augment func(r int) bool
	augment = func(r int) bool {
		for _, j := range cols[r] {
			if seen[j] {
				continue
			}
			seen[j] = true
			if owner[j] < 0 || augment(owner[j]) {
				owner[j] = r
				return true
			}
		}
		return false
	}
	for r := 0; r < n; r++ {
		clear(seen)
		augment(r)
	}
	var free []int
	for j, r := range owner {
		if r < 0 {
			free = append(free, j)
		}
	}
	return free
}

// noFeedback returns the op-amps (element indices) whose output cannot
// influence the voltage across their inputs. Influence spreads from a
// node through resistors, capacitors and inductors to its neighbours,
// except into nodes whose voltage something else holds (ground, the input
// under an ideal source, amplifier and grounded controlled-source
// outputs), and from a controlled source's or another amplifier's inputs
// to its output. It is a diagnosis for messages, not a proof.
func (l *layout) noFeedback(elems []netlist.Element) []int {
	nn := len(l.names)
	passive := make([][]int, nn)
	drives := make([][]int, nn) // directed: control node → output nodes, with the element
	driver := make([][]int, nn)
	held := make([]bool, nn)
	if l.src >= 0 {
		held[l.in] = true
	}
	for i, e := range elems {
		s := l.slots[i]
		switch e.Kind {
		case netlist.Resistor, netlist.Capacitor, netlist.Inductor:
			a, b := s.node[0], s.node[1]
			if a >= 0 && b >= 0 {
				passive[a] = append(passive[a], b)
				passive[b] = append(passive[b], a)
			}
		case netlist.VCVS:
			for _, cn := range s.node[2:4] {
				for _, on := range s.node[0:2] {
					if cn >= 0 && on >= 0 {
						drives[cn] = append(drives[cn], on)
						driver[cn] = append(driver[cn], i)
					}
				}
			}
			if s.node[1] < 0 {
				held[s.node[0]] = true
			} else if s.node[0] < 0 {
				held[s.node[1]] = true
			}
		case netlist.OpAmp:
			held[s.node[0]] = true
			for _, cn := range s.node[1:3] {
				if cn >= 0 {
					drives[cn] = append(drives[cn], s.node[0])
					driver[cn] = append(driver[cn], i)
				}
			}
		}
	}
	var none []int
	live := make([]bool, nn)
	queue := make([]int, 0, nn)
	for k, e := range elems {
		if e.Kind != netlist.OpAmp {
			continue
		}
		s := l.slots[k]
		clear(live)
		start := s.node[0]
		live[start] = true
		queue = append(queue[:0], start)
		for len(queue) > 0 {
			v := queue[0]
			queue = queue[1:]
			for _, w := range passive[v] {
				if !live[w] && !held[w] {
					live[w] = true
					queue = append(queue, w)
				}
			}
			for j, w := range drives[v] {
				if driver[v][j] != k && !live[w] {
					live[w] = true
					queue = append(queue, w)
				}
			}
		}
		p, m := s.node[1], s.node[2]
		if !(p >= 0 && live[p]) && !(m >= 0 && live[m]) {
			none = append(none, k)
		}
	}
	return none
}
