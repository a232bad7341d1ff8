package rewrite

import (
	"veneer/catalog"
	"veneer/catalog/rdf"
)

// producer is one way the catalog makes triples: a subject, a predicate and an
// object map over the rows of one triples map's logical table, and for a
// referencing object map, the parent's rows joined to them (R2RML §11).
type producer struct {
	tm        *catalog.TriplesMap
	predicate catalog.TermMap
	object    catalog.TermMap
	// parent is set for a referencing object map; object is then its subject map.
	parent *catalog.TriplesMap
	joins  []catalog.JoinCondition
	// graphs are the graph maps of the triples this producer makes: the subject
	// map's and the predicate-object map's together; none means the default graph.
	graphs []catalog.TermMap
}

// producersOf lists every producer of the catalog: rdf:type triples from rr:class,
// and one per predicate × object of each predicate-object map.
func producersOf(cat *catalog.Catalog) []producer {
	var out []producer
	typeMap := catalog.TermMap{Kind: catalog.Constant, Constant: rdf.RDFType, TermType: rdf.KindIRI}
	for _, tm := range cat.Maps {
		for _, class := range tm.Classes {
			out = append(out, producer{tm: tm, predicate: typeMap, graphs: tm.Graphs,
				object: catalog.TermMap{Kind: catalog.Constant, Constant: class, TermType: rdf.KindIRI}})
		}
		for _, pom := range tm.PredicateObjects {
			graphs := append(append([]catalog.TermMap(nil), tm.Graphs...), pom.Graphs...)
			for _, pm := range pom.Predicates {
				for _, om := range pom.Objects {
					if om.Term != nil {
						out = append(out, producer{tm: tm, predicate: pm, object: *om.Term, graphs: graphs})
						continue
					}
					out = append(out, producer{tm: tm, predicate: pm, object: om.Ref.Parent.Subject,
						parent: om.Ref.Parent, joins: om.Ref.Joins, graphs: graphs})
				}
			}
		}
	}
	return out
}

// inDefaultGraph reports whether the producer's triples are in the default graph:
// it has no graph map, or one that is rr:defaultGraph (R2RML §9).
func (p producer) inDefaultGraph() bool {
	if len(p.graphs) == 0 {
		return true
	}
	for _, g := range p.graphs {
		if g.Kind == catalog.Constant && g.Constant == catalog.DefaultGraph {
			return true
		}
	}
	return false
}

// namedGraphs are the producer's graph maps that name a graph.
func (p producer) namedGraphs() []catalog.TermMap {
	var out []catalog.TermMap
	for _, g := range p.graphs {
		if g.Kind == catalog.Constant && g.Constant == catalog.DefaultGraph {
			continue
		}
		out = append(out, g)
	}
	return out
}
