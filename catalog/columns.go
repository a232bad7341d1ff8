package catalog

import (
	"context"
	"fmt"
	"sort"
	"strings"

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
// map or join condition names exists. Errors name the mapping position.
func ProbeColumns(ctx context.Context, src source.Source, cat *Catalog) (*Columns, error) {
	c := &Columns{tables: map[string][]source.Column{}, keys: map[string][][]string{}}
	for _, tm := range cat.Maps {
		if err := c.probe(ctx, src, tm.Table, tm.Pos); err != nil {
			return nil, err
		}
	}
	// Keys make the planner's SQL simpler (no DISTINCT, no self-joins); without
	// them every answer is still right, so a schema that cannot be read only
	// costs speed.
	if schema, err := source.Introspect(ctx, src, ""); err == nil {
		c.readSchema(cat, schema)
	}
	for _, tm := range cat.Maps {
		if err := c.checkMap(tm); err != nil {
			return nil, err
		}
	}
	return c, nil
}

func (c *Columns) probe(ctx context.Context, src source.Source, t LogicalTable, pos Pos) error {
	key := t.Key()
	if _, done := c.tables[key]; done {
		return nil
	}
	from, err := FromClause(t, src.Dialect())
	if err != nil {
		return fmt.Errorf("%s: %w", pos, err)
	}
	// The probe reads no row: "1 = 0" is the planner's own constant, not a value.
	rows, err := src.Query(ctx, "SELECT * FROM "+from+" WHERE 1 = 0")
	if err != nil {
		return fmt.Errorf("%s: reading the columns of %s: %w", pos, t.describe(), err)
	}
	defer rows.Close()
	for rows.Next() {
	}
	if err := rows.Err(); err != nil {
		return fmt.Errorf("%s: reading the columns of %s: %w", pos, t.describe(), err)
	}
	c.tables[key] = rows.Columns()
	return nil
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
		parts, err := ParseName(t.TableName)
		if err != nil || len(parts) != 1 {
			continue // qualified names may name another schema: no keys known
		}
		var table *source.Table
		for _, st := range schema.Tables {
			if parts[0].Matches(st.Name) {
				table = st
			}
		}
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

func (c *Columns) checkMap(tm *TriplesMap) error {
	check := func(t LogicalTable, col string, pos Pos) error {
		if _, err := c.Lookup(t, col); err != nil {
			return fmt.Errorf("%s: %w", pos, err)
		}
		return nil
	}
	checkTerm := func(m TermMap) error {
		for _, col := range m.Columns() {
			if err := check(tm.Table, col, m.Pos); err != nil {
				return err
			}
		}
		return nil
	}
	if err := checkTerm(tm.Subject); err != nil {
		return err
	}
	for _, g := range tm.Graphs {
		if err := checkTerm(g); err != nil {
			return err
		}
	}
	for _, pom := range tm.PredicateObjects {
		for _, m := range append(append([]TermMap{}, pom.Predicates...), pom.Graphs...) {
			if err := checkTerm(m); err != nil {
				return err
			}
		}
		for _, om := range pom.Objects {
			if om.Term != nil {
				if err := checkTerm(*om.Term); err != nil {
					return err
				}
				continue
			}
			for _, j := range om.Ref.Joins {
				if err := check(tm.Table, j.Child, om.Ref.Pos); err != nil {
					return err
				}
				if err := check(om.Ref.Parent.Table, j.Parent, om.Ref.Pos); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

// Lookup finds a column of a logical table by the name a mapping gives it.
func (c *Columns) Lookup(t LogicalTable, name string) (source.Column, error) {
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
