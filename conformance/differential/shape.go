package differential

import (
	"cmp"
	"slices"
	"strings"

	"veneer/catalog/rdf"
)

// shape is what the query generator knows of a graph: its classes, the properties
// of each class's members, and the values those properties take. It is read from
// the graph itself, so the generator needs no list of the demo's vocabulary and
// draws its constants from the data.
type shape struct {
	classes []*class
	byIRI   map[rdf.IRI]*class
	// types are the classes of each typed subject.
	types map[rdf.IRI][]*class
	// users counts the subjects that use each predicate, whatever their class;
	// functional says none of them has two values for it.
	users      map[rdf.IRI]int
	functional map[rdf.IRI]bool
}

// class is the set of subjects with one rdf:type.
type class struct {
	iri      rdf.IRI
	subjects []rdf.IRI
	props    []*property
}

// property is one predicate as the members of one class use it.
type property struct {
	iri rdf.IRI
	// of is the class whose members have the property.
	of *class
	// values are the objects of each member that has the property.
	values map[rdf.IRI][]rdf.Term
	// distinct are the distinct objects, in N-Triples order.
	distinct []rdf.Term
	// total says every member has the property; functional that none has two
	// values; unique that it is functional and no two members share a value;
	// exclusive that only members of the class use the predicate, so that a
	// pattern without "a C" still matches members only.
	total, functional, unique, exclusive bool
	kind                                 kind
	// target is the class of the objects, when they are subjects of one class.
	target *class
	// inverse lists, for each object, the members that have it.
	inverse map[rdf.Term][]rdf.IRI
}

// kind is the kind of value a property has.
type kind int

const (
	kindIRI kind = iota
	kindString
	kindLang
	kindInteger
	kindDecimal
	kindDouble
	kindBoolean
	kindDate
	kindDateTime
	kindBinary
)

func (k kind) numeric() bool { return k == kindInteger || k == kindDecimal || k == kindDouble }

func kindOf(t rdf.Term) kind {
	l, ok := t.(rdf.Literal)
	if !ok {
		return kindIRI
	}
	switch {
	case l.Lang != "":
		return kindLang
	case l.Datatype == rdf.XSDInteger:
		return kindInteger
	case l.Datatype == rdf.XSDDecimal:
		return kindDecimal
	case l.Datatype == rdf.XSDDouble:
		return kindDouble
	case l.Datatype == rdf.XSDBoolean:
		return kindBoolean
	case l.Datatype == rdf.XSDDate:
		return kindDate
	case l.Datatype == rdf.XSDDateTime:
		return kindDateTime
	case l.Datatype == rdf.XSDHexBin:
		return kindBinary
	}
	return kindString
}

// shapeOf reads the shape of a graph.
func shapeOf(g *Graph) *shape {
	sh := &shape{byIRI: map[rdf.IRI]*class{}, types: map[rdf.IRI][]*class{},
		users: map[rdf.IRI]int{}, functional: map[rdf.IRI]bool{}}
	bySubject := map[rdf.IRI][]rdf.Triple{}
	for _, t := range g.Triples {
		s, ok := t.S.(rdf.IRI)
		if !ok {
			continue
		}
		if t.P == rdf.RDFType {
			if c, ok := t.O.(rdf.IRI); ok {
				cl := sh.byIRI[c]
				if cl == nil {
					cl = &class{iri: c}
					sh.byIRI[c] = cl
					sh.classes = append(sh.classes, cl)
				}
				cl.subjects = append(cl.subjects, s)
				sh.types[s] = append(sh.types[s], cl)
			}
			continue
		}
		bySubject[s] = append(bySubject[s], t)
	}
	slices.SortFunc(sh.classes, func(a, b *class) int { return strings.Compare(string(a.iri), string(b.iri)) })
	for _, ts := range bySubject {
		seen := map[rdf.IRI]int{}
		for _, t := range ts {
			seen[t.P.(rdf.IRI)]++
		}
		for p, n := range seen {
			sh.users[p]++
			if _, ok := sh.functional[p]; !ok {
				sh.functional[p] = true
			}
			if n > 1 {
				sh.functional[p] = false
			}
		}
	}
	for _, c := range sh.classes {
		slices.Sort(c.subjects)
		props := map[rdf.IRI]*property{}
		for _, s := range c.subjects {
			for _, t := range bySubject[s] {
				p := t.P.(rdf.IRI)
				pr := props[p]
				if pr == nil {
					pr = &property{iri: p, of: c, values: map[rdf.IRI][]rdf.Term{}, inverse: map[rdf.Term][]rdf.IRI{}}
					props[p] = pr
				}
				pr.values[s] = append(pr.values[s], t.O)
				pr.inverse[t.O] = append(pr.inverse[t.O], s)
			}
		}
		for _, pr := range props {
			pr.finish(sh)
			c.props = append(c.props, pr)
		}
		slices.SortFunc(c.props, func(a, b *property) int { return strings.Compare(string(a.iri), string(b.iri)) })
	}
	return sh
}

func (p *property) finish(sh *shape) {
	p.total = len(p.values) == len(p.of.subjects)
	p.functional = true
	for _, vs := range p.values {
		if len(vs) > 1 {
			p.functional = false
		}
	}
	for o := range p.inverse {
		p.distinct = append(p.distinct, o)
	}
	slices.SortFunc(p.distinct, func(a, b rdf.Term) int { return cmp.Compare(a.String(), b.String()) })
	p.unique = p.functional && len(p.distinct) == len(p.values)
	p.exclusive = len(p.values) == sh.users[p.iri]
	p.kind = kindOf(p.distinct[0])
	if p.kind == kindIRI {
		targets := map[*class]int{}
		for _, o := range p.distinct {
			if iri, ok := o.(rdf.IRI); ok {
				for _, c := range sh.types[iri] {
					targets[c]++
				}
			}
		}
		for c, n := range targets {
			if n == len(p.distinct) && (p.target == nil || len(c.subjects) > len(p.target.subjects)) {
				p.target = c
			}
		}
	}
}

// refs returns the class's properties whose objects are members of a class.
func (c *class) refs() []*property {
	var out []*property
	for _, p := range c.props {
		if p.target != nil {
			out = append(out, p)
		}
	}
	return out
}

// attrs returns the class's literal-valued properties.
func (c *class) attrs() []*property {
	var out []*property
	for _, p := range c.props {
		if p.kind != kindIRI {
			out = append(out, p)
		}
	}
	return out
}

// incoming returns the properties of any class whose objects are members of c.
func (sh *shape) incoming(c *class) []*property {
	var out []*property
	for _, o := range sh.classes {
		for _, p := range o.refs() {
			if p.target == c {
				out = append(out, p)
			}
		}
	}
	return out
}
