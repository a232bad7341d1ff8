package source

import (
	"context"
	"fmt"
	"slices"
	"strconv"
	"strings"
)

// Schema is the structure of one schema of a source: a PostgreSQL schema, a
// MySQL database, or an SQLite database ("main" or an attached one).
type Schema struct {
	Dialect Dialect
	// Name is the schema's name.
	Name string
	// Tables are the schema's tables and views, ordered by name (bytewise).
	Tables []*Table
}

// Table describes a table or view.
type Table struct {
	// Schema is the name of the schema the table is in.
	Schema string
	Name   string
	// View says that the table is a view (PostgreSQL: or a materialized view).
	View bool
	// Columns are in ordinal order.
	Columns []TableColumn
	// PrimaryKey names the primary key's columns in key order; nil if none.
	PrimaryKey []string
	// UniqueKeys are the other sets of columns a unique constraint or unique
	// index covers, each in key order. Partial unique indexes and those over
	// expressions or column prefixes guarantee no unique columns and are left out.
	UniqueKeys [][]string
	// ForeignKeys are ordered by constraint name.
	ForeignKeys []ForeignKey
}

// TableColumn describes a column of a table.
type TableColumn struct {
	Name string
	// DatabaseType is the column's type as declared, upper case, with its
	// modifiers: "NUMERIC(10,2)", "CHARACTER VARYING(50)", "TINYINT(1)".
	DatabaseType string
	Kind         TypeKind
	Nullable     bool
}

// ForeignKey is a foreign key constraint: Columns of the table reference
// RefColumns of RefTable, position by position.
type ForeignKey struct {
	// Name is the constraint's name (SQLite has none: "fk" and its number).
	Name       string
	Columns    []string
	RefSchema  string
	RefTable   string
	RefColumns []string
}

// Table returns the table with the given name (compared exactly), or nil.
func (s *Schema) Table(name string) *Table {
	for _, t := range s.Tables {
		if t.Name == name {
			return t
		}
	}
	return nil
}

// Column returns the column with the given name (compared exactly), or nil.
func (t *Table) Column(name string) *TableColumn {
	for i := range t.Columns {
		if t.Columns[i].Name == name {
			return &t.Columns[i]
		}
	}
	return nil
}

// Introspect reads the tables, columns, keys and foreign keys of one schema of
// src. An empty schema means the session's current one: PostgreSQL's
// current_schema() (normally public), MySQL's current database, SQLite's main.
func Introspect(ctx context.Context, src Source, schema string) (*Schema, error) {
	var (
		s   *Schema
		err error
	)
	switch src.Dialect() {
	case Postgres:
		s, err = introspectPostgres(ctx, src, schema)
	case MySQL:
		s, err = introspectMySQL(ctx, src, schema)
	case SQLite:
		s, err = introspectSQLite(ctx, src, schema)
	default:
		return nil, fmt.Errorf("introspect: unsupported dialect %v", src.Dialect())
	}
	if err != nil {
		if schema == "" {
			return nil, fmt.Errorf("introspect %s schema: %w", src.Dialect(), err)
		}
		return nil, fmt.Errorf("introspect %s schema %q: %w", src.Dialect(), schema, err)
	}
	slices.SortFunc(s.Tables, func(a, b *Table) int { return strings.Compare(a.Name, b.Name) })
	return s, nil
}

// catalogQuery is one query of an introspection and what to do with each row.
type catalogQuery struct {
	sql  string
	args []any
	row  func(v []any)
}

// readCatalog runs catalog queries in order.
func readCatalog(ctx context.Context, src Source, queries ...catalogQuery) error {
	for _, q := range queries {
		if err := readRows(ctx, src, q); err != nil {
			return err
		}
	}
	return nil
}

func readRows(ctx context.Context, src Source, q catalogQuery) error {
	rows, err := src.Query(ctx, q.sql, q.args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	for rows.Next() {
		q.row(rows.Values())
	}
	if err := rows.Err(); err != nil {
		return err
	}
	return rows.Close()
}

// text reads a catalog value as a string: catalogs report names as text, or
// as bytes under a binary collation.
func text(v any) string {
	switch v := v.(type) {
	case string:
		return v
	case []byte:
		return string(v)
	case nil:
		return ""
	}
	return fmt.Sprint(v)
}

// integer reads a catalog value as an integer.
func integer(v any) int64 {
	switch v := v.(type) {
	case int64:
		return v
	case string:
		n, _ := strconv.ParseInt(v, 10, 64)
		return n
	}
	return 0
}

// schemaBuilder collects a Schema from catalog rows, which each dialect reads
// ordered by table, then key or constraint, then position.
type schemaBuilder struct {
	s      *Schema
	tables map[string]*Table
	// lastKey is the name of the unique key each table's last UniqueKeys entry came from.
	lastKey map[*Table]string
}

func newSchemaBuilder(d Dialect, name string) *schemaBuilder {
	return &schemaBuilder{s: &Schema{Dialect: d, Name: name}, tables: map[string]*Table{}, lastKey: map[*Table]string{}}
}

func (b *schemaBuilder) addTable(name string, view bool) {
	t := &Table{Schema: b.s.Name, Name: name, View: view}
	b.s.Tables = append(b.s.Tables, t)
	b.tables[name] = t
}

// addColumn adds a column to a table; rows of tables not added are ignored
// (the catalog queries do not all see the same set of relations).
func (b *schemaBuilder) addColumn(table string, c TableColumn) {
	if t := b.tables[table]; t != nil {
		t.Columns = append(t.Columns, c)
	}
}

// addKeyColumn adds the next column of a primary or unique key.
func (b *schemaBuilder) addKeyColumn(table, key string, primary bool, column string) {
	t := b.tables[table]
	switch {
	case t == nil:
	case primary:
		t.PrimaryKey = append(t.PrimaryKey, column)
	case len(t.UniqueKeys) > 0 && b.lastKey[t] == key:
		last := &t.UniqueKeys[len(t.UniqueKeys)-1]
		*last = append(*last, column)
	default:
		t.UniqueKeys = append(t.UniqueKeys, []string{column})
		b.lastKey[t] = key
	}
}

// dropKey removes a key found not to make its columns unique after its first
// columns were added (a later part is an expression or a column prefix).
func (b *schemaBuilder) dropKey(table, key string, primary bool) {
	t := b.tables[table]
	switch {
	case t == nil:
	case primary:
		t.PrimaryKey = nil
	case len(t.UniqueKeys) > 0 && b.lastKey[t] == key:
		t.UniqueKeys = t.UniqueKeys[:len(t.UniqueKeys)-1]
		b.lastKey[t] = ""
	}
}

// addForeignKeyColumn adds the next column pair of a foreign key.
func (b *schemaBuilder) addForeignKeyColumn(table, name, column, refSchema, refTable, refColumn string) {
	t := b.tables[table]
	if t == nil {
		return
	}
	n := len(t.ForeignKeys)
	if n == 0 || t.ForeignKeys[n-1].Name != name {
		t.ForeignKeys = append(t.ForeignKeys, ForeignKey{Name: name, RefSchema: refSchema, RefTable: refTable})
		n++
	}
	fk := &t.ForeignKeys[n-1]
	fk.Columns = append(fk.Columns, column)
	fk.RefColumns = append(fk.RefColumns, refColumn)
}
