// Package direct builds the W3C Direct Mapping of an introspected relational
// schema ("A Direct Mapping of Relational Data to RDF", W3C Recommendation,
// 27 September 2012) as a veneer catalog: one triples map per table, which the
// planner then runs like any R2RML mapping.
package direct

import (
	"fmt"
	"net/url"
	"slices"
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// Map returns the Direct Mapping of the tables of s, with every IRI formed
// relative to base, which must be an absolute IRI. For each table it builds:
//
//   - the table IRI, base + name, as the class of every row (rdf:type <T>);
//   - the row node: for a table with a primary key the IRI
//     <T/c1=v1;c2=v2> over the key's columns in key order, for one without a
//     blank node per row (two equal rows are still two nodes);
//   - a literal triple <T#c> for each column, with the value's natural literal;
//   - a reference triple <T#ref-c1;c2> for each foreign key, whose object is
//     the referenced row's node, found by joining on the key's columns.
//
// Names in IRIs are percent-encoded here (catalog.IRISafe); column values are
// encoded by the planner when it fills the templates. Views are left out (the
// Direct Mapping is defined on base tables), and so are foreign keys that
// reference a table of another schema, which has no triples map here.
func Map(s *source.Schema, base string) (*catalog.Catalog, error) {
	if u, err := url.Parse(base); err != nil || !u.IsAbs() {
		return nil, fmt.Errorf("direct mapping: base %q is not an absolute IRI", base)
	}
	cat := &catalog.Catalog{}
	maps := map[string]*catalog.TriplesMap{}
	for _, t := range s.Tables {
		if t.View {
			continue
		}
		tm, err := tableMap(s.Dialect, t, base)
		if err != nil {
			return nil, fmt.Errorf("direct mapping of table %q: %w", t.Name, err)
		}
		cat.Maps = append(cat.Maps, tm)
		maps[t.Name] = tm
	}
	for _, t := range s.Tables {
		child := maps[t.Name]
		if child == nil {
			continue
		}
		for _, fk := range t.ForeignKeys {
			parent := maps[fk.RefTable]
			if parent == nil || fk.RefSchema != s.Name {
				continue
			}
			if len(fk.RefColumns) != len(fk.Columns) || slices.Contains(fk.RefColumns, "") {
				return nil, fmt.Errorf("direct mapping of table %q: foreign key %s does not name a referenced column for each of its columns", t.Name, fk.Name)
			}
			child.PredicateObjects = append(child.PredicateObjects, referenceMap(t, fk, parent, base))
		}
	}
	return cat, nil
}

// tableMap builds a table's triples map without its reference triples.
func tableMap(d source.Dialect, t *source.Table, base string) (*catalog.TriplesMap, error) {
	tableIRI := rdf.IRI(base + catalog.IRISafe(t.Name))
	tm := &catalog.TriplesMap{
		Name:    string(tableIRI),
		Table:   catalog.LogicalTable{TableName: delimit(t.Schema) + "." + delimit(t.Name)},
		Classes: []rdf.IRI{tableIRI},
	}
	if len(t.PrimaryKey) > 0 {
		tm.Subject = catalog.TermMap{Kind: catalog.TemplateMap, TermType: rdf.KindIRI, Template: rowTemplate(t, base)}
	} else {
		view, rowCol, err := rowIdentity(d, t)
		if err != nil {
			return nil, err
		}
		tm.Table = catalog.LogicalTable{Query: view}
		tm.Subject = catalog.TermMap{Kind: catalog.TemplateMap, TermType: rdf.KindBlank, Template: catalog.Template{Parts: []catalog.TemplatePart{
			{Text: catalog.IRISafe(t.Name) + "-"},
			{Column: delimit(rowCol)},
		}}}
	}
	for _, c := range t.Columns {
		tm.PredicateObjects = append(tm.PredicateObjects, catalog.PredicateObjectMap{
			Predicates: []catalog.TermMap{constant(rdf.IRI(string(tableIRI) + "#" + catalog.IRISafe(c.Name)))},
			Objects:    []catalog.ObjectMap{{Term: &catalog.TermMap{Kind: catalog.Column, Column: delimit(c.Name), TermType: rdf.KindLiteral}}},
		})
	}
	return tm, nil
}

// rowTemplate is the template of the row IRIs of a table with a primary key:
// base + T/c1={c1};c2={c2}.
func rowTemplate(t *source.Table, base string) catalog.Template {
	var tpl catalog.Template
	sep := base + catalog.IRISafe(t.Name) + "/"
	for _, c := range t.PrimaryKey {
		tpl.Parts = append(tpl.Parts,
			catalog.TemplatePart{Text: sep + catalog.IRISafe(c) + "="},
			catalog.TemplatePart{Column: delimit(c)})
		sep = ";"
	}
	return tpl
}

// referenceMap builds the reference triples of a foreign key: predicate
// <T#ref-c1;c2>, object the parent's row node.
func referenceMap(t *source.Table, fk source.ForeignKey, parent *catalog.TriplesMap, base string) catalog.PredicateObjectMap {
	names := make([]string, len(fk.Columns))
	joins := make([]catalog.JoinCondition, len(fk.Columns))
	for i, c := range fk.Columns {
		names[i] = catalog.IRISafe(c)
		joins[i] = catalog.JoinCondition{Child: delimit(c), Parent: delimit(fk.RefColumns[i])}
	}
	pred := rdf.IRI(base + catalog.IRISafe(t.Name) + "#ref-" + strings.Join(names, ";"))
	return catalog.PredicateObjectMap{
		Predicates: []catalog.TermMap{constant(pred)},
		Objects:    []catalog.ObjectMap{{Ref: &catalog.RefObjectMap{Parent: parent, Joins: joins}}},
	}
}

func constant(iri rdf.IRI) catalog.TermMap {
	return catalog.TermMap{Kind: catalog.Constant, Constant: iri, TermType: rdf.KindIRI}
}

// delimit writes name as an SQL delimited identifier, the form R2RML mappings
// use for names that must keep their case (R2RML §5).
func delimit(name string) string {
	return `"` + strings.ReplaceAll(name, `"`, `""`) + `"`
}
