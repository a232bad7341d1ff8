package differential

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"regexp"
	"slices"
	"strings"
	"unicode/utf8"

	"veneer/catalog"
	"veneer/catalog/rdf"
)

// Database is an open connection to the database a mapping reads, and the dialect
// it speaks: "sqlite", "postgres" or "mysql".
type Database struct {
	DB      *sql.DB
	Dialect string
}

// Graph is the RDF graph a mapping produces: its triples without duplicates, in
// the order of their N-Triples lines.
type Graph struct {
	Triples []rdf.Triple
}

// WriteNTriples writes the graph as N-Triples, one triple a line.
func (g *Graph) WriteNTriples(w io.Writer) error {
	for _, t := range g.Triples {
		if _, err := io.WriteString(w, ntriple(t)); err != nil {
			return err
		}
	}
	return nil
}

func ntriple(t rdf.Triple) string {
	return t.S.String() + " " + t.P.String() + " " + t.O.String() + " .\n"
}

// Materialise builds the graph the mapping cat produces over db by R2RML's own
// rules, row by row: it reads every row of each triples map's logical table with
// SELECT * and makes that row's triples (R2RML §11), evaluating referencing object
// maps (§8) by indexing the parent's rows on the join columns. It does not use
// veneer's planner or executor, so that their answers can be checked against it.
// Graph maps are not supported: the demo mapping has none, and a mapping with one
// is refused rather than flattened into the default graph.
func Materialise(ctx context.Context, db Database, cat *catalog.Catalog) (*Graph, error) {
	m := &materialiser{db: db, tables: map[*catalog.TriplesMap]*table{}, index: map[indexKey]map[string][]row{}}
	lines := map[string]rdf.Triple{}
	emit := func(s, p, o rdf.Term) {
		t := rdf.Triple{S: s, P: p, O: o}
		lines[ntriple(t)] = t
	}
	for _, tm := range cat.Maps {
		if err := m.triples(ctx, tm, emit); err != nil {
			return nil, fmt.Errorf("materialising triples map %s (%s): %w", tm.Name, tm.Pos, err)
		}
	}
	keys := make([]string, 0, len(lines))
	for k := range lines {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	g := &Graph{Triples: make([]rdf.Triple, len(keys))}
	for i, k := range keys {
		g.Triples[i] = lines[k]
	}
	return g, nil
}

// materialiser reads each logical table once and remembers it, with the parent
// indexes built on it, for the maps that refer to it.
type materialiser struct {
	db     Database
	tables map[*catalog.TriplesMap]*table
	index  map[indexKey]map[string][]row
}

// table is the result of a logical table: its column names, the R2RML type
// family of each, and its rows.
type table struct {
	columns  []string
	families []family
	rows     []row
}

// family is the type family of column j for the value v.
func (t *table) family(j int, v any) family {
	if t.families[j] == famUnknown {
		return valueFamily(v)
	}
	return t.families[j]
}

// row holds one row's values, in the order of table.columns; nil is SQL NULL.
type row []any

type indexKey struct {
	parent  *catalog.TriplesMap
	columns string
}

// triples makes the triples of every row of one triples map.
func (m *materialiser) triples(ctx context.Context, tm *catalog.TriplesMap, emit func(s, p, o rdf.Term)) error {
	if len(tm.Graphs) > 0 {
		return fmt.Errorf("the subject map has a graph map; the materialiser makes the default graph only")
	}
	for _, pom := range tm.PredicateObjects {
		if len(pom.Graphs) > 0 {
			return fmt.Errorf("the predicate-object map at %s has a graph map; the materialiser makes the default graph only", pom.Pos)
		}
	}
	t, err := m.table(ctx, tm)
	if err != nil {
		return err
	}
	for _, r := range t.rows {
		subject, ok, err := m.term(tm.Subject, t, r)
		if err != nil {
			return fmt.Errorf("subject map: %w", err)
		}
		if !ok {
			continue // a NULL in the subject: the row has no triples (§11)
		}
		for _, class := range tm.Classes {
			emit(subject, rdf.RDFType, class)
		}
		for _, pom := range tm.PredicateObjects {
			if err := m.predicateObjects(ctx, pom, t, r, subject, emit); err != nil {
				return fmt.Errorf("predicate-object map at %s: %w", pom.Pos, err)
			}
		}
	}
	return nil
}

// predicateObjects makes the triples of one predicate-object map for one row:
// every predicate with every object (R2RML §11).
func (m *materialiser) predicateObjects(ctx context.Context, pom catalog.PredicateObjectMap, t *table, r row,
	subject rdf.Term, emit func(s, p, o rdf.Term)) error {
	var preds []rdf.Term
	for _, pm := range pom.Predicates {
		p, ok, err := m.term(pm, t, r)
		if err != nil {
			return err
		}
		if ok {
			preds = append(preds, p)
		}
	}
	var objects []rdf.Term
	for _, om := range pom.Objects {
		switch {
		case om.Term != nil:
			o, ok, err := m.term(*om.Term, t, r)
			if err != nil {
				return err
			}
			if ok {
				objects = append(objects, o)
			}
		case om.Ref != nil:
			os, err := m.referenced(ctx, om.Ref, t, r)
			if err != nil {
				return err
			}
			objects = append(objects, os...)
		}
	}
	for _, p := range preds {
		for _, o := range objects {
			emit(subject, p, o)
		}
	}
	return nil
}

// referenced returns the objects of a referencing object map for one child row:
// the subjects of the parent rows that meet every join condition (R2RML §8). With
// no join condition the parent's subject map is applied to the child row, which
// R2RML allows only when both read the same logical table.
func (m *materialiser) referenced(ctx context.Context, ref *catalog.RefObjectMap, child *table, r row) ([]rdf.Term, error) {
	parent, err := m.table(ctx, ref.Parent)
	if err != nil {
		return nil, err
	}
	if len(ref.Joins) == 0 {
		s, ok, err := m.term(ref.Parent.Subject, child, r)
		if err != nil || !ok {
			return nil, err
		}
		return []rdf.Term{s}, nil
	}
	childCols := make([]string, len(ref.Joins))
	parentCols := make([]string, len(ref.Joins))
	for i, j := range ref.Joins {
		childCols[i], parentCols[i] = j.Child, j.Parent
	}
	key, ok, err := joinKey(child, r, childCols)
	if err != nil {
		return nil, fmt.Errorf("join condition at %s: %w", ref.Joins[0].Pos, err)
	}
	if !ok {
		return nil, nil // NULL = anything is not true in SQL: no parent row
	}
	idx, err := m.parentIndex(ref.Parent, parent, parentCols)
	if err != nil {
		return nil, fmt.Errorf("join condition at %s: %w", ref.Joins[0].Pos, err)
	}
	var out []rdf.Term
	for _, pr := range idx[key] {
		s, ok, err := m.term(ref.Parent.Subject, parent, pr)
		if err != nil {
			return nil, err
		}
		if ok {
			out = append(out, s)
		}
	}
	return out, nil
}

// parentIndex indexes the parent's rows by the values of the join columns.
func (m *materialiser) parentIndex(tm *catalog.TriplesMap, t *table, cols []string) (map[string][]row, error) {
	k := indexKey{tm, strings.Join(cols, "\x00")}
	if idx, ok := m.index[k]; ok {
		return idx, nil
	}
	idx := map[string][]row{}
	for _, r := range t.rows {
		key, ok, err := joinKey(t, r, cols)
		if err != nil {
			return nil, err
		}
		if ok {
			idx[key] = append(idx[key], r)
		}
	}
	m.index[k] = idx
	return idx, nil
}

// joinKey is the key of a row's join columns: their natural lexical forms, so
// that an integer read as int64 on one side and as text on the other still
// meets. It reports false when a column is NULL.
func joinKey(t *table, r row, cols []string) (string, bool, error) {
	parts := make([]string, len(cols))
	for i, c := range cols {
		j, err := t.column(c)
		if err != nil {
			return "", false, err
		}
		if r[j] == nil {
			return "", false, nil
		}
		if parts[i], err = lexical(r[j], t.family(j, r[j])); err != nil {
			return "", false, fmt.Errorf("column %s: %w", c, err)
		}
	}
	return strings.Join(parts, "\x00"), true, nil
}

// term makes the term a term map gives for a row; false means no term, because a
// column it reads is NULL (R2RML §11).
func (m *materialiser) term(tm catalog.TermMap, t *table, r row) (rdf.Term, bool, error) {
	switch tm.Kind {
	case catalog.Constant:
		return tm.Constant, true, nil
	case catalog.Column:
		j, err := t.column(tm.Column)
		if err != nil {
			return nil, false, fmt.Errorf("term map at %s: %w", tm.Pos, err)
		}
		if r[j] == nil {
			return nil, false, nil
		}
		f := t.family(j, r[j])
		lex, err := lexical(r[j], f)
		if err != nil {
			return nil, false, fmt.Errorf("term map at %s, column %s: %w", tm.Pos, tm.Column, err)
		}
		return m.made(tm, lex, f), true, nil
	case catalog.TemplateMap:
		var b strings.Builder
		for _, p := range tm.Template.Parts {
			if p.Column == "" {
				b.WriteString(p.Text)
				continue
			}
			j, err := t.column(p.Column)
			if err != nil {
				return nil, false, fmt.Errorf("template at %s: %w", tm.Pos, err)
			}
			if r[j] == nil {
				return nil, false, nil
			}
			lex, err := lexical(r[j], t.family(j, r[j]))
			if err != nil {
				return nil, false, fmt.Errorf("template at %s, column %s: %w", tm.Pos, p.Column, err)
			}
			if tm.TermType == rdf.KindIRI {
				lex = IRISafe(lex) // R2RML §7.3
			}
			b.WriteString(lex)
		}
		// A template's value is a string, whatever its columns' types (§7.4).
		return m.made(tm, b.String(), famString), true, nil
	}
	return nil, false, fmt.Errorf("term map at %s: unknown kind %d", tm.Pos, tm.Kind)
}

// made turns a term map's lexical value into a term of its term type (R2RML §11).
func (m *materialiser) made(tm catalog.TermMap, lex string, f family) rdf.Term {
	switch tm.TermType {
	case rdf.KindIRI:
		// A value that is not an absolute IRI is joined to the base (§11).
		if !absoluteIRI.MatchString(lex) {
			lex = tm.Base + lex
		}
		return rdf.IRI(lex)
	case rdf.KindBlank:
		return rdf.BlankNode(blankLabel(lex))
	}
	switch {
	case tm.Language != "":
		return rdf.NewLangString(lex, tm.Language)
	case tm.Datatype != "":
		// A stated datatype keeps the value's natural lexical form (§10.3).
		return rdf.NewTyped(lex, tm.Datatype)
	}
	return rdf.NewTyped(lex, f.datatype())
}

// absoluteIRI matches the scheme an absolute IRI starts with (RFC 3987 §2.2).
var absoluteIRI = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9+.-]*:`)

// blankLabel turns a blank node's value into an N-Triples label: letters and
// digits stay, every other byte becomes "x" and its hex code, so distinct values
// keep distinct labels.
func blankLabel(s string) string {
	var b strings.Builder
	b.WriteString("b")
	for i := 0; i < len(s); i++ {
		c := s[i]
		if 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' {
			b.WriteByte(c)
		} else {
			fmt.Fprintf(&b, "x%02X", c)
		}
	}
	return b.String()
}

// column finds a column of the logical table by its name in the mapping: a
// delimited identifier ("Name") must match exactly, an ordinary one also
// matches a single column that differs only in case (SQL folds those).
func (t *table) column(name string) (int, error) {
	want, quoted := name, false
	if len(name) >= 2 && name[0] == '"' && name[len(name)-1] == '"' {
		want, quoted = strings.ReplaceAll(name[1:len(name)-1], `""`, `"`), true
	}
	found := -1
	for i, c := range t.columns {
		if c == want {
			return i, nil
		}
		if !quoted && strings.EqualFold(c, want) {
			if found >= 0 {
				return 0, fmt.Errorf("column %s is ambiguous in the logical table (%s, %s)", name, t.columns[found], c)
			}
			found = i
		}
	}
	if found < 0 {
		return 0, fmt.Errorf("the logical table has no column %s (it has %s)", name, strings.Join(t.columns, ", "))
	}
	return found, nil
}

// table reads a triples map's logical table (R2RML §5), once.
func (m *materialiser) table(ctx context.Context, tm *catalog.TriplesMap) (*table, error) {
	if t, ok := m.tables[tm]; ok {
		return t, nil
	}
	// The table name and view text come from the mapping, as R2RML's effective
	// SQL query does (§5); no data value is put into the statement.
	var query string
	switch {
	case tm.Table.TableName != "":
		query = "SELECT * FROM " + tm.Table.TableName
	case tm.Table.Query != "":
		query = "SELECT * FROM (" + strings.TrimRight(strings.TrimSpace(tm.Table.Query), ";") + ") AS logical_table"
	default:
		return nil, fmt.Errorf("the logical table has neither a table name nor a query")
	}
	rows, err := m.db.DB.QueryContext(ctx, query)
	if err != nil {
		return nil, fmt.Errorf("reading the logical table (%s): %w", tm.Table.Pos, err)
	}
	defer rows.Close()
	types, err := rows.ColumnTypes()
	if err != nil {
		return nil, fmt.Errorf("reading the logical table's column types: %w", err)
	}
	t := &table{}
	pad := make([]int, len(types))
	for i, ct := range types {
		t.columns = append(t.columns, ct.Name())
		t.families = append(t.families, familyOf(ct.DatabaseTypeName()))
		pad[i] = charLength(ct.DatabaseTypeName())
	}
	if err := m.mysqlBooleans(ctx, tm, t); err != nil {
		return nil, err
	}
	for rows.Next() {
		r := make(row, len(t.columns))
		ptrs := make([]any, len(r))
		for i := range r {
			ptrs[i] = &r[i]
		}
		if err := rows.Scan(ptrs...); err != nil {
			return nil, fmt.Errorf("reading a row of the logical table: %w", err)
		}
		for i, v := range r {
			switch x := v.(type) {
			case []byte:
				r[i] = slices.Clone(x) // the driver may reuse the buffer
				if pad[i] > 0 {
					r[i] = padded(string(x), pad[i])
				}
			case string:
				if pad[i] > 0 {
					r[i] = padded(x, pad[i])
				}
			}
		}
		t.rows = append(t.rows, r)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("reading the logical table: %w", err)
	}
	m.tables[tm] = t
	return t, nil
}

// padded pads s with spaces to n characters.
func padded(s string, n int) string {
	if k := utf8.RuneCountInString(s); k < n {
		return s + strings.Repeat(" ", n-k)
	}
	return s
}

// mysqlBooleans marks the BOOLEAN columns of a MySQL or MariaDB table. Those
// servers store BOOLEAN as TINYINT(1), and their result metadata say only
// TINYINT; the column type in information_schema keeps the display width.
func (m *materialiser) mysqlBooleans(ctx context.Context, tm *catalog.TriplesMap, t *table) error {
	if m.db.Dialect != "mysql" || tm.Table.TableName == "" {
		return nil
	}
	rows, err := m.db.DB.QueryContext(ctx, `SELECT COLUMN_NAME FROM information_schema.COLUMNS
		WHERE TABLE_SCHEMA = DATABASE() AND TABLE_NAME = ? AND LOWER(COLUMN_TYPE) LIKE 'tinyint(1)%'`,
		strings.Trim(tm.Table.TableName, "`"))
	if err != nil {
		return fmt.Errorf("reading the column types of %s: %w", tm.Table.TableName, err)
	}
	defer rows.Close()
	for rows.Next() {
		var name string
		if err := rows.Scan(&name); err != nil {
			return fmt.Errorf("reading the column types of %s: %w", tm.Table.TableName, err)
		}
		for i, c := range t.columns {
			if strings.EqualFold(c, name) {
				t.families[i] = famBoolean
			}
		}
	}
	return rows.Err()
}
