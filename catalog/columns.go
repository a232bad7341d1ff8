package catalog

import (
	"context"
	"fmt"
	"slices"
	"sort"
	"strings"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// Columns records the result columns of every logical table of a catalog, read
// from the live source; the planner needs their types to choose natural
// datatypes (R2RML §10.2) and to compare values in SQL.
type Columns struct {
	tables map[string][]source.Column
	// keys holds, per logical table, the column sets (database names) that are
	// unique and never NULL: a row is determined by the values of any one of them.
	keys map[string][][]string
	// foreign holds, per logical table, its foreign key constraints.
	foreign map[string][]source.ForeignKey
	// dialect is the source's, whose rules decide which column a name finds.
	dialect source.Dialect
	// found holds the column each (table key, name) of the catalog resolves to.
	found map[string]source.Column
}

// Key identifies a logical table: its name, or its query text for a view.
func (t LogicalTable) Key() string {
	if t.Query != "" {
		return "query:" + t.Query
	}
	return "table:" + t.TableName
}

// ProbeColumns reads the columns of each logical table of cat from src (by running
// the table's query so that it returns no row) and checks that every column a term
// map or join condition names exists. On failure the error is an ErrorList of
// every problem Check finds that is not a warning, sorted by position.
func ProbeColumns(ctx context.Context, src source.Source, cat *Catalog) (*Columns, error) {
	c, problems := Check(ctx, src, cat)
	if errs := problems.Errors(); len(errs) > 0 {
		return nil, errs
	}
	return c, nil
}

// Check checks cat against the live schema of src and reports every problem,
// sorted by position: logical tables that cannot be read (a missing table, an
// R2RML view the database rejects or whose result repeats a column name),
// columns that term maps and join conditions name but the tables lack, and,
// as warnings, datatypes given by rr:datatype that the column's values may not
// fit. The columns of the tables that could be read are returned even when
// there are problems.
func Check(ctx context.Context, src source.Source, cat *Catalog) (*Columns, ErrorList) {
	c := &Columns{tables: map[string][]source.Column{}, keys: map[string][][]string{},
		foreign: map[string][]source.ForeignKey{}, dialect: src.Dialect()}
	// The schema names the tables a missing one could have been meant as, and
	// gives the keys, which make the planner's SQL simpler (no DISTINCT, no
	// self-joins); without it every answer is still right, so a schema that
	// cannot be read only costs speed.
	schema, _ := source.Introspect(ctx, src, "")
	var problems ErrorList
	failed := map[string]error{}
	for _, tm := range cat.Maps {
		key := tm.Table.Key()
		if _, done := c.tables[key]; !done && failed[key] == nil {
			if err := c.probe(ctx, src, tm.Table, schema); err != nil {
				failed[key] = err
			}
		}
		if err := failed[key]; err != nil {
			problems = append(problems, &Error{Pos: tablePos(tm), Msg: err.Error()})
		}
	}
	if schema != nil {
		c.readSchema(cat, schema)
	}
	var files []string
	for _, tm := range cat.Maps {
		problems = append(problems, c.checkMap(tm)...)
		files = append(files, tm.Pos.File)
	}
	c.remember(cat)
	return c, problems.Sorted(files...)
}

// remember resolves every column name the catalog uses once, so that the
// planner's many lookups are map reads; the map is not written again, so
// concurrent planners may read it.
func (c *Columns) remember(cat *Catalog) {
	c.found = map[string]source.Column{}
	add := func(t LogicalTable, name string) {
		if col, err := c.resolve(t, name); err == nil {
			c.found[t.Key()+"\x00"+name] = col
		}
	}
	terms := func(t LogicalTable, ms ...TermMap) {
		for _, m := range ms {
			for _, col := range m.Columns() {
				add(t, col)
			}
		}
	}
	for _, tm := range cat.Maps {
		terms(tm.Table, tm.Subject)
		terms(tm.Table, tm.Graphs...)
		for _, pom := range tm.PredicateObjects {
			terms(tm.Table, pom.Predicates...)
			terms(tm.Table, pom.Graphs...)
			for _, om := range pom.Objects {
				if om.Term != nil {
					terms(tm.Table, *om.Term)
					continue
				}
				for _, j := range om.Ref.Joins {
					add(tm.Table, j.Child)
					add(om.Ref.Parent.Table, j.Parent)
				}
				terms(om.Ref.Parent.Table, om.Ref.Parent.Subject)
			}
		}
	}
}

// tablePos is where a triples map's logical table was written, or the map's
// own position when the table was not written in a file.
func tablePos(tm *TriplesMap) Pos {
	if tm.Table.Pos.Line > 0 {
		return tm.Table.Pos
	}
	return tm.Pos
}

// probe reads the result columns of a logical table. When the table cannot be
// read, the error says why; for a table the schema lacks, it lists the tables
// the schema has.
func (c *Columns) probe(ctx context.Context, src source.Source, t LogicalTable, schema *source.Schema) error {
	from, err := FromClause(t, src.Dialect())
	if err != nil {
		return err
	}
	// The probe reads no row: "1 = 0" is the planner's own constant, not a value.
	rows, err := src.Query(ctx, "SELECT * FROM "+from+" WHERE 1 = 0")
	var cols []source.Column
	if err == nil {
		cols = rows.Columns()
		for rows.Next() {
		}
		err = rows.Err()
		rows.Close()
	}
	if err != nil {
		if t.Query != "" {
			return fmt.Errorf("the database rejects the R2RML view: %w", err)
		}
		if missing, names := missingTable(t.TableName, schema); missing {
			return fmt.Errorf("table %s does not exist (the schema has: %s)", t.TableName, names)
		}
		return fmt.Errorf("reading the columns of table %s: %w", t.TableName, err)
	}
	if name, dup := duplicateColumn(cols, src.Dialect()); dup && t.Query != "" {
		// R2RML §5.4: the result of an R2RML view must not have duplicate column names.
		return fmt.Errorf("the result of the R2RML view has more than one column named %s: name each column once (with AS)", name)
	}
	if t.Query != "" && src.Dialect() == source.SQLite && untyped(cols) {
		// SQLite types values, not expressions: a view's computed column has no
		// declared type, so its first row's value tells the type instead.
		if typed, err := firstRowColumns(ctx, src, from); err == nil && len(typed) == len(cols) {
			for i := range cols {
				if cols[i].DatabaseType == "" {
					cols[i].Kind = typed[i].Kind
				}
			}
		}
	}
	c.tables[t.Key()] = cols
	return nil
}

func untyped(cols []source.Column) bool {
	for _, c := range cols {
		if c.DatabaseType == "" {
			return true
		}
	}
	return false
}

// firstRowColumns reads one row of a FROM item and returns the column types as
// the source derives them from that row's values.
func firstRowColumns(ctx context.Context, src source.Source, from string) ([]source.Column, error) {
	rows, err := src.Query(ctx, "SELECT * FROM "+from+" LIMIT 1")
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	if !rows.Next() {
		return nil, rows.Err()
	}
	return rows.Columns(), nil
}

// duplicateColumn finds a name that two result columns of a view share.
// SQLite renames the second of two equal names in a subquery, such as the
// probe's, to "name:1" (from memory of its source code; TestCheck shows it),
// so there such a pair counts as a repeat too.
func duplicateColumn(cols []source.Column, d source.Dialect) (string, bool) {
	seen := map[string]bool{}
	for _, col := range cols {
		if seen[col.Name] {
			return col.Name, true
		}
		seen[col.Name] = true
	}
	if d != source.SQLite {
		return "", false
	}
	for _, col := range cols {
		i := strings.LastIndexByte(col.Name, ':')
		if i > 0 && seen[col.Name[:i]] && strings.Trim(col.Name[i+1:], "0123456789") == "" && i+1 < len(col.Name) {
			return col.Name[:i], true
		}
	}
	return "", false
}

// missingTable reports whether the introspected schema lacks a table that
// name, as a mapping writes it, would be in, and then the names it has.
func missingTable(name string, schema *source.Schema) (bool, string) {
	if schema == nil {
		return false, ""
	}
	if table, inSchema := schemaTable(name, schema); table != nil || !inSchema {
		return false, ""
	}
	names := make([]string, len(schema.Tables))
	for i, st := range schema.Tables {
		names[i] = st.Name
	}
	if len(names) == 0 {
		return true, "no tables"
	}
	return true, strings.Join(names, ", ")
}

// schemaTable finds the table of the introspected schema that name, as a
// mapping writes it, refers to: an unqualified name, or one qualified with the
// schema's name. inSchema is false for a name that points into another schema
// or is not a name at all, about which the schema says nothing.
func schemaTable(name string, schema *source.Schema) (table *source.Table, inSchema bool) {
	parts, err := ParseName(name)
	switch {
	case err != nil || len(parts) > 2:
		return nil, false
	case len(parts) == 2:
		if !parts[0].Matches(schema.Name) {
			return nil, false
		}
		parts = parts[1:]
	}
	for _, st := range schema.Tables {
		if parts[0].Matches(st.Name) {
			table = st
		}
	}
	return table, true
}

// readSchema takes from the introspected schema what a result column's metadata
// does not say: keys, NOT NULL constraints, and the type family where the
// declaration is more precise (MySQL reports BOOLEAN columns as plain integers).
func (c *Columns) readSchema(cat *Catalog, schema *source.Schema) {
	for _, tm := range cat.Maps {
		t := tm.Table
		if t.Query != "" {
			continue
		}
		table, _ := schemaTable(t.TableName, schema)
		if table == nil || table.View {
			continue
		}
		var keys [][]string
		if len(table.PrimaryKey) > 0 {
			keys = append(keys, table.PrimaryKey)
		}
		for _, u := range table.UniqueKeys {
			notNull := true
			for _, col := range u {
				if tc := table.Column(col); tc == nil || tc.Nullable {
					notNull = false
				}
			}
			if notNull {
				keys = append(keys, u)
			}
		}
		c.keys[t.Key()] = keys
		c.foreign[t.Key()] = table.ForeignKeys
		cols := c.tables[t.Key()]
		for i := range cols {
			tc := table.Column(cols[i].Name)
			if tc == nil {
				continue
			}
			cols[i].NotNull = !tc.Nullable
			if tc.Kind == source.TypeBoolean {
				cols[i].Kind = source.TypeBoolean
			}
		}
	}
}

// ForeignKeys returns the foreign key constraints of a logical table that is a
// base table of the source's current schema; none otherwise.
func (c *Columns) ForeignKeys(t LogicalTable) []source.ForeignKey { return c.foreign[t.Key()] }

// NotNull reports whether the schema keeps the column that the database
// names col, of logical table t, from ever being NULL; false when it does
// not know the column.
func (c *Columns) NotNull(t LogicalTable, col string) bool {
	for _, tc := range c.tables[t.Key()] {
		if tc.Name == col {
			return tc.NotNull
		}
	}
	return false
}

// Keys returns the column sets (as the database names the columns) whose values
// determine a row of the logical table; none for views and unknown tables.
func (c *Columns) Keys(t LogicalTable) [][]string { return c.keys[t.Key()] }

// FromClause renders a logical table as a FROM item of the dialect, with the
// alias "t" for views.
func FromClause(t LogicalTable, d source.Dialect) (string, error) {
	if t.Query != "" {
		return "(" + t.Query + ") " + d.QuoteIdent("t"), nil
	}
	parts, err := ParseName(t.TableName)
	if err != nil {
		return "", err
	}
	var names []string
	for _, p := range parts {
		if p.Quoted {
			names = append(names, d.QuoteIdent(p.Name))
		} else {
			names = append(names, p.Name)
		}
	}
	return strings.Join(names, "."), nil
}

func (t LogicalTable) describe() string {
	if t.Query != "" {
		return "the R2RML view"
	}
	return "table " + t.TableName
}

// checkMap reports the columns that the term maps and join conditions of tm
// name but their tables lack, and the datatypes that may not fit their
// columns. Tables that could not be read were reported by the probe.
func (c *Columns) checkMap(tm *TriplesMap) ErrorList {
	var problems ErrorList
	report := func(pos Pos, format string, args ...any) {
		problems = append(problems, &Error{Pos: pos, Msg: fmt.Sprintf(format, args...)})
	}
	check := func(t LogicalTable, col string, pos Pos, role string) {
		if _, known := c.tables[t.Key()]; !known {
			return
		}
		if _, err := c.Lookup(t, col); err != nil {
			report(pos, "%s%v", role, err)
		}
	}
	checkTerm := func(m TermMap) {
		for _, col := range m.Columns() {
			check(tm.Table, col, m.Pos, "")
		}
	}
	checkTerm(tm.Subject)
	for _, g := range tm.Graphs {
		checkTerm(g)
	}
	for _, pom := range tm.PredicateObjects {
		for _, m := range pom.Predicates {
			checkTerm(m)
		}
		for _, m := range pom.Graphs {
			checkTerm(m)
		}
		for _, om := range pom.Objects {
			if om.Term != nil {
				checkTerm(*om.Term)
				if w := c.datatypeWarning(tm.Table, *om.Term); w != nil {
					problems = append(problems, w)
				}
				continue
			}
			for _, j := range om.Ref.Joins {
				pos := j.Pos
				if pos.Line == 0 {
					pos = om.Ref.Pos
				}
				check(tm.Table, j.Child, pos, "rr:child: ")
				check(om.Ref.Parent.Table, j.Parent, pos, "rr:parent: ")
			}
		}
	}
	return problems
}

// fitting lists, for each type family, the XSD datatypes whose lexical space
// holds the canonical lexical form of every value of the family (the form
// Lexical gives, which a literal with rr:datatype carries: R2RML §10.2). For
// integers it includes the types derived from xsd:integer, whose value ranges
// a column's values may still exceed. xsd:string fits every family.
var fitting = map[source.TypeKind][]rdf.IRI{
	source.TypeInteger:     append([]rdf.IRI{rdf.XSDInteger, rdf.XSDDecimal, rdf.XSDDouble, rdf.XSDFloat}, integerTypes...),
	source.TypeDecimal:     {rdf.XSDDecimal, rdf.XSDDouble, rdf.XSDFloat},
	source.TypeFloat:       {rdf.XSDDouble, rdf.XSDFloat},
	source.TypeReal:        {rdf.XSDDouble, rdf.XSDFloat},
	source.TypeBoolean:     {rdf.XSDBoolean},
	source.TypeBinary:      {rdf.XSDHexBin},
	source.TypeDate:        {rdf.XSDDate},
	source.TypeTime:        {rdf.XSDTime},
	source.TypeTimestamp:   {rdf.XSDDateTime},
	source.TypeTimestampTZ: {rdf.XSDDateTime, rdf.XSDNS + "dateTimeStamp"},
}

// integerTypes are the datatypes XML Schema 1.1 Part 2 (§3.4) derives from
// xsd:integer.
var integerTypes = []rdf.IRI{
	rdf.XSDNS + "nonPositiveInteger", rdf.XSDNS + "negativeInteger", rdf.XSDNS + "long",
	rdf.XSDNS + "int", rdf.XSDNS + "short", rdf.XSDNS + "byte", rdf.XSDNS + "nonNegativeInteger",
	rdf.XSDNS + "unsignedLong", rdf.XSDNS + "unsignedInt", rdf.XSDNS + "unsignedShort",
	rdf.XSDNS + "unsignedByte", rdf.XSDNS + "positiveInteger",
}

// judged reports whether the fit of datatype dt to a column can be judged: it
// is one of the datatypes some family's values fit. Other datatypes, such as
// xsd:gYear or one outside XML Schema, are left to the mapping's author.
func judged(dt rdf.IRI) bool {
	for _, dts := range fitting {
		if slices.Contains(dts, dt) {
			return true
		}
	}
	return false
}

// datatypeWarning warns when the rr:datatype of a column-valued literal map is
// one whose lexical space the column's values may not be in: such rows give
// ill-typed literals (R2RML §10.2 keeps the value's lexical form, whatever the
// datatype).
func (c *Columns) datatypeWarning(t LogicalTable, m TermMap) *Error {
	if m.Kind != Column || m.TermType != rdf.KindLiteral || m.Datatype == "" || m.Datatype == rdf.XSDString || !judged(m.Datatype) {
		return nil
	}
	col, err := c.Lookup(t, m.Column)
	// A column of no known type (SQLite reports none for an expression) may
	// hold anything: nothing to judge.
	if err != nil || col.DatabaseType == "" || slices.Contains(fitting[col.Kind], m.Datatype) {
		return nil
	}
	return &Error{Pos: m.Pos, Warning: true, Msg: fmt.Sprintf(
		"rr:datatype %s on column %s of type %s: its values need not be %s lexical forms, and those that are not give ill-typed literals (the column's natural datatype is %s)",
		shortXSD(m.Datatype), m.Column, col.DatabaseType, shortXSD(m.Datatype), naturalName(col.Kind))}
}

// shortXSD writes an XSD datatype as xsd:name, any other IRI in brackets.
func shortXSD(dt rdf.IRI) string {
	if local, ok := strings.CutPrefix(string(dt), rdf.XSDNS); ok {
		return "xsd:" + local
	}
	return dt.String()
}

func naturalName(k source.TypeKind) string {
	if dt := NaturalDatatype(k); dt != "" {
		return shortXSD(dt)
	}
	return "xsd:string"
}

// Lookup finds a column of a logical table by the name a mapping gives it,
// as the source's database would resolve it (see Ident.Matches).
func (c *Columns) Lookup(t LogicalTable, name string) (source.Column, error) {
	if col, ok := c.found[t.Key()+"\x00"+name]; ok {
		return col, nil
	}
	return c.resolve(t, name)
}

func (c *Columns) resolve(t LogicalTable, name string) (source.Column, error) {
	cols := c.tables[t.Key()]
	id, err := columnIdent(name)
	if err != nil {
		return source.Column{}, err
	}
	for _, col := range cols {
		if id.Matches(col.Name) {
			return col, nil
		}
	}
	// MySQL and SQLite keep the case a column was created with, delimited or
	// not, and find columns without regard to case: there a regular Name is
	// the column reported as "Name" (which in PostgreSQL it is not). A
	// delimited identifier still matches exactly.
	if !id.Quoted && (c.dialect == source.MySQL || c.dialect == source.SQLite) {
		for _, col := range cols {
			if strings.EqualFold(id.Name, col.Name) {
				return col, nil
			}
		}
	}
	names := make([]string, len(cols))
	for i, col := range cols {
		names[i] = col.Name
	}
	sort.Strings(names)
	return source.Column{}, fmt.Errorf("column %q is not in %s (it has: %s)", name, t.describe(), strings.Join(names, ", "))
}

// ColumnIdent parses a column name as a mapping writes it: a regular or a
// delimited identifier, never qualified.
func ColumnIdent(name string) (Ident, error) { return columnIdent(name) }

func columnIdent(name string) (Ident, error) {
	parts, err := ParseName(name)
	if err != nil {
		return Ident{}, err
	}
	if len(parts) != 1 {
		return Ident{}, fmt.Errorf("column name %q must not be qualified", name)
	}
	return parts[0], nil
}
