package source_test

import (
	"context"
	"fmt"
	"strings"
	"testing"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// windFarmDDL is a schema with single and composite primary keys (one whose
// key order differs from the column order), a unique key, single and composite
// foreign keys, a table without any key, and a view. It is written in the SQL
// the three dialects share.
var windFarmDDL = []string{
	`CREATE TABLE site (
		site_code VARCHAR(8) NOT NULL,
		name VARCHAR(40) NOT NULL,
		PRIMARY KEY (site_code),
		UNIQUE (name))`,
	`CREATE TABLE turbine (
		site_code VARCHAR(8) NOT NULL,
		turbine_no INTEGER NOT NULL,
		model VARCHAR(20),
		rated_kw NUMERIC(8,1),
		PRIMARY KEY (site_code, turbine_no),
		FOREIGN KEY (site_code) REFERENCES site (site_code))`,
	`CREATE TABLE inspection (
		site_code VARCHAR(8) NOT NULL,
		turbine_no INTEGER NOT NULL,
		inspected_on DATE NOT NULL,
		passed BOOLEAN,
		note VARCHAR(200),
		PRIMARY KEY (turbine_no, site_code, inspected_on),
		CONSTRAINT inspection_turbine FOREIGN KEY (site_code, turbine_no) REFERENCES turbine (site_code, turbine_no))`,
	`CREATE TABLE reading_log (
		site_code VARCHAR(8),
		turbine_no INTEGER,
		read_on DATE,
		power_kw DOUBLE PRECISION,
		FOREIGN KEY (site_code, turbine_no) REFERENCES turbine (site_code, turbine_no))`,
	`CREATE VIEW passed_inspection AS SELECT site_code, turbine_no FROM inspection WHERE passed`,
}

// A unique index that makes nothing unique (it is partial), where the dialect has them.
var partialIndexDDL = map[source.Dialect]string{
	source.Postgres: `CREATE UNIQUE INDEX turbine_model ON turbine (model) WHERE model IS NOT NULL`,
	source.SQLite:   `CREATE UNIQUE INDEX turbine_model ON turbine (model) WHERE model IS NOT NULL`,
}

// The expected schema, in the form describeSchema prints, without types.
const windFarmSchema = `inspection
  site_code string not null
  turbine_no integer not null
  inspected_on date not null
  passed boolean null
  note string null
  primary key (turbine_no, site_code, inspected_on)
  foreign key (site_code, turbine_no) references turbine (site_code, turbine_no)
passed_inspection (view)
  site_code string ?
  turbine_no integer ?
reading_log
  site_code string null
  turbine_no integer null
  read_on date null
  power_kw float null
  foreign key (site_code, turbine_no) references turbine (site_code, turbine_no)
site
  site_code string not null
  name string not null
  primary key (site_code)
  unique (name)
turbine
  site_code string not null
  turbine_no integer not null
  model string null
  rated_kw decimal null
  primary key (site_code, turbine_no)
  foreign key (site_code) references site (site_code)
`

// describeSchema prints a schema's structure without the dialect's type
// spellings. A view column's nullability is printed as "?": the dialects derive
// it differently.
func describeSchema(s *source.Schema) string {
	var b strings.Builder
	for _, t := range s.Tables {
		b.WriteString(t.Name)
		if t.View {
			b.WriteString(" (view)")
		}
		b.WriteString("\n")
		for _, c := range t.Columns {
			null := "not null"
			switch {
			case t.View:
				null = "?"
			case c.Nullable:
				null = "null"
			}
			fmt.Fprintf(&b, "  %s %s %s\n", c.Name, c.Kind, null)
		}
		if t.PrimaryKey != nil {
			fmt.Fprintf(&b, "  primary key (%s)\n", strings.Join(t.PrimaryKey, ", "))
		}
		for _, k := range t.UniqueKeys {
			fmt.Fprintf(&b, "  unique (%s)\n", strings.Join(k, ", "))
		}
		for _, fk := range t.ForeignKeys {
			if fk.RefSchema != t.Schema {
				fmt.Fprintf(&b, "  (schema %s)", fk.RefSchema)
			}
			fmt.Fprintf(&b, "  foreign key (%s) references %s (%s)\n",
				strings.Join(fk.Columns, ", "), fk.RefTable, strings.Join(fk.RefColumns, ", "))
		}
	}
	return b.String()
}

// The declared type of turbine.rated_kw, as each dialect reports it.
var ratedKWType = map[source.Dialect]string{source.Postgres: "NUMERIC(8,1)", source.MySQL: "DECIMAL(8,1)", source.SQLite: "NUMERIC(8,1)"}

func TestIntrospect(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, windFarmDDL...)
		if ddl := partialIndexDDL[db.Dialect]; ddl != "" {
			db.Exec(t, ddl)
		}
		src := db.Open(t)
		s, err := source.Introspect(context.Background(), src, "")
		if err != nil {
			t.Fatal(err)
		}
		if got := describeSchema(s); got != windFarmSchema {
			t.Errorf("schema:\n%s\nwant:\n%s", got, windFarmSchema)
		}
		if s.Name == "" || s.Tables[0].Schema != s.Name {
			t.Errorf("schema name %q, table schema %q", s.Name, s.Tables[0].Schema)
		}
		if got := s.Table("turbine").Column("rated_kw").DatabaseType; got != ratedKWType[db.Dialect] {
			t.Errorf("rated_kw type %q, want %q", got, ratedKWType[db.Dialect])
		}

		// Naming the schema gives the same result.
		named, err := source.Introspect(context.Background(), src, s.Name)
		if err != nil {
			t.Fatal(err)
		}
		if describeSchema(named) != describeSchema(s) {
			t.Errorf("schema %q named explicitly differs:\n%s", s.Name, describeSchema(named))
		}
	})
}

func TestIntrospectUnknownSchema(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		src := db.Open(t)
		s, err := source.Introspect(context.Background(), src, "no_such_schema_x")
		switch {
		case db.Dialect == source.SQLite && err == nil:
			t.Errorf("no error for an SQLite schema that is not attached")
		case err == nil && len(s.Tables) != 0:
			t.Errorf("tables in a schema that does not exist: %v", describeSchema(s))
		}
	})
}

// TestSQLiteImplicitReference checks that a foreign key without a column list
// references the parent's primary key, and that the parent's name is taken
// as the table has it (SQLite matches names without regard to case).
func TestSQLiteImplicitReference(t *testing.T) {
	db := sourcetest.New(t, source.SQLite)
	db.Exec(t, `CREATE TABLE Part (maker TEXT, code TEXT, PRIMARY KEY (maker, code))`,
		`CREATE TABLE stock (maker TEXT, code TEXT, qty INTEGER, FOREIGN KEY (maker, code) REFERENCES PART)`)
	s, err := source.Introspect(context.Background(), db.Open(t), "")
	if err != nil {
		t.Fatal(err)
	}
	fk := s.Table("stock").ForeignKeys
	if len(fk) != 1 || fk[0].RefTable != "Part" || strings.Join(fk[0].RefColumns, ",") != "maker,code" {
		t.Errorf("foreign keys %+v", fk)
	}
}
