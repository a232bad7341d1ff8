package r2rml

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/direct"
	"veneer/catalog/internal/rdb2rdf"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// shape prints everything of a catalog that decides its graph: not the
// positions, and triples maps by their place in the catalog rather than by
// name. withBase leaves out the base IRIs of term maps when false.
func shape(cat *catalog.Catalog, withBase bool) string {
	index := map[*catalog.TriplesMap]int{}
	for i, tm := range cat.Maps {
		index[tm] = i
	}
	term := func(m catalog.TermMap) string {
		s := fmt.Sprintf("kind=%d const=%v col=%q tpl=%q type=%d lang=%q dt=%q",
			m.Kind, m.Constant, m.Column, templateString(m.Template), m.TermType, m.Language, m.Datatype)
		if withBase {
			s += fmt.Sprintf(" base=%q", m.Base)
		}
		return s
	}
	var b strings.Builder
	for i, tm := range cat.Maps {
		fmt.Fprintf(&b, "map %d table=%q query=%q versions=%v\n", i, tm.Table.TableName, tm.Table.Query, tm.Table.SQLVersions)
		fmt.Fprintf(&b, "  subject %s classes=%v\n", term(tm.Subject), tm.Classes)
		for _, g := range tm.Graphs {
			fmt.Fprintf(&b, "  graph %s\n", term(g))
		}
		for _, pom := range tm.PredicateObjects {
			b.WriteString("  pom\n")
			for _, p := range pom.Predicates {
				fmt.Fprintf(&b, "    predicate %s\n", term(p))
			}
			for _, o := range pom.Objects {
				if o.Term != nil {
					fmt.Fprintf(&b, "    object %s\n", term(*o.Term))
					continue
				}
				fmt.Fprintf(&b, "    ref map %d", index[o.Ref.Parent])
				for _, j := range o.Ref.Joins {
					fmt.Fprintf(&b, " %q=%q", j.Child, j.Parent)
				}
				b.WriteString("\n")
			}
			for _, g := range pom.Graphs {
				fmt.Fprintf(&b, "    graph %s\n", term(g))
			}
		}
	}
	return b.String()
}

// roundTrip writes cat and loads the result.
func roundTrip(t *testing.T, cat *catalog.Catalog, prefixes ...rdf.Prefix) (*catalog.Catalog, string) {
	t.Helper()
	var out bytes.Buffer
	if err := Write(&out, cat, prefixes...); err != nil {
		t.Fatal(err)
	}
	back, err := Load("written.ttl", out.Bytes())
	if err != nil {
		t.Fatalf("loading the written mapping: %v\n%s", err, out.String())
	}
	return back, out.String()
}

// TestWriteW3CMappings writes every mapping of the W3C RDB2RDF suite that
// loads, reads it back, and compares the two catalogs.
func TestWriteW3CMappings(t *testing.T) {
	files, err := filepath.Glob(filepath.Join(rdb2rdf.Dir(t), "D*", "r2rml*.ttl"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no mappings found (%v)", err)
	}
	n := 0
	for _, f := range files {
		cat, err := LoadFiles(f)
		if err != nil {
			continue // a mapping the suite expects to be rejected
		}
		back, text := roundTrip(t, cat)
		if got, want := shape(back, true), shape(cat, true); got != want {
			t.Errorf("%s: the written mapping reads back differently:\n%s\ngot:\n%s\nwant:\n%s", f, text, got, want)
		}
		n++
	}
	t.Logf("%d of %d W3C mappings written and read back", n, len(files))
}

// TestWriteDirectMapping writes the Direct Mapping of each W3C RDB2RDF test
// database as R2RML and checks that it reads back as the same catalog
// (leaving out the base IRIs the reader gives to maps whose IRIs are all
// absolute already), on every dialect.
func TestWriteDirectMapping(t *testing.T) {
	dirs, err := filepath.Glob(filepath.Join(rdb2rdf.Dir(t), "D*"))
	if err != nil || len(dirs) == 0 {
		t.Fatalf("no test directories under %s (%v)", rdb2rdf.Dir(t), err)
	}
	const base = "http://example.com/base/"
	for _, d := range sourcetest.Dialects {
		t.Run(d.String(), func(t *testing.T) {
			for _, dir := range dirs {
				t.Run(filepath.Base(dir)[:4], func(t *testing.T) {
					if why := rdb2rdf.Unsupported(d, dir); why != "" {
						t.Skip(why)
					}
					db := sourcetest.New(t, d)
					rdb2rdf.Load(t, db, dir, "create.sql")
					schema, err := source.Introspect(context.Background(), db.Open(t), "")
					if err != nil {
						t.Fatal(err)
					}
					cat, err := direct.Map(schema, base)
					if err != nil {
						t.Fatal(err)
					}
					back, text := roundTrip(t, cat, rdf.Prefix{Name: "base", IRI: base})
					if got, want := shape(back, false), shape(cat, false); got != want {
						t.Errorf("the written Direct Mapping reads back differently:\n%s\ngot:\n%s\nwant:\n%s", text, got, want)
					}
				})
			}
		})
	}
}

// TestWriteGolden writes testdata/windfarm.ttl, which has every kind of term
// map, shortcut and option, and compares the text with testdata/windfarm.written.ttl.
func TestWriteGolden(t *testing.T) {
	cat, err := LoadFiles(filepath.Join("testdata", "windfarm.ttl"))
	if err != nil {
		t.Fatal(err)
	}
	back, text := roundTrip(t, cat, rdf.Prefix{Name: "wf", IRI: "http://example.com/wind/"})
	if got, want := shape(back, true), shape(cat, true); got != want {
		t.Errorf("the written mapping reads back differently:\ngot:\n%s\nwant:\n%s", got, want)
	}
	checkGolden(t, filepath.Join("testdata", "windfarm.written.ttl"), text)
}

func TestWriteErrors(t *testing.T) {
	site := &catalog.TriplesMap{Name: "http://example.com/Site",
		Table:   catalog.LogicalTable{TableName: "site"},
		Subject: catalog.TermMap{Kind: catalog.Column, Column: "code", TermType: rdf.KindIRI}}
	tests := []struct {
		name string
		cat  *catalog.Catalog
		want string
	}{
		{"two maps of one name", &catalog.Catalog{Maps: []*catalog.TriplesMap{site, site}}, "two triples maps are named"},
		{"no logical table", &catalog.Catalog{Maps: []*catalog.TriplesMap{{Name: "x", Subject: site.Subject}}}, "neither a table name nor a query"},
		{"a parent outside the catalog", &catalog.Catalog{Maps: []*catalog.TriplesMap{{Name: "y", Table: site.Table, Subject: site.Subject,
			PredicateObjects: []catalog.PredicateObjectMap{{
				Predicates: []catalog.TermMap{{Kind: catalog.Constant, Constant: rdf.IRI("http://example.com/p"), TermType: rdf.KindIRI}},
				Objects:    []catalog.ObjectMap{{Ref: &catalog.RefObjectMap{Parent: &catalog.TriplesMap{}}}}}}}}},
			"parent is not a triples map of the catalog"},
		{"an IRI with a space", &catalog.Catalog{Maps: []*catalog.TriplesMap{{Name: "z", Table: site.Table,
			Subject: catalog.TermMap{Kind: catalog.Constant, Constant: rdf.IRI("http://example.com/a b"), TermType: rdf.KindIRI}}}},
			"is not an IRI"},
		{"two bases", &catalog.Catalog{Maps: []*catalog.TriplesMap{
			{Name: "a", Table: site.Table, Subject: catalog.TermMap{Kind: catalog.Column, Column: "c", TermType: rdf.KindIRI, Base: "http://a/"}},
			{Name: "b", Table: site.Table, Subject: catalog.TermMap{Kind: catalog.Column, Column: "c", TermType: rdf.KindIRI, Base: "http://b/"}}}},
			"different base IRIs"},
	}
	for _, tt := range tests {
		var out bytes.Buffer
		if err := Write(&out, tt.cat); err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: got %v, want an error with %q", tt.name, err, tt.want)
		}
	}
	if err := Write(&bytes.Buffer{}, &catalog.Catalog{}, rdf.Prefix{Name: "1x", IRI: "http://x/"}); err == nil {
		t.Error("a prefix name that Turtle does not allow was accepted")
	}
}

// FuzzWrite checks the round trip on any mapping that loads: written and read
// back, it is the same catalog.
func FuzzWrite(f *testing.F) {
	for _, name := range []string{"windfarm.ttl", "sites.ttl"} {
		src, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(src)
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		cat, err := Load("fuzz.ttl", src)
		if err != nil {
			return
		}
		var out bytes.Buffer
		if err := Write(&out, cat); err != nil {
			return // a catalog Write refuses, such as one with two bases, is not a round trip to check
		}
		back, err := Load("written.ttl", out.Bytes())
		if err != nil {
			t.Fatalf("the written mapping does not load: %v\n%s", err, out.String())
		}
		if got, want := shape(back, true), shape(cat, true); got != want {
			t.Fatalf("the written mapping reads back differently:\n%s\ngot:\n%s\nwant:\n%s", out.String(), got, want)
		}
	})
}
