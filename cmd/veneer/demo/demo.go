// Package demo is veneer's built-in demonstration: the schema and a deterministic data
// generator for the maintenance database of an invented wind-farm operator (sites,
// turbines, technicians, parts, work orders, inspections and the parts each work order
// used), an R2RML mapping of that schema to RDF, and example SPARQL queries of the kind
// a maintenance dashboard sends.
//
// The data are invented for demonstrations only. The generator draws from fixed-seed
// PCG streams, so every build, on every machine, produces the same rows.
package demo

import (
	"context"
	_ "embed"
	"fmt"
	"strings"
)

//go:embed schema.sql
var schemaSQL string

//go:embed mapping.ttl
var mappingTTL string

// Exec runs one SQL statement with its bind parameters, as database/sql's ExecContext
// or pgx's Exec do (minus their results).
type Exec func(ctx context.Context, query string, args ...any) error

// dialect is what Build needs to know about one SQL dialect.
type dialect struct {
	// numbered says placeholders are written $1, $2, … instead of ?.
	numbered bool
	// slots fills the type slots of schema.sql.
	slots *strings.Replacer
}

// dialects are the dialects Build accepts, by the names Build takes.
var dialects = map[string]dialect{
	"sqlite": {
		slots: strings.NewReplacer("{timestamp}", "TIMESTAMP", "{binary}", "BLOB", "{table_options}", ""),
	},
	"postgres": {
		numbered: true,
		slots:    strings.NewReplacer("{timestamp}", "TIMESTAMP", "{binary}", "BYTEA", "{table_options}", ""),
	},
	"mysql": {
		slots: strings.NewReplacer("{timestamp}", "DATETIME", "{binary}", "VARBINARY(16)",
			"{table_options}", " ENGINE=InnoDB DEFAULT CHARSET=utf8mb4 COLLATE=utf8mb4_bin"),
	},
}

func lookupDialect(name string) (dialect, error) {
	d, ok := dialects[name]
	if !ok {
		return dialect{}, fmt.Errorf("demo: unknown SQL dialect %q (want sqlite, postgres or mysql)", name)
	}
	return d, nil
}

// Schema returns the CREATE TABLE and CREATE INDEX statements of the demo database for
// a dialect ("sqlite", "postgres" or "mysql"), in the order they must run.
func Schema(dialectName string) ([]string, error) {
	d, err := lookupDialect(dialectName)
	if err != nil {
		return nil, err
	}
	return d.schema(), nil
}

// schema is schema.sql with the dialect's types in its slots, cut into statements.
func (d dialect) schema() []string { return splitStatements(d.slots.Replace(schemaSQL)) }

// splitStatements cuts a DDL text into statements at semicolons, leaving out the
// comment lines. The schema has no semicolon inside a statement.
func splitStatements(text string) []string {
	var code strings.Builder
	for line := range strings.Lines(text) {
		if !strings.HasPrefix(strings.TrimSpace(line), "--") {
			code.WriteString(line)
		}
	}
	var stmts []string
	for stmt := range strings.SplitSeq(code.String(), ";") {
		if stmt = strings.TrimSpace(stmt); stmt != "" {
			stmts = append(stmts, stmt)
		}
	}
	return stmts
}

// Tables returns the names of the demo tables in the order Build creates and fills
// them: each table comes after the tables its foreign keys point to, so dropping them
// in reverse order never breaks a foreign key.
func Tables() []string {
	names := make([]string, len(tables))
	for i, t := range tables {
		names[i] = t.name
	}
	return names
}

// Mapping returns the R2RML mapping of the demo schema, a Turtle document.
func Mapping() string { return mappingTTL }

// Build creates the demo tables in an empty database or schema and fills them, running
// every statement through exec. dialectName is "sqlite", "postgres" or "mysql"; it
// picks the column types and the placeholder style. Every value travels as a bind
// parameter, in multi-row INSERTs of at most 999 parameters each, a limit every one
// of the three databases accepts.
//
// Build does not open a transaction: the caller decides, and a caller that wants the
// load to be fast or all-or-nothing runs exec inside one.
func Build(ctx context.Context, exec Exec, dialectName string) error {
	d, err := lookupDialect(dialectName)
	if err != nil {
		return err
	}
	for _, stmt := range d.schema() {
		if err := exec(ctx, stmt); err != nil {
			return fmt.Errorf("demo: creating the schema (%s): %w", firstLine(stmt), err)
		}
	}
	for _, data := range generate() {
		for _, ins := range inserts(data, d) {
			if err := exec(ctx, ins.query, ins.args...); err != nil {
				return fmt.Errorf("demo: filling table %s: %w", data.table.name, err)
			}
		}
	}
	return nil
}

func firstLine(stmt string) string {
	line, _, _ := strings.Cut(stmt, "\n")
	return strings.TrimSpace(line)
}
