package source

import (
	"context"
	"errors"
	"strings"
)

// The MySQL and MariaDB catalog queries, on information_schema.
const (
	myTablesSQL = `
SELECT TABLE_NAME, TABLE_TYPE = 'VIEW'
FROM information_schema.TABLES WHERE TABLE_SCHEMA = ?`

	myColumnsSQL = `
SELECT TABLE_NAME, COLUMN_NAME, COLUMN_TYPE, IS_NULLABLE = 'YES'
FROM information_schema.COLUMNS WHERE TABLE_SCHEMA = ?
ORDER BY TABLE_NAME, ORDINAL_POSITION`

	// An index over an expression has no COLUMN_NAME; one over a column
	// prefix has a SUB_PART. Neither makes its columns unique.
	myKeysSQL = `
SELECT TABLE_NAME, INDEX_NAME, INDEX_NAME = 'PRIMARY', COLUMN_NAME, COLUMN_NAME IS NULL OR SUB_PART IS NOT NULL
FROM information_schema.STATISTICS WHERE TABLE_SCHEMA = ? AND NON_UNIQUE = 0
ORDER BY TABLE_NAME, INDEX_NAME, SEQ_IN_INDEX`

	myForeignKeysSQL = `
SELECT TABLE_NAME, CONSTRAINT_NAME, COLUMN_NAME, REFERENCED_TABLE_SCHEMA, REFERENCED_TABLE_NAME, REFERENCED_COLUMN_NAME
FROM information_schema.KEY_COLUMN_USAGE
WHERE TABLE_SCHEMA = ? AND REFERENCED_TABLE_NAME IS NOT NULL
ORDER BY TABLE_NAME, CONSTRAINT_NAME, ORDINAL_POSITION`
)

func introspectMySQL(ctx context.Context, src Source, schema string) (*Schema, error) {
	if schema == "" {
		err := readCatalog(ctx, src, catalogQuery{sql: "SELECT DATABASE()", row: func(v []any) { schema = text(v[0]) }})
		if err != nil {
			return nil, err
		}
		if schema == "" {
			return nil, errors.New("the DSN names no database")
		}
	}
	b := newSchemaBuilder(MySQL, schema)
	args := []any{schema}
	unusable := map[[2]string]bool{} // unique keys with an expression or prefix part
	err := readCatalog(ctx, src,
		catalogQuery{myTablesSQL, args, func(v []any) {
			b.addTable(text(v[0]), integer(v[1]) == 1)
		}},
		catalogQuery{myColumnsSQL, args, func(v []any) {
			b.addColumn(text(v[0]), TableColumn{
				Name:         text(v[1]),
				DatabaseType: strings.ToUpper(text(v[2])),
				Kind:         mysqlKind(text(v[2])),
				Nullable:     integer(v[3]) == 1,
			})
		}},
		catalogQuery{myKeysSQL, args, func(v []any) {
			table, key, primary := text(v[0]), text(v[1]), integer(v[2]) == 1
			switch {
			case unusable[[2]string{table, key}]:
			case integer(v[4]) == 1:
				unusable[[2]string{table, key}] = true
				b.dropKey(table, key, primary)
			default:
				b.addKeyColumn(table, key, primary, text(v[3]))
			}
		}},
		catalogQuery{myForeignKeysSQL, args, func(v []any) {
			b.addForeignKeyColumn(text(v[0]), text(v[1]), text(v[2]), text(v[3]), text(v[4]), text(v[5]))
		}},
	)
	if err != nil {
		return nil, err
	}
	return b.s, nil
}
