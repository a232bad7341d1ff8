// Package source opens veneer's relational sources from a DSN (postgres://,
// mysql://, sqlite:), runs read-only statements on them, and introspects their
// schema.
package source

import (
	"context"
)

// Dialect is the SQL dialect of a source.
type Dialect int

// The supported dialects.
const (
	Postgres Dialect = iota + 1
	MySQL
	SQLite
)

// String returns the dialect's short name: postgres, mysql or sqlite.
func (d Dialect) String() string {
	switch d {
	case Postgres:
		return "postgres"
	case MySQL:
		return "mysql"
	case SQLite:
		return "sqlite"
	}
	return "unknown"
}

// TypeKind is the family of a column's SQL type, as far as RDF cares (R2RML §10.2).
type TypeKind int

// The type families. Each says which Go type Rows.Values uses for a non-NULL value.
const (
	TypeOther       TypeKind = iota // string
	TypeString                      // string
	TypeInteger                     // int64
	TypeDecimal                     // string: the exact decimal digits, e.g. "-12.50"
	TypeFloat                       // float64
	TypeBoolean                     // bool
	TypeBinary                      // []byte
	TypeDate                        // time.Time (UTC midnight of the date)
	TypeTime                        // string "HH:MM:SS[.fraction]"
	TypeTimestamp                   // time.Time, no zone (read as UTC)
	TypeTimestampTZ                 // time.Time with its zone
	// TypeReal is a single-precision float (PostgreSQL REAL / FLOAT4, MySQL
	// FLOAT): float64 holding a float32's value. Kept apart from TypeFloat so
	// that its values are written with the digits a float32 needs, and so that
	// SQL never widens it by sharing a union column with a double.
	TypeReal
)

var kindNames = [...]string{
	TypeOther:       "other",
	TypeString:      "string",
	TypeInteger:     "integer",
	TypeDecimal:     "decimal",
	TypeFloat:       "float",
	TypeReal:        "real",
	TypeBoolean:     "boolean",
	TypeBinary:      "binary",
	TypeDate:        "date",
	TypeTime:        "time",
	TypeTimestamp:   "timestamp",
	TypeTimestampTZ: "timestamptz",
}

// String returns the kind's lower-case name, e.g. "timestamptz".
func (k TypeKind) String() string {
	if k >= 0 && int(k) < len(kindNames) {
		return kindNames[k]
	}
	return "unknown"
}

// Kinds, passed as the first argument of Source.Query, gives the kinds of the
// result columns where the caller knows them better than the result metadata
// does: MySQL reports BOOLEAN (TINYINT(1)) and BIT(1) columns as TINYINT and BIT,
// and SQLite reports no type for an expression. Entry i applies to column i; a
// TypeOther entry, or a missing one, keeps the kind the database reports. The
// values are then normalised to the given kind, and a value that cannot be read
// as that kind ends the iteration with an error.
type Kinds []TypeKind

// Column describes one result column.
type Column struct {
	Name string
	// DatabaseType is the type name the database reports, upper case (e.g. "INT4").
	DatabaseType string
	Kind         TypeKind
	// NotNull is set when the schema guarantees the column is never NULL; result
	// column metadata never sets it, schema introspection may.
	NotNull bool
}

// Rows is a cursor over the result of one statement.
type Rows interface {
	// Columns describes the result columns.
	Columns() []Column
	// Next advances to the next row; it returns false at the end or on error.
	Next() bool
	// Values returns the current row, one value per column, normalised to the Go
	// type that the column's TypeKind names (nil for SQL NULL). The slice is
	// reused by the next call to Next.
	Values() []any
	// Err reports the error that ended the iteration, if any.
	Err() error
	// Close releases the cursor and its session; it is safe to call more than once.
	Close() error
}

// TextRows is implemented by Rows that hold each value of the current row as
// the text the database sent (PostgreSQL), so that a value in its plain form
// can be read without being decoded. Text returns column i's bytes and true
// when the value is NULL (nil bytes) or its text is in the plain form of the
// column's kind: any text for TypeString; canonical decimal digits for
// TypeInteger (a '-' for negative numbers, no leading zero, at most 18
// digits); for TypeDecimal decimal digits with an optional sign and point;
// for TypeTimestamp a valid "YYYY-MM-DD HH:MM:SS" with up to nine digits of
// fraction. Otherwise it returns false, and only Values reads the
// value. The bytes are valid until Next.
type TextRows interface {
	Rows
	Text(i int) ([]byte, bool)
}

// Source is an open relational source.
type Source interface {
	// Dialect reports the SQL dialect.
	Dialect() Dialect
	// Query runs one statement in a read-only transaction. Args are bound by
	// position; the SQL text uses the dialect's placeholder ($1 for postgres, ? else).
	// A Kinds value as the first argument is not bound but gives column kinds.
	// Cancelling ctx cancels the statement; its error then wraps ctx.Err().
	Query(ctx context.Context, sql string, args ...any) (Rows, error)
	// Ping checks that the source answers.
	Ping(ctx context.Context) error
	// Close closes the pool.
	Close() error
}
