package conformance

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"veneer/catalog/source"
	"veneer/conformance/w3cdir"
)

// The inputs are shaped like the statements of the RDB2RDF suite's create.sql
// files (rdb2rdf-tests D016, D017, D021, D025); the translations are what each
// database accepts, as common practice of the three dialects (no external
// source gives them).
func TestTranslateScript(t *testing.T) {
	tests := []struct {
		name    string
		script  string
		dialect source.Dialect
		want    []string
	}{
		{
			name:    "statements split at semicolons outside quotes and comments",
			script:  "CREATE TABLE \"a;b\" (\"x\" INT); -- one; two\nINSERT INTO \"a;b\" (\"x\") VALUES (1);\n",
			dialect: source.SQLite,
			want:    []string{`CREATE TABLE "a;b" ("x" INT)`, "-- one; two\nINSERT INTO \"a;b\" (\"x\") VALUES (1)"},
		},
		{
			name:    "national strings lose their N",
			script:  `INSERT INTO "植物" ("名") VALUES (N'しそ')`,
			dialect: source.MySQL,
			want:    []string{`INSERT INTO "植物" ("名") VALUES ('しそ')`},
		},
		{
			name:    "a quote doubled inside a string",
			script:  `INSERT INTO "T" ("c") VALUES ('it''s; fine')`,
			dialect: source.Postgres,
			want:    []string{`INSERT INTO "T" ("c") VALUES ('it''s; fine')`},
		},
		{
			name:    "binary literal on SQLite",
			script:  `INSERT INTO "P" ("Photo") VALUES (0x89504E47)`,
			dialect: source.SQLite,
			want:    []string{`INSERT INTO "P" ("Photo") VALUES (X'89504E47')`},
		},
		{
			name:    "binary literal on PostgreSQL",
			script:  `INSERT INTO "P" ("Photo") VALUES (0x89504E47)`,
			dialect: source.Postgres,
			want:    []string{`INSERT INTO "P" ("Photo") VALUES (decode('89504E47', 'hex'))`},
		},
		{
			name:    "vendor types and BIT values on PostgreSQL",
			script:  "CREATE TABLE \"P\" (\"ID\" INTEGER, \"E\" datetime, \"Paid\" bit, \"Photo\" VARBINARY(200), \"N\" NVARCHAR(10), PRIMARY KEY (\"ID\"));\nINSERT INTO \"P\" (\"ID\", \"Paid\") VALUES (10, 0), (11, 1)",
			dialect: source.Postgres,
			want: []string{
				`CREATE TABLE "P" ("ID" INTEGER, "E" TIMESTAMP, "Paid" BOOLEAN, "Photo" BYTEA, "N" VARCHAR(10), PRIMARY KEY ("ID"))`,
				`INSERT INTO "P" ("ID", "Paid") VALUES (10, FALSE), (11, TRUE)`,
			},
		},
		{
			name:    "BIT values by declared column order when the INSERT names none",
			script:  "CREATE TABLE \"P\" (\"ID\" INTEGER, \"Paid\" bit);\nINSERT INTO \"P\" VALUES (1, 1)",
			dialect: source.Postgres,
			want:    []string{`CREATE TABLE "P" ("ID" INTEGER, "Paid" BOOLEAN)`, `INSERT INTO "P" VALUES (1, TRUE)`},
		},
		{
			name:    "vendor types stay on MySQL",
			script:  `CREATE TABLE "P" ("E" datetime, "Paid" bit)`,
			dialect: source.MySQL,
			want:    []string{`CREATE TABLE "P" ("E" datetime, "Paid" bit)`},
		},
		{
			name:    "table constraints move after the columns",
			script:  "CREATE TABLE \"T\" (\n\t\"PK\" INT,\n\tPRIMARY KEY(\"PK\"),\n\t\"k\" CHAR(5)\n)",
			dialect: source.SQLite,
			want:    []string{"CREATE TABLE \"T\" (\n\t\"PK\" INT,\n\t\"k\" CHAR(5)\n,\n\tPRIMARY KEY(\"PK\"))"},
		},
		{
			name:    "ALTER TABLE ADD FOREIGN KEY folds into CREATE TABLE on SQLite",
			script:  "CREATE TABLE \"D\" (\"ID\" INT, \"m\" INT);\nINSERT INTO \"D\" (\"ID\") VALUES (1);\nALTER TABLE \"D\" ADD FOREIGN KEY(\"m\") REFERENCES \"P\"(\"ID\");",
			dialect: source.SQLite,
			want: []string{
				`CREATE TABLE "D" ("ID" INT, "m" INT, FOREIGN KEY("m") REFERENCES "P"("ID"))`,
				`INSERT INTO "D" ("ID") VALUES (1)`,
			},
		},
		{
			name:    "ALTER TABLE stays on PostgreSQL",
			script:  `ALTER TABLE "D" ADD FOREIGN KEY("m") REFERENCES "P"("ID")`,
			dialect: source.Postgres,
			want:    []string{`ALTER TABLE "D" ADD FOREIGN KEY("m") REFERENCES "P"("ID")`},
		},
		{
			name:    "byte order mark and empty statements",
			script:  "\uFEFFCREATE TABLE \"S\" (\"Name\" varchar(50));;\n",
			dialect: source.SQLite,
			want:    []string{`CREATE TABLE "S" ("Name" varchar(50))`},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := TranslateScript("create.sql", []byte(tt.script), tt.dialect)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(got, tt.want) {
				t.Errorf("TranslateScript(%q, %v)\n got %q\nwant %q", tt.script, tt.dialect, got, tt.want)
			}
		})
	}
}

// Errors give the script's name, line and column (common practice).
func TestTranslateScriptErrors(t *testing.T) {
	tests := []struct {
		script  string
		dialect source.Dialect
		want    string
	}{
		{"INSERT INTO \"T\" VALUES\n ('open", source.SQLite, "create.sql:2:3: string not closed"},
		{"CREATE TABLE \"T (\"x\" INT)", source.SQLite, "create.sql:1:20: delimited identifier not closed"},
		{"SELECT 1 /* no end", source.MySQL, "create.sql:1:10: comment not closed"},
		{"INSERT INTO \"T\" VALUES (0x123)", source.SQLite, "create.sql:1:25: binary literal 0x123 needs an even, non-zero number of hex digits"},
		{"CREATE TABLE \"T\" (\"x\" INT", source.Postgres, "create.sql:1:1: CREATE TABLE \"T\": a parenthesis is not closed"},
		{"ALTER TABLE \"T\" ADD FOREIGN KEY (\"x\") REFERENCES \"U\" (\"y\")", source.SQLite, "create.sql:1:1: ALTER TABLE \"T\" ADD: no CREATE TABLE \"T\" before it"},
	}
	for _, tt := range tests {
		_, err := TranslateScript("create.sql", []byte(tt.script), tt.dialect)
		if err == nil || err.Error() != tt.want {
			t.Errorf("TranslateScript(%q): error %v, want %q", tt.script, err, tt.want)
		}
	}
}

// Every create.sql of the RDB2RDF suite (rdb2rdf-tests D000…D025) translates
// for every dialect; whether the database then accepts it is TestRDB2RDF's part.
func TestTranslateSuiteScripts(t *testing.T) {
	files, err := filepath.Glob(filepath.Join(w3cdir.ForTest(t), "rdb2rdf-tests", "D*", "create.sql"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no create.sql files (%v)", err)
	}
	for _, f := range files {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, d := range []source.Dialect{source.SQLite, source.Postgres, source.MySQL} {
			stmts, err := TranslateScript(f, src, d)
			if err != nil {
				t.Errorf("%s: %v", d, err)
				continue
			}
			for _, st := range stmts {
				if strings.Contains(st, "0x") {
					t.Errorf("%s, %s: a binary literal is left: %s", filepath.Base(filepath.Dir(f)), d, st)
				}
			}
		}
	}
}
