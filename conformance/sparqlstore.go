package conformance

import (
	"context"
	"fmt"
	"os"
	"slices"
	"strings"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// The SPARQL evaluation tests read RDF datasets; veneer reads SQL tables
// through R2RML. A test's dataset is therefore stored as triple tables, one
// table per term shape, and served by a generated mapping with one triples map
// per table. A shape fixes everything about a triple's terms that R2RML term
// maps hold constant: the kind of graph, subject and object, and an object
// literal's datatype or language tag. The columns hold only the values that
// vary: g (named graphs only), s, p and o, all text. The lexical form of a
// literal is stored as written, so "01"^^xsd:integer stays "01"; a blank node
// is stored under a label made unique in its dataset, from which veneer
// derives its own label.
//
// A table per shape, rather than one table of quads with views per shape (an
// rr:sqlQuery with WHERE o_kind = …), gives each logical table a primary key
// over all of its columns: the planner sees that no two rows can give the same
// triple and need not add DISTINCT, as it would over a view whose rows it
// cannot prove unique. The tables are tiny, so the key's index is the only one.

// storeDataset reads the documents of a dataset (Turtle or N-Triples, each
// with its file: IRI as the base), stores their triples in triple tables on
// the scratch database and returns the catalog of the generated mapping.
func storeDataset(ctx context.Context, sc *Scratch, loads []graphLoad) (*catalog.Catalog, error) {
	tables := newTripleTables()
	for i, l := range loads {
		src, err := os.ReadFile(l.file)
		if err != nil {
			return nil, err
		}
		base, err := fileIRI(l.file)
		if err != nil {
			return nil, err
		}
		doc, err := rdf.ParseTurtle(l.file, src, base)
		if err != nil {
			return nil, fmt.Errorf("reading the test data: %w", err)
		}
		scope := fmt.Sprintf("d%d.", i+1)
		for _, tr := range doc.Triples() {
			if err := tables.add(l.graph, tr, scope); err != nil {
				return nil, fmt.Errorf("%s: %w", l.file, err)
			}
		}
	}
	tables.ensureShape()
	if err := tables.store(ctx, sc); err != nil {
		return nil, err
	}
	cat, err := r2rml.Load("generated-mapping.ttl", []byte(tables.mapping()))
	if err != nil {
		return nil, &StageError{Stage: "loading the generated mapping", Err: err}
	}
	return cat, nil
}

// tripleShape is the shape of the triples of one table.
type tripleShape struct {
	named   bool     // in a named graph: the table has a g column
	subject rdf.Kind // KindIRI or KindBlank
	object  rdf.Kind // KindIRI, KindBlank or KindLiteral
	// datatype is a typed literal's datatype; empty for a simple literal, an
	// IRI or a blank node, and for a language-tagged literal, which has lang.
	datatype rdf.IRI
	lang     string
}

// tripleTables are the triples of a dataset, by shape, ready to be stored.
type tripleTables struct {
	shapes []tripleShape // in the order first seen
	rows   map[tripleShape][][]string
	seen   map[string]bool
}

func newTripleTables() *tripleTables {
	return &tripleTables{rows: map[tripleShape][][]string{}, seen: map[string]bool{}}
}

// add stores a triple of graph g ("" for the default graph). Blank node
// labels are prefixed with scope, so that the blank nodes of two documents
// stay apart (RDF 1.1 Concepts §3.5: blank node identifiers are local to a
// document). A triple the graph already has is not stored again: a graph is a
// set.
func (t *tripleTables) add(g rdf.IRI, tr rdf.Triple, scope string) error {
	sh := tripleShape{named: g != ""}
	row := []string{}
	if sh.named {
		row = append(row, string(g))
	}
	switch s := tr.S.(type) {
	case rdf.IRI:
		sh.subject = rdf.KindIRI
		row = append(row, string(s))
	case rdf.BlankNode:
		sh.subject = rdf.KindBlank
		row = append(row, scope+string(s))
	default:
		return fmt.Errorf("triple %s %s %s: a literal cannot be a subject", tr.S, tr.P, tr.O)
	}
	p, ok := tr.P.(rdf.IRI)
	if !ok {
		return fmt.Errorf("triple %s %s %s: the predicate is not an IRI", tr.S, tr.P, tr.O)
	}
	row = append(row, string(p))
	switch o := tr.O.(type) {
	case rdf.IRI:
		sh.object = rdf.KindIRI
		row = append(row, string(o))
	case rdf.BlankNode:
		sh.object = rdf.KindBlank
		row = append(row, scope+string(o))
	case rdf.Literal:
		sh.object = rdf.KindLiteral
		switch {
		case o.Lang != "":
			sh.lang = o.Lang
		case o.Datatype != rdf.XSDString && o.Datatype != "":
			sh.datatype = o.Datatype
		}
		row = append(row, o.Lexical)
	}
	key := fmt.Sprintf("%v\x00%s", sh, strings.Join(row, "\x00"))
	if t.seen[key] {
		return nil
	}
	t.seen[key] = true
	if _, known := t.rows[sh]; !known {
		t.shapes = append(t.shapes, sh)
	}
	t.rows[sh] = append(t.rows[sh], row)
	return nil
}

// tableName names the table of the i-th shape: the graph, subject and object
// kinds, and the shape's number to tell datatypes and language tags apart.
func (t *tripleTables) tableName(i int) string {
	sh := t.shapes[i]
	graph := "dflt"
	if sh.named {
		graph = "named"
	}
	obj := kindWord(sh.object)
	switch {
	case sh.lang != "":
		obj = "lang"
	case sh.datatype != "":
		obj = "typed"
	case sh.object == rdf.KindLiteral:
		obj = "str"
	}
	return fmt.Sprintf("%s_%s_%s_%d", graph, kindWord(sh.subject), obj, i+1)
}

func kindWord(k rdf.Kind) string {
	switch k {
	case rdf.KindIRI:
		return "iri"
	case rdf.KindBlank:
		return "blank"
	}
	return "lit"
}

// columns are the columns of a shape's table, in row order.
func (sh tripleShape) columns() []string {
	if sh.named {
		return []string{"g", "s", "p", "o"}
	}
	return []string{"s", "p", "o"}
}

// ensureShape makes sure the tables have at least one shape, so that the
// mapping of an empty dataset has a triples map (R2RML §6 requires one per
// mapping); its table stays empty.
func (t *tripleTables) ensureShape() {
	if len(t.shapes) == 0 {
		sh := tripleShape{subject: rdf.KindIRI, object: rdf.KindIRI}
		t.shapes = append(t.shapes, sh)
		t.rows[sh] = nil
	}
}

// mysqlKeyBytes is the longest index key InnoDB takes (3072 bytes with the
// DYNAMIC row format, MySQL 8.0 Reference Manual §17.22 "InnoDB Limits"; the
// same in MariaDB); a utf8mb4 character takes up to 4 bytes of it.
const mysqlKeyBytes = 3072

// mysqlCollations are the binary collations a MySQL table may use, best first.
// A binary collation compares strings by code point, as RDF term equality
// does; the server's default, case-insensitive one would make "a" and "A" one
// key. Of the binary ones a NO PAD collation also tells "a" from "a "
// (MariaDB's utf8mb4_nopad_bin, MySQL 8's utf8mb4_0900_bin).
var mysqlCollations = []string{"utf8mb4_nopad_bin", "utf8mb4_0900_bin", "utf8mb4_bin"}

// store creates the tables on the scratch database and fills them, all values
// as bind parameters.
func (t *tripleTables) store(ctx context.Context, sc *Scratch) error {
	collation := ""
	if sc.Dialect == source.MySQL {
		var err error
		if collation, err = binaryCollation(ctx, sc); err != nil {
			return err
		}
	}
	for i, sh := range t.shapes {
		name := t.tableName(i)
		ddl := createTable(sc.Dialect, name, sh.columns(), t.rows[sh], collation)
		if _, err := sc.db.ExecContext(ctx, ddl); err != nil {
			return fmt.Errorf("creating table %s: %w", name, scrub(err, sc.DSN))
		}
		if err := insertRows(ctx, sc, name, sh.columns(), t.rows[sh]); err != nil {
			return err
		}
	}
	return nil
}

// binaryCollation returns the first of mysqlCollations the server has.
func binaryCollation(ctx context.Context, sc *Scratch) (string, error) {
	for _, c := range mysqlCollations {
		var n int
		err := sc.db.QueryRowContext(ctx, "SELECT COUNT(*) FROM information_schema.COLLATIONS WHERE COLLATION_NAME = ?", c).Scan(&n)
		if err != nil {
			return "", fmt.Errorf("looking up collation %s: %w", c, scrub(err, sc.DSN))
		}
		if n > 0 {
			return c, nil
		}
	}
	return "", fmt.Errorf("the MySQL server has none of the collations %s", strings.Join(mysqlCollations, ", "))
}

// createTable returns the CREATE TABLE statement of a triple table. Every
// column is NOT NULL text and the primary key is every column. MySQL cannot
// index TEXT whole, so there the columns are VARCHARs as long as the longest
// value; when the key would be longer than InnoDB allows, the columns are
// TEXT and the table has no key (the planner then adds DISTINCT, which is
// still right).
func createTable(d source.Dialect, name string, cols []string, rows [][]string, collation string) string {
	typ := make([]string, len(cols))
	for i := range typ {
		typ[i] = "TEXT"
	}
	key := true
	if d == source.MySQL {
		width := make([]int, len(cols))
		total := 0
		for i := range cols {
			width[i] = 1
			for _, r := range rows {
				width[i] = max(width[i], len([]rune(r[i])))
			}
			total += 4 * width[i]
		}
		key = total <= mysqlKeyBytes
		for i := range typ {
			if key {
				typ[i] = fmt.Sprintf("VARCHAR(%d)", width[i])
			}
			typ[i] += " CHARACTER SET utf8mb4 COLLATE " + collation
		}
	}
	defs := make([]string, len(cols), len(cols)+1)
	quoted := make([]string, len(cols))
	for i, c := range cols {
		quoted[i] = d.QuoteIdent(c)
		defs[i] = quoted[i] + " " + typ[i] + " NOT NULL"
	}
	if key {
		defs = append(defs, "PRIMARY KEY ("+strings.Join(quoted, ", ")+")")
	}
	return "CREATE TABLE " + d.QuoteIdent(name) + " (" + strings.Join(defs, ", ") + ")"
}

// insertBatch is how many rows one INSERT statement carries; 4 columns of 100
// rows stay far below every dialect's limit on bind parameters.
const insertBatch = 100

// insertRows inserts rows into a table, the values as bind parameters.
func insertRows(ctx context.Context, sc *Scratch, table string, cols []string, rows [][]string) error {
	quoted := make([]string, len(cols))
	for i, c := range cols {
		quoted[i] = sc.Dialect.QuoteIdent(c)
	}
	for batch := range slices.Chunk(rows, insertBatch) {
		var b strings.Builder
		fmt.Fprintf(&b, "INSERT INTO %s (%s) VALUES ", sc.Dialect.QuoteIdent(table), strings.Join(quoted, ", "))
		args := make([]any, 0, len(batch)*len(cols))
		for i, r := range batch {
			if i > 0 {
				b.WriteString(", ")
			}
			b.WriteByte('(')
			for j, v := range r {
				if j > 0 {
					b.WriteString(", ")
				}
				args = append(args, v)
				b.WriteString(placeholder(sc.Dialect, len(args)))
			}
			b.WriteByte(')')
		}
		if _, err := sc.db.ExecContext(ctx, b.String(), args...); err != nil {
			return fmt.Errorf("filling table %s: %w", table, scrub(err, sc.DSN))
		}
	}
	return nil
}

// placeholder is the n-th bind parameter in the dialect's notation.
func placeholder(d source.Dialect, n int) string {
	if d == source.Postgres {
		return fmt.Sprintf("$%d", n)
	}
	return "?"
}

// mapping returns the R2RML mapping (Turtle) that serves the tables as the
// dataset: per table one triples map whose term maps read the columns
// (rr:column with the shape's term type, datatype or language; R2RML §7, §10)
// and, for a named graph, a graph map reading g (§9). A column-valued IRI map
// takes the value as it is, without the percent-encoding of templates (§7.3).
func (t *tripleTables) mapping() string {
	var b strings.Builder
	b.WriteString("@prefix rr: <http://www.w3.org/ns/r2rml#> .\n")
	for i, sh := range t.shapes {
		name := t.tableName(i)
		fmt.Fprintf(&b, "\n<#%s> rr:logicalTable [ rr:tableName \"%s\" ] ;\n", name, name)
		fmt.Fprintf(&b, "  rr:subjectMap [ rr:column \"s\" ; rr:termType %s", termTypeOf(sh.subject))
		if sh.named {
			b.WriteString(" ; rr:graphMap [ rr:column \"g\" ]")
		}
		b.WriteString(" ] ;\n")
		b.WriteString("  rr:predicateObjectMap [ rr:predicateMap [ rr:column \"p\" ] ;\n")
		fmt.Fprintf(&b, "    rr:objectMap [ rr:column \"o\" ; rr:termType %s", termTypeOf(sh.object))
		switch {
		case sh.lang != "":
			fmt.Fprintf(&b, " ; rr:language \"%s\"", rdf.EscapeString(sh.lang))
		case sh.datatype != "":
			fmt.Fprintf(&b, " ; rr:datatype %s", sh.datatype.String())
		}
		b.WriteString(" ] ] .\n")
	}
	return b.String()
}

func termTypeOf(k rdf.Kind) string {
	switch k {
	case rdf.KindIRI:
		return "rr:IRI"
	case rdf.KindBlank:
		return "rr:BlankNode"
	}
	return "rr:Literal"
}
