package source

import (
	"strings"
	"time"
)

// pgKind classifies a PostgreSQL type by its pg_type name (e.g. "int4").
// timetz is TypeOther: its values carry an offset that TypeTime's form has not.
func pgKind(typname string) TypeKind {
	switch strings.ToLower(typname) {
	case "int2", "int4", "int8":
		return TypeInteger
	case "numeric":
		return TypeDecimal
	case "float4":
		return TypeReal
	case "float8":
		return TypeFloat
	case "bool":
		return TypeBoolean
	case "bytea":
		return TypeBinary
	case "date":
		return TypeDate
	case "time":
		return TypeTime
	case "timestamp":
		return TypeTimestamp
	case "timestamptz":
		return TypeTimestampTZ
	case "text", "varchar", "bpchar", "char", "name", "citext":
		return TypeString
	}
	return TypeOther
}

// mysqlKind classifies a MySQL or MariaDB type: either a type name as the driver
// reports it for a result column ("UNSIGNED INT", "VARBINARY"), or a column type
// as information_schema.COLUMNS.COLUMN_TYPE spells it ("tinyint(1)",
// "decimal(10,2) unsigned"). Only the latter shows the display width that makes
// TINYINT(1), the type BOOLEAN stands for, and BIT(1) booleans.
func mysqlKind(typ string) TypeKind {
	t := strings.ToLower(strings.TrimSpace(typ))
	if strings.HasPrefix(t, "tinyint(1)") || t == "bit(1)" || t == "boolean" || t == "bool" {
		return TypeBoolean
	}
	t = strings.TrimPrefix(t, "unsigned ")
	if i := strings.IndexAny(t, "( "); i >= 0 {
		t = t[:i]
	}
	switch t {
	case "tinyint", "smallint", "mediumint", "int", "integer", "bigint", "year":
		return TypeInteger
	case "decimal", "numeric":
		return TypeDecimal
	case "float":
		return TypeReal
	case "double", "real":
		return TypeFloat
	case "char", "varchar", "tinytext", "text", "mediumtext", "longtext", "enum", "set":
		return TypeString
	case "binary", "varbinary", "tinyblob", "blob", "mediumblob", "longblob", "bit":
		return TypeBinary
	case "date":
		return TypeDate
	case "time":
		return TypeTime
	case "datetime", "timestamp":
		return TypeTimestamp
	}
	return TypeOther
}

// sqliteKind classifies an SQLite declared column type. A few type names have
// a kind of their own; the rest follow the column affinity rules of SQLite's
// "Datatypes In SQLite" §3.1 (from memory), in their order. It reports false for a column
// without a declared type (an expression, or a column declared without one),
// whose kind then comes from its values (sqliteValueKind).
func sqliteKind(decl string) (TypeKind, bool) {
	t := strings.ToUpper(strings.TrimSpace(decl))
	if t == "" {
		return TypeOther, false
	}
	base := t
	if i := strings.IndexByte(base, '('); i >= 0 {
		base = strings.TrimSpace(base[:i])
	}
	switch base {
	case "BOOLEAN", "BOOL", "BIT":
		return TypeBoolean, true
	case "DATE":
		return TypeDate, true
	case "TIME":
		return TypeTime, true
	case "DATETIME", "TIMESTAMP":
		return TypeTimestamp, true
	case "TIMESTAMPTZ", "TIMESTAMP WITH TIME ZONE":
		return TypeTimestampTZ, true
	case "DECIMAL", "NUMERIC":
		return TypeDecimal, true
	case "BINARY", "VARBINARY":
		return TypeBinary, true
	}
	switch {
	case strings.Contains(t, "INT"):
		return TypeInteger, true
	case strings.Contains(t, "CHAR"), strings.Contains(t, "CLOB"), strings.Contains(t, "TEXT"):
		return TypeString, true
	case strings.Contains(t, "BLOB"):
		return TypeBinary, true
	case strings.Contains(t, "REAL"), strings.Contains(t, "FLOA"), strings.Contains(t, "DOUB"):
		return TypeFloat, true
	}
	// NUMERIC affinity under a name we do not know: the values decide.
	return TypeOther, false
}

// sqliteValueKind is the kind of a value the SQLite driver returned for a
// column without a usable declared type.
func sqliteValueKind(v any) TypeKind {
	switch v.(type) {
	case int64:
		return TypeInteger
	case float64:
		return TypeFloat
	case string:
		return TypeString
	case []byte:
		return TypeBinary
	case time.Time:
		return TypeTimestamp
	}
	return TypeOther
}
