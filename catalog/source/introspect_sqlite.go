package source

import (
	"context"
	"fmt"
	"strings"
)

// The SQLite catalog queries, on the table-valued pragma functions, whose
// arguments (table, then schema) are bound like any value.
const (
	liteTablesSQL = `
SELECT name, type = 'view' FROM pragma_table_list WHERE schema = ?1
  AND type IN ('table', 'view') AND name NOT LIKE 'sqlite\_%' ESCAPE '\'`

	// pk is the column's position in the primary key, 0 if it is not in it.
	liteColumnsSQL = `SELECT name, type, "notnull", pk FROM pragma_table_info(?1, ?2) ORDER BY cid`

	// origin 'pk' is the index of a primary key that is not the rowid.
	liteIndexesSQL = `
SELECT name, origin = 'pk' FROM pragma_index_list(?1, ?2)
WHERE "unique" AND NOT partial ORDER BY name`

	// cid -2 marks an expression, -1 the rowid.
	liteIndexColumnsSQL = `SELECT name, cid < 0 FROM pragma_index_info(?1, ?2) ORDER BY seqno`

	// "to" is NULL when the key references the parent's primary key implicitly.
	liteForeignKeysSQL = `SELECT id, "table", "from", "to" FROM pragma_foreign_key_list(?1, ?2) ORDER BY id, seq`
)

func introspectSQLite(ctx context.Context, src Source, schema string) (*Schema, error) {
	if schema == "" {
		schema = "main"
	}
	b := newSchemaBuilder(SQLite, schema)
	err := readCatalog(ctx, src, catalogQuery{liteTablesSQL, []any{schema}, func(v []any) {
		b.addTable(text(v[0]), integer(v[1]) == 1)
	}})
	if err != nil {
		return nil, err
	}
	if len(b.s.Tables) == 0 {
		// pragma_table_list is empty for a schema that is not attached.
		if err := sqliteSchemaExists(ctx, src, schema); err != nil {
			return nil, err
		}
	}
	for _, t := range b.s.Tables {
		if err := introspectSQLiteTable(ctx, src, b, t); err != nil {
			return nil, fmt.Errorf("table %q: %w", t.Name, err)
		}
	}
	// An implicit reference means the parent's primary key; SQLite also
	// matches table names without regard to case.
	for _, t := range b.s.Tables {
		for i := range t.ForeignKeys {
			fk := &t.ForeignKeys[i]
			parent := b.tables[fk.RefTable]
			for _, p := range b.s.Tables {
				if parent == nil && strings.EqualFold(p.Name, fk.RefTable) {
					parent = p
				}
			}
			if parent == nil {
				continue
			}
			fk.RefTable = parent.Name
			if fk.RefColumns[0] == "" && len(parent.PrimaryKey) == len(fk.Columns) {
				fk.RefColumns = parent.PrimaryKey
			}
		}
	}
	return b.s, nil
}

func sqliteSchemaExists(ctx context.Context, src Source, schema string) error {
	found := false
	err := readCatalog(ctx, src, catalogQuery{"SELECT 1 FROM pragma_database_list WHERE name = ?1", []any{schema}, func([]any) { found = true }})
	if err == nil && !found {
		err = fmt.Errorf("no attached database is named %q", schema)
	}
	return err
}

func introspectSQLiteTable(ctx context.Context, src Source, b *schemaBuilder, t *Table) error {
	args := []any{t.Name, t.Schema}
	var pk []string
	var indexes []string
	var pkIndex string
	err := readCatalog(ctx, src,
		catalogQuery{liteColumnsSQL, args, func(v []any) {
			decl := strings.ToUpper(text(v[1]))
			kind, _ := sqliteKind(decl)
			if pos := int(integer(v[3])); pos > 0 {
				pk = append(pk, make([]string, max(0, pos-len(pk)))...)
				pk[pos-1] = text(v[0])
			}
			b.addColumn(t.Name, TableColumn{Name: text(v[0]), DatabaseType: decl, Kind: kind, Nullable: integer(v[2]) == 0})
		}},
		catalogQuery{liteIndexesSQL, args, func(v []any) {
			if integer(v[1]) == 1 {
				pkIndex = text(v[0])
			} else {
				indexes = append(indexes, text(v[0]))
			}
		}},
		catalogQuery{liteForeignKeysSQL, args, func(v []any) {
			b.addForeignKeyColumn(t.Name, fmt.Sprintf("fk%d", integer(v[0])), text(v[2]), t.Schema, text(v[1]), text(v[3]))
		}},
	)
	if err != nil {
		return err
	}
	t.PrimaryKey = pk
	// A rowid alias (a lone INTEGER PRIMARY KEY column) is never NULL; other
	// primary key columns may be, unless declared NOT NULL.
	if len(pk) == 1 && pkIndex == "" {
		if c := t.Column(pk[0]); c != nil && c.DatabaseType == "INTEGER" {
			c.Nullable = false
		}
	}
	for _, idx := range indexes {
		var cols []string
		usable := true
		err := readCatalog(ctx, src, catalogQuery{liteIndexColumnsSQL, []any{idx, t.Schema}, func(v []any) {
			usable = usable && integer(v[1]) == 0
			cols = append(cols, text(v[0]))
		}})
		if err != nil {
			return err
		}
		if usable && len(cols) > 0 {
			t.UniqueKeys = append(t.UniqueKeys, cols)
		}
	}
	return nil
}
