package source

import (
	"context"
	"errors"
	"strings"
)

// The PostgreSQL catalog queries. Partitions are left out: their rows are the
// partitioned table's. Domains are classified by their base type.
const (
	pgTablesSQL = `
SELECT c.relname, c.relkind IN ('v', 'm')
FROM pg_catalog.pg_class c JOIN pg_catalog.pg_namespace n ON n.oid = c.relnamespace
WHERE n.nspname = $1 AND c.relkind IN ('r', 'p', 'v', 'm') AND NOT c.relispartition`

	pgColumnsSQL = `
SELECT c.relname, a.attname, pg_catalog.format_type(a.atttypid, a.atttypmod),
       COALESCE(bt.typname, t.typname), NOT a.attnotnull
FROM pg_catalog.pg_attribute a
JOIN pg_catalog.pg_class c ON c.oid = a.attrelid
JOIN pg_catalog.pg_namespace n ON n.oid = c.relnamespace
JOIN pg_catalog.pg_type t ON t.oid = a.atttypid
LEFT JOIN pg_catalog.pg_type bt ON t.typtype = 'd' AND bt.oid = t.typbasetype
WHERE n.nspname = $1 AND a.attnum > 0 AND NOT a.attisdropped
ORDER BY c.relname, a.attnum`

	// Unique indexes cover primary keys and unique constraints; only key
	// columns count (not INCLUDE ones).
	pgKeysSQL = `
SELECT c.relname, i.relname, x.indisprimary, a.attname
FROM pg_catalog.pg_index x
JOIN pg_catalog.pg_class c ON c.oid = x.indrelid
JOIN pg_catalog.pg_namespace n ON n.oid = c.relnamespace
JOIN pg_catalog.pg_class i ON i.oid = x.indexrelid
CROSS JOIN LATERAL unnest(x.indkey::int2[]) WITH ORDINALITY AS k(attnum, ord)
JOIN pg_catalog.pg_attribute a ON a.attrelid = x.indrelid AND a.attnum = k.attnum
WHERE n.nspname = $1 AND x.indisunique AND x.indpred IS NULL AND x.indexprs IS NULL
  AND k.ord <= x.indnkeyatts
ORDER BY c.relname, i.relname, k.ord`

	pgForeignKeysSQL = `
SELECT c.relname, con.conname, a.attname, fn.nspname, fc.relname, fa.attname
FROM pg_catalog.pg_constraint con
JOIN pg_catalog.pg_class c ON c.oid = con.conrelid
JOIN pg_catalog.pg_namespace n ON n.oid = c.relnamespace
JOIN pg_catalog.pg_class fc ON fc.oid = con.confrelid
JOIN pg_catalog.pg_namespace fn ON fn.oid = fc.relnamespace
CROSS JOIN LATERAL unnest(con.conkey, con.confkey) WITH ORDINALITY AS k(attnum, fattnum, ord)
JOIN pg_catalog.pg_attribute a ON a.attrelid = con.conrelid AND a.attnum = k.attnum
JOIN pg_catalog.pg_attribute fa ON fa.attrelid = con.confrelid AND fa.attnum = k.fattnum
WHERE n.nspname = $1 AND con.contype = 'f'
ORDER BY c.relname, con.conname, k.ord`
)

func introspectPostgres(ctx context.Context, src Source, schema string) (*Schema, error) {
	if schema == "" {
		err := readCatalog(ctx, src, catalogQuery{sql: "SELECT current_schema()", row: func(v []any) { schema = text(v[0]) }})
		if err != nil {
			return nil, err
		}
		if schema == "" {
			return nil, errors.New("the session has no current schema (search_path names none that exists)")
		}
	}
	b := newSchemaBuilder(Postgres, schema)
	args := []any{schema}
	err := readCatalog(ctx, src,
		catalogQuery{pgTablesSQL, args, func(v []any) {
			b.addTable(text(v[0]), v[1] == true)
		}},
		catalogQuery{pgColumnsSQL, args, func(v []any) {
			b.addColumn(text(v[0]), TableColumn{
				Name:         text(v[1]),
				DatabaseType: strings.ToUpper(text(v[2])),
				Kind:         pgKind(text(v[3])),
				Nullable:     v[4] == true,
			})
		}},
		catalogQuery{pgKeysSQL, args, func(v []any) {
			b.addKeyColumn(text(v[0]), text(v[1]), v[2] == true, text(v[3]))
		}},
		catalogQuery{pgForeignKeysSQL, args, func(v []any) {
			b.addForeignKeyColumn(text(v[0]), text(v[1]), text(v[2]), text(v[3]), text(v[4]), text(v[5]))
		}},
	)
	if err != nil {
		return nil, err
	}
	return b.s, nil
}
