package direct

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

// windFarm is a schema with the cases the mapping must handle: names that
// need percent-encoding and SQL quoting, a composite key in an order other
// than the columns', a table without a key (with a column that takes the
// row identity's first name), foreign keys to each, one to another schema,
// and a view.
func windFarm(d source.Dialect) *source.Schema {
	col := func(name string, k source.TypeKind) source.TableColumn {
		return source.TableColumn{Name: name, Kind: k, DatabaseType: strings.ToUpper(k.String())}
	}
	return &source.Schema{Dialect: d, Name: "maint", Tables: []*source.Table{
		{Schema: "maint", Name: "Work Order",
			Columns: []source.TableColumn{
				col("order no", source.TypeInteger), col("site", source.TypeString),
				col("turbine", source.TypeInteger), col(`say "hi"; a=b#c`, source.TypeString),
			},
			PrimaryKey: []string{"order no"},
			ForeignKeys: []source.ForeignKey{
				{Name: "wo_turbine", Columns: []string{"site", "turbine"}, RefSchema: "maint", RefTable: "turbine", RefColumns: []string{"site", "no"}},
				{Name: "wo_tech", Columns: []string{"site"}, RefSchema: "staff", RefTable: "technician", RefColumns: []string{"id"}},
			}},
		{Schema: "maint", Name: "log",
			Columns:     []source.TableColumn{col("veneer_row", source.TypeInteger), col("order no", source.TypeInteger)},
			ForeignKeys: []source.ForeignKey{{Name: "log_wo", Columns: []string{"order no"}, RefSchema: "maint", RefTable: "Work Order", RefColumns: []string{"order no"}}}},
		{Schema: "maint", Name: "open_orders", View: true, Columns: []source.TableColumn{col("order no", source.TypeInteger)}},
		{Schema: "maint", Name: "turbine",
			Columns:    []source.TableColumn{col("site", source.TypeString), col("no", source.TypeInteger), col("model", source.TypeString)},
			PrimaryKey: []string{"no", "site"},
			ForeignKeys: []source.ForeignKey{
				{Name: "t_wo", Columns: []string{"no"}, RefSchema: "maint", RefTable: "log", RefColumns: []string{"order no"}},
			}},
	}}
}

// TestMapGolden prints the mapping of windFarm for each dialect (they differ
// in the view of the table without a key) and compares it with
// testdata/windfarm-DIALECT.golden.
func TestMapGolden(t *testing.T) {
	for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
		t.Run(d.String(), func(t *testing.T) {
			cat, err := Map(windFarm(d), "http://example.com/base/")
			if err != nil {
				t.Fatal(err)
			}
			got := printCatalog(cat)
			path := filepath.Join("testdata", "windfarm-"+d.String()+".golden")
			if *update {
				if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if got != string(want) {
				t.Errorf("mapping differs from %s (run go test -update and read the diff):\n%s", path, got)
			}
		})
	}
}

func TestMapBadBase(t *testing.T) {
	for _, base := range []string{"", "base/", "://x"} {
		if _, err := Map(windFarm(source.Postgres), base); err == nil {
			t.Errorf("Map with base %q succeeded, want an error", base)
		}
	}
}

func TestMapBadForeignKey(t *testing.T) {
	s := windFarm(source.SQLite)
	s.Tables[0].ForeignKeys[0].RefColumns = []string{"site", ""}
	if _, err := Map(s, "http://example.com/base/"); err == nil || !strings.Contains(err.Error(), "wo_turbine") {
		t.Errorf("got error %v, want one naming foreign key wo_turbine", err)
	}
}

// TestSQLiteRowidShadowed checks the error for a table whose columns hide all
// three names of SQLite's rowid.
func TestSQLiteRowidShadowed(t *testing.T) {
	s := &source.Schema{Dialect: source.SQLite, Name: "main", Tables: []*source.Table{{Schema: "main", Name: "odd",
		Columns: []source.TableColumn{{Name: "ROWID"}, {Name: "_rowid_"}, {Name: "oid"}}}}}
	_, err := Map(s, "http://example.com/base/")
	if err == nil || !strings.Contains(err.Error(), `"odd"`) {
		t.Errorf("got error %v, want one naming table \"odd\"", err)
	}
}

// printCatalog writes a catalog in a compact text form for golden files.
func printCatalog(cat *catalog.Catalog) string {
	var b strings.Builder
	for _, tm := range cat.Maps {
		fmt.Fprintf(&b, "map %s\n", tm.Name)
		if tm.Table.Query != "" {
			fmt.Fprintf(&b, "  query %s\n", tm.Table.Query)
		} else {
			fmt.Fprintf(&b, "  table %s\n", tm.Table.TableName)
		}
		fmt.Fprintf(&b, "  subject %s\n", printTermMap(tm.Subject))
		for _, c := range tm.Classes {
			fmt.Fprintf(&b, "  class %s\n", c)
		}
		for _, pom := range tm.PredicateObjects {
			for _, p := range pom.Predicates {
				for _, o := range pom.Objects {
					if o.Term != nil {
						fmt.Fprintf(&b, "  %s %s\n", printTermMap(p), printTermMap(*o.Term))
						continue
					}
					var joins []string
					for _, j := range o.Ref.Joins {
						joins = append(joins, j.Child+" = "+j.Parent)
					}
					fmt.Fprintf(&b, "  %s ref %s on %s\n", printTermMap(p), o.Ref.Parent.Name, strings.Join(joins, ", "))
				}
			}
		}
	}
	return b.String()
}

func printTermMap(m catalog.TermMap) string {
	kind := map[rdf.Kind]string{rdf.KindIRI: "iri", rdf.KindBlank: "blank", rdf.KindLiteral: "literal"}[m.TermType]
	switch m.Kind {
	case catalog.Constant:
		return m.Constant.String()
	case catalog.Column:
		return kind + " column " + m.Column
	}
	var parts []string
	for _, p := range m.Template.Parts {
		if p.Column != "" {
			parts = append(parts, "{"+p.Column+"}")
		} else {
			parts = append(parts, fmt.Sprintf("%q", p.Text))
		}
	}
	return kind + " template " + strings.Join(parts, " ")
}
