package rdf

import (
	"encoding/binary"
	"hash/fnv"
	"slices"
	"strings"
)

// Isomorphic reports whether a and b are the same RDF dataset up to a renaming
// of blank nodes (RDF 1.1 Concepts §3.6 and §4). Duplicates are ignored: both are
// taken as sets. Language tags compare case-insensitively, as in SameTerm.
func Isomorphic(a, b []Quad) bool {
	ga, gb := newIsoGraph(a), newIsoGraph(b)
	if len(ga.quads) != len(gb.quads) || len(ga.blanks) != len(gb.blanks) {
		return false
	}
	for k, q := range ga.quads {
		if !q.hasBlank && !gb.has[k] {
			return false
		}
	}
	// Colour refinement: a blank node's colour summarises the quads around it.
	// Both graphs are refined in step so equal colours mean the same thing.
	for round := 0; round <= len(ga.blanks); round++ {
		na, nb := ga.refine(), gb.refine()
		if na != nb {
			return false
		}
		if !ga.changed && !gb.changed {
			break
		}
	}
	if !slices.Equal(ga.sortedColours(), gb.sortedColours()) {
		return false
	}
	// Map the nodes with the fewest candidates first.
	size := map[uint64]int{}
	for _, c := range ga.colour {
		size[c]++
	}
	order := slices.Clone(ga.blanks)
	slices.SortStableFunc(order, func(x, y string) int { return size[ga.colour[x]] - size[ga.colour[y]] })
	return ga.match(gb, order, map[string]string{}, map[string]bool{})
}

// isoQuad is a quad as four term keys; blank nodes are keys starting with "_:".
type isoQuad struct {
	terms    [4]string
	hasBlank bool
}

type isoGraph struct {
	quads   map[string]isoQuad
	has     map[string]bool
	blanks  []string
	byBlank map[string][]isoQuad
	colour  map[string]uint64
	changed bool
}

// isoKey is the key of a term: its N-Triples form with the language tag lowered.
func isoKey(t Term) string {
	switch t := t.(type) {
	case nil:
		return ""
	case BlankNode:
		return "_:" + string(t)
	case Literal:
		t.Lang = strings.ToLower(t.Lang)
		return t.String()
	}
	return t.String()
}

func newIsoGraph(qs []Quad) *isoGraph {
	g := &isoGraph{quads: map[string]isoQuad{}, has: map[string]bool{}, byBlank: map[string][]isoQuad{}, colour: map[string]uint64{}}
	for _, q := range qs {
		var iq isoQuad
		for i, t := range []Term{q.S, q.P, q.O, q.G} {
			iq.terms[i] = isoKey(t)
			if _, ok := t.(BlankNode); ok {
				iq.hasBlank = true
			}
		}
		k := strings.Join(iq.terms[:], " ")
		if g.has[k] {
			continue
		}
		g.has[k] = true
		g.quads[k] = iq
		for i, t := range iq.terms {
			if !isBlankKey(t) || slices.Contains(iq.terms[:i], t) {
				continue
			}
			if _, seen := g.colour[t]; !seen {
				g.colour[t] = 0
				g.blanks = append(g.blanks, t)
			}
			g.byBlank[t] = append(g.byBlank[t], iq)
		}
	}
	slices.Sort(g.blanks)
	return g
}

func isBlankKey(k string) bool { return strings.HasPrefix(k, "_:") }

// refine computes one round of new colours and returns the number of distinct colours.
func (g *isoGraph) refine() int {
	next := make(map[string]uint64, len(g.colour))
	before := len(distinct(g.colour))
	for _, n := range g.blanks {
		sigs := make([]uint64, 0, len(g.byBlank[n]))
		for _, q := range g.byBlank[n] {
			h := fnv.New64a()
			for _, t := range q.terms {
				switch {
				case t == n:
					h.Write([]byte{1})
				case isBlankKey(t):
					h.Write(binary.LittleEndian.AppendUint64([]byte{2}, g.colour[t]))
				default:
					h.Write([]byte{3})
					h.Write([]byte(t))
				}
				h.Write([]byte{0})
			}
			sigs = append(sigs, h.Sum64())
		}
		slices.Sort(sigs)
		h := fnv.New64a()
		for _, s := range append(sigs, g.colour[n]) {
			h.Write(binary.LittleEndian.AppendUint64(nil, s))
		}
		next[n] = h.Sum64()
	}
	g.colour = next
	d := len(distinct(next))
	g.changed = d != before
	return d
}

func distinct(c map[string]uint64) map[uint64]bool {
	d := map[uint64]bool{}
	for _, v := range c {
		d[v] = true
	}
	return d
}

func (g *isoGraph) sortedColours() []uint64 {
	cs := make([]uint64, 0, len(g.colour))
	for _, c := range g.colour {
		cs = append(cs, c)
	}
	slices.Sort(cs)
	return cs
}

// match extends the blank node mapping m (from g to h) to the nodes in order,
// backtracking over nodes of the same colour.
func (g *isoGraph) match(h *isoGraph, order []string, m map[string]string, used map[string]bool) bool {
	if len(order) == 0 {
		return true
	}
	n := order[0]
	for _, cand := range h.blanks {
		if used[cand] || h.colour[cand] != g.colour[n] {
			continue
		}
		m[n], used[cand] = cand, true
		if g.consistent(h, n, m) && g.match(h, order[1:], m, used) {
			return true
		}
		delete(m, n)
		delete(used, cand)
	}
	return false
}

// consistent checks that every quad around n whose blank nodes are all mapped
// is mapped onto a quad of h.
func (g *isoGraph) consistent(h *isoGraph, n string, m map[string]string) bool {
next:
	for _, q := range g.byBlank[n] {
		var mapped [4]string
		for i, t := range q.terms {
			if isBlankKey(t) {
				var ok bool
				if t, ok = m[t]; !ok {
					continue next
				}
			}
			mapped[i] = t
		}
		if !h.has[strings.Join(mapped[:], " ")] {
			return false
		}
	}
	return true
}
