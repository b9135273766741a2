package netlist

import (
	"fmt"
	"strings"
)

// check runs the whole-netlist checks after all lines are read and sets
// n.In and n.Out.
func (p *parser) check(o Options, n *Netlist) {
	if p.nElems == 0 {
		p.probs.add(token{}, "the netlist has no elements",
			`add one element per line, e.g. "R1 in out 10k" and "C1 out 0 15n"`, nil)
		return
	}
	p.drivers()
	if p.ioBad {
		return // the nodes' roles are unknown; the .io problem says why
	}
	in, out, ok := p.resolveIO(o)
	n.In, n.Out = in, out
	if !ok {
		return // floating-node problems would only repeat the missing node
	}
	reported := p.floating(in, out)
	p.groundPaths(in, out, reported)
}

// drivers reports nodes driven by two ideal outputs: two op-amp outputs,
// or an op-amp output and an E output whose other terminal is ground.
func (p *parser) drivers() {
	driven := map[string]int{}
	for i := range p.items {
		it := &p.items[i]
		nd, at := "", token{}
		switch n := it.el.Nodes; it.el.Kind {
		case OpAmp:
			nd, at = n[0], it.nodes[0]
		case VCVS:
			switch {
			case n[1] == Ground:
				nd, at = n[0], it.nodes[0]
			case n[0] == Ground:
				nd, at = n[1], it.nodes[1]
			}
		}
		if nd == "" || nd == Ground {
			continue
		}
		if j, ok := driven[nd]; ok {
			first := p.items[j].el
			p.probs.addf(at, "two ideal outputs on one node fight each other: give each its own node and join them through resistors",
				"%s drives node %q, which %s (line %d) already drives", it.el.Name, nd, first.Name, first.Line)
			continue
		}
		driven[nd] = i
	}
}

// ioEnd is the input or the output node as requested.
type ioEnd struct {
	role string // "input" or "output"
	name string
	from string // how it was named, for messages
	at   token  // position of the name, zero when not in the file
}

// resolveIO finds the input and output nodes, reporting those that are
// ground, absent or the same; ok is false when either is unusable.
func (p *parser) resolveIO(o Options) (in, out string, ok bool) {
	ends := [2]ioEnd{
		{"input", DefaultIn, "the default input node", token{}},
		{"output", DefaultOut, "the default output node", token{}},
	}
	if p.io != nil {
		ends[0] = ioEnd{"input", p.io[0].text, "input node", p.io[0]}
		ends[1] = ioEnd{"output", p.io[1].text, "output node", p.io[1]}
	}
	if o.In != "" {
		ends[0] = ioEnd{"input", o.In, "input node (given by the caller)", token{}}
	}
	if o.Out != "" {
		ends[1] = ioEnd{"output", o.Out, "output node (given by the caller)", token{}}
	}
	ok = true
	var res [2]string
	for i, e := range ends {
		if isGround(e.name) {
			hint := "name the node the fixture's output drives"
			if i == 1 {
				hint = "name the node the fixture's input measures"
			}
			p.probs.addf(e.at, hint, "the %s node cannot be ground (%q)", e.role, e.name)
			ok = false
			continue
		}
		c, known := p.canon[fold(e.name)]
		if !known || p.nodes[c] == nil {
			ok = false
			if p.tainted[fold(e.name)] {
				continue // a broken line mentions it; that line's problem says enough
			}
			hint := "check the spelling"
			if e.from == "the default "+e.role+" node" {
				hint = fmt.Sprintf(`name the input and output nodes with a line ".io IN OUT", or call the %s node %q`, e.role, e.name)
			}
			if !p.probs.full() {
				if s := p.suggest(e.name, ""); s != "" {
					hint = fmt.Sprintf("did you mean %q? ", s) + hint
				}
				hint += "; the nodes are " + p.nodeList()
			}
			p.probs.addf(e.at, hint, "%s %q does not appear in any element", e.from, e.name)
			continue
		}
		res[i] = c
	}
	if ok && res[0] == res[1] {
		p.probs.addf(ends[1].at, "the output must be a different node from the input; name the node the fixture's input measures",
			"the input and output are the same node %q", res[0])
		ok = false
	}
	return res[0], res[1], ok
}

// floating reports nodes with a single element terminal, other than the
// input (driven by the fixture's source) and the output (loaded by the
// fixture's input). It returns the nodes it reported.
func (p *parser) floating(in, out string) map[string]bool {
	reported := map[string]bool{}
	for _, nd := range p.order {
		info := p.nodes[nd]
		if info.count != 1 || nd == in || nd == out || p.tainted[fold(nd)] {
			continue
		}
		reported[nd] = true
		if p.probs.full() {
			p.probs.more++
			continue
		}
		el := &p.items[info.elem].el
		hint := `connect it to another element, or name it with ".io IN OUT" if it is the input or output`
		if s := p.suggest(nd, nd); s != "" {
			hint = fmt.Sprintf("did you mean %q? ", s) + hint
		}
		sensing := false
		for j, name := range el.Nodes {
			if name == nd {
				sensing = el.Kind == VCVS && j >= 2 || el.Kind == OpAmp && j >= 1
			}
		}
		if sensing {
			p.probs.addf(info.first, hint, "node %q is floating: only an input of %s touches it, and inputs draw no current", nd, el.Name)
		} else {
			p.probs.addf(info.first, hint, "node %q is floating: only %s connects to it", nd, el.Name)
		}
	}
	return reported
}

// groundPaths reports groups of nodes that no element joins to ground.
// R, C and L join their two nodes (a capacitor counts: the network is
// solved at frequencies above zero); an E output joins out+ and out−; an
// op-amp output is joined to ground (its output is referred to ground);
// the input node is joined to ground through the fixture's source and the
// output node through its load. Amplifier and E inputs draw no current and
// join nothing. Groups made only of nodes already reported as floating
// are not reported again.
func (p *parser) groundPaths(in, out string, reported map[string]bool) {
	idx := make(map[string]int, len(p.order))
	for i, nd := range p.order {
		idx[nd] = i
	}
	ground := len(p.order)
	parent := make([]int, ground+1)
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
	id := func(nd string) int {
		if nd == Ground {
			return ground
		}
		return idx[nd]
	}
	union := func(a, b string) { parent[find(id(a))] = find(id(b)) }
	for i := range p.items {
		switch n := p.items[i].el.Nodes; p.items[i].el.Kind {
		case Resistor, Capacitor, Inductor, VCVS:
			union(n[0], n[1])
		case OpAmp:
			union(n[0], Ground)
		}
	}
	union(in, Ground)
	union(out, Ground)

	groups := map[int][]string{}
	var roots []int
	for i, nd := range p.order {
		r := find(i)
		if r == find(ground) {
			continue
		}
		if groups[r] == nil {
			roots = append(roots, r)
		}
		groups[r] = append(groups[r], nd)
	}
	for _, r := range roots {
		g := groups[r]
		all, taint := true, false
		for _, nd := range g {
			all = all && reported[nd]
			taint = taint || p.tainted[fold(nd)]
		}
		if all || taint {
			continue
		}
		const hint = "join them to the rest of the circuit through a resistor, capacitor, inductor or a source's output; amplifier and E inputs draw no current, so they join nothing"
		at := p.nodes[g[0]].first
		if len(g) == 1 {
			p.probs.addf(at, hint, "node %q has no path to ground through any element", g[0])
		} else {
			p.probs.addf(at, hint, "nodes %s have no path to ground through any element", quoteList(g, 6))
		}
	}
}

// nodeList lists the netlist's nodes for a hint.
func (p *parser) nodeList() string {
	if len(p.order) == 0 {
		return "none"
	}
	return quoteList(p.order, 8)
}

// quoteList writes up to max names quoted and comma-separated.
func quoteList(names []string, max int) string {
	var b strings.Builder
	for i, s := range names {
		if i == max {
			fmt.Fprintf(&b, " and %d more", len(names)-max)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%q", s)
	}
	return b.String()
}

// suggest returns the node closest in spelling to name (other than
// except) when it is close enough to be a likely typing slip, or "".
func (p *parser) suggest(name, except string) string {
	const maxLen, maxNodes = 32, 500
	key := fold(name)
	if len(key) < 3 || len(key) > maxLen {
		return "" // one- and two-letter names are all close to each other
	}
	limit := 1
	if len(key) >= 5 {
		limit = 2
	}
	best, bestD := "", limit+1
	for i, nd := range p.order {
		if i == maxNodes {
			break
		}
		k := fold(nd)
		if nd == except || k == key || len(k) < 3 || len(k) > maxLen {
			continue
		}
		if d := editDistance(key, k); d < bestD {
			best, bestD = nd, d
		}
	}
	return best
}

// editDistance is the Levenshtein distance between a and b, in bytes.
func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			c := prev[j-1]
			if a[i-1] != b[j-1] {
				c = 1 + min(c, prev[j], cur[j-1])
			}
			cur[j] = min(c, prev[j]+1, cur[j-1]+1)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}
