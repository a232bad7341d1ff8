package source_test

import (
	"context"
	"net/url"
	"slices"
	"strings"
	"testing"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// TestDelimitedIdentifiers runs SQL written the way R2RML views are (R2RML §5:
// identifiers delimited with double quotes keep their case) on every dialect.
// On MySQL this needs the session's ANSI_QUOTES; without it "Name" would be
// the string 'Name' and "Turbine" a syntax error.
func TestDelimitedIdentifiers(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, `CREATE TABLE "Turbine" ("ID" INTEGER PRIMARY KEY, "Name" VARCHAR(20))`,
			`INSERT INTO "Turbine" ("ID", "Name") VALUES (7, 'T-07')`)
		got := queryStrings(t, db.Open(t), `SELECT "Name" FROM "Turbine" WHERE "ID" = 7`)
		if len(got) != 1 || got[0] != "T-07" {
			t.Errorf(`SELECT "Name": got %q, want ["T-07"]`, got)
		}
	})
}

// TestMySQLSQLMode checks that ANSI_QUOTES joins whatever sql_mode the DSN
// sets, once, and that the modes the DSN asked for stay.
func TestMySQLSQLMode(t *testing.T) {
	db := sourcetest.New(t, source.MySQL)
	tests := []struct {
		mode string // the DSN's sql_mode; "-" leaves the server's
		want []string
		// exact says the session's modes are want and no others; the server
		// lists them in an order of its own.
		exact bool
	}{
		{mode: "-", want: []string{"ANSI_QUOTES"}},
		{mode: "", want: []string{"ANSI_QUOTES"}, exact: true},
		{mode: "STRICT_TRANS_TABLES", want: []string{"STRICT_TRANS_TABLES", "ANSI_QUOTES"}, exact: true},
		{mode: "ANSI_QUOTES,NO_ZERO_DATE", want: []string{"ANSI_QUOTES", "NO_ZERO_DATE"}, exact: true},
	}
	for _, tt := range tests {
		dsn := db.DSN
		if tt.mode != "-" {
			u, err := url.Parse(dsn)
			if err != nil {
				t.Fatal(err)
			}
			q := u.Query()
			q.Set("sql_mode", "'"+tt.mode+"'")
			u.RawQuery = q.Encode()
			dsn = u.String()
		}
		src, err := source.Open(context.Background(), dsn)
		if err != nil {
			t.Fatal(err)
		}
		got := queryStrings(t, src, "SELECT @@SESSION.sql_mode")
		src.Close()
		if len(got) != 1 {
			t.Fatalf("sql_mode %q: got %q", tt.mode, got)
		}
		modes := strings.Split(got[0], ",")
		for _, m := range tt.want {
			if !slices.Contains(modes, m) {
				t.Errorf("DSN sql_mode %q: session has %q, want it to include %s", tt.mode, got[0], m)
			}
		}
		if tt.exact && len(modes) != len(tt.want) {
			t.Errorf("DSN sql_mode %q: session has %q, want only %q", tt.mode, got[0], tt.want)
		}
	}
}

// queryStrings runs a query and returns the first column of its rows as text.
func queryStrings(t *testing.T, src source.Source, query string) []string {
	t.Helper()
	rows, err := src.Query(context.Background(), query)
	if err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		switch v := rows.Values()[0].(type) {
		case string:
			out = append(out, v)
		case []byte:
			out = append(out, string(v))
		default:
			t.Fatalf("%s: value %v of type %T", query, v, v)
		}
	}
	if err := rows.Err(); err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	return out
}
