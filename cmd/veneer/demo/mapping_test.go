package demo

import (
	"context"
	"regexp"
	"slices"
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

// The R2RML section numbers in this file's comments are from memory: the R2RML
// text is not among the specifications in shared/specs.

const (
	rrNS   = "http://www.w3.org/ns/r2rml#"
	wfNS   = "https://vocab.veneer.example/windfarm#"
	dataNS = "https://data.veneer.example/windfarm/"
)

// graph indexes a document's triples by subject and predicate.
type graph map[rdf.Term]map[rdf.IRI][]rdf.Term

// parseMapping reads mapping.ttl with the project's Turtle reader.
func parseMapping(t *testing.T) graph {
	t.Helper()
	doc, err := rdf.ParseTurtle("mapping.ttl", []byte(Mapping()), "")
	if err != nil {
		t.Fatalf("mapping.ttl: %v", err)
	}
	g := graph{}
	for _, tr := range doc.Triples() {
		p, ok := tr.P.(rdf.IRI)
		if !ok {
			t.Fatalf("predicate %v is not an IRI", tr.P)
		}
		if g[tr.S] == nil {
			g[tr.S] = map[rdf.IRI][]rdf.Term{}
		}
		g[tr.S][p] = append(g[tr.S][p], tr.O)
	}
	return g
}

func (g graph) objects(s rdf.Term, local string) []rdf.Term { return g[s][rdf.IRI(rrNS+local)] }

// literal returns the lexical form of the one literal object of s's rr:local, or "".
func (g graph) literal(t *testing.T, s rdf.Term, local string) string {
	t.Helper()
	objs := g.objects(s, local)
	if len(objs) == 0 {
		return ""
	}
	l, ok := objs[0].(rdf.Literal)
	if len(objs) > 1 || !ok {
		t.Errorf("%v: rr:%s must be one literal, got %v", s, local, objs)
		return ""
	}
	return l.Lexical
}

// TestMappingParses checks that mapping.ttl is well-formed RDF 1.1 Turtle, as
// catalog/rdf's reader sees it; the tests below check what it says.
func TestMappingParses(t *testing.T) {
	g := parseMapping(t)
	if len(g) == 0 {
		t.Fatal("mapping.ttl holds no triples")
	}
}

// triplesMap is what the checks need of one triples map.
type triplesMap struct {
	node    rdf.Term
	table   string   // rr:tableName, or "" for a view
	query   string   // rr:sqlQuery
	columns []string // the columns of the logical table
}

// triplesMaps finds the triples maps of the mapping (the subjects with an
// rr:logicalTable, R2RML §6) and the columns of their logical tables: a table's from
// tables.go, a view's from running its query on the SQLite build.
func triplesMaps(t *testing.T, g graph, q querierWithColumns) map[rdf.Term]*triplesMap {
	t.Helper()
	maps := map[rdf.Term]*triplesMap{}
	for s := range g {
		lts := g.objects(s, "logicalTable")
		if len(lts) == 0 {
			continue
		}
		if len(lts) != 1 {
			t.Errorf("%v has %d logical tables", s, len(lts))
			continue
		}
		tm := &triplesMap{node: s, table: g.literal(t, lts[0], "tableName"), query: g.literal(t, lts[0], "sqlQuery")}
		switch {
		case tm.table != "" && tm.query == "":
			i := slices.IndexFunc(tables, func(tb *table) bool { return tb.name == tm.table })
			if i < 0 {
				t.Errorf("%v maps table %q, which the schema does not have", s, tm.table)
				continue
			}
			for _, c := range tables[i].columns {
				tm.columns = append(tm.columns, c.name)
			}
		case tm.query != "" && tm.table == "":
			cols, n, err := q(t.Context(), tm.query)
			if err != nil {
				t.Errorf("%v: the view's query fails on SQLite: %v", s, err)
				continue
			}
			if n == 0 {
				t.Errorf("%v: the view's query returns no rows on the demo data", s)
			}
			tm.columns = cols
		default:
			t.Errorf("%v: a logical table needs exactly one of rr:tableName and rr:sqlQuery", s)
			continue
		}
		maps[s] = tm
	}
	return maps
}

// querierWithColumns runs a query and returns its column names and row count.
type querierWithColumns func(ctx context.Context, query string) ([]string, int, error)

var templateColumn = regexp.MustCompile(`\{([^{}]*)\}`)

// TestMappingMatchesSchema checks that the mapping covers the whole schema: every
// table, every column, and every foreign key as a referencing object map with its
// join condition (R2RML §8); and that every name it uses exists.
func TestMappingMatchesSchema(t *testing.T) {
	g := parseMapping(t)
	db := buildSQLite(t)
	maps := triplesMaps(t, g, func(ctx context.Context, query string) ([]string, int, error) {
		rows, err := db.QueryContext(ctx, query)
		if err != nil {
			return nil, 0, err
		}
		defer rows.Close()
		cols, err := rows.Columns()
		n := 0
		for rows.Next() {
			n++
		}
		return cols, n, err
	})
	// used[table] holds the columns that some term map or join condition reads.
	used := map[string]map[string]bool{}
	use := func(tm *triplesMap, col, where string) {
		if !slices.Contains(tm.columns, col) {
			t.Errorf("%v: %s names column %q, which its logical table lacks (has %q)", tm.node, where, col, tm.columns)
		}
		if tm.table != "" {
			if used[tm.table] == nil {
				used[tm.table] = map[string]bool{}
			}
			used[tm.table][col] = true
		}
	}
	termMap := func(tm *triplesMap, node rdf.Term, where string) {
		if c := g.literal(t, node, "column"); c != "" {
			use(tm, c, where+" rr:column")
		}
		if tpl := g.literal(t, node, "template"); tpl != "" {
			if !strings.HasPrefix(tpl, dataNS) {
				t.Errorf("%v: %s template %q is not under %s", tm.node, where, tpl, dataNS)
			}
			for _, m := range templateColumn.FindAllStringSubmatch(tpl, -1) {
				use(tm, m[1], where+" rr:template")
			}
		}
	}
	var joins []foreignKey
	for _, tm := range maps {
		subjects := g.objects(tm.node, "subjectMap")
		if len(subjects) != 1 {
			t.Errorf("%v has %d subject maps, want 1", tm.node, len(subjects))
			continue
		}
		termMap(tm, subjects[0], "subject map")
		for _, class := range g.objects(subjects[0], "class") {
			if iri, ok := class.(rdf.IRI); !ok || !strings.HasPrefix(string(iri), wfNS) {
				t.Errorf("%v: class %v is not in the wf: vocabulary", tm.node, class)
			}
		}
		for _, pom := range g.objects(tm.node, "predicateObjectMap") {
			if len(g.objects(pom, "predicate")) == 0 {
				t.Errorf("%v: a predicate-object map without rr:predicate", tm.node)
			}
			for _, om := range g.objects(pom, "objectMap") {
				termMap(tm, om, "object map")
				parents := g.objects(om, "parentTriplesMap")
				if len(parents) == 0 {
					continue
				}
				parent := maps[parents[0]]
				if parent == nil {
					t.Errorf("%v: rr:parentTriplesMap %v is not a triples map", tm.node, parents[0])
					continue
				}
				conds := g.objects(om, "joinCondition")
				if len(conds) != 1 {
					t.Errorf("%v: a referencing object map with %d join conditions, want 1", tm.node, len(conds))
					continue
				}
				child, parentCol := g.literal(t, conds[0], "child"), g.literal(t, conds[0], "parent")
				use(tm, child, "rr:child")
				use(parent, parentCol, "rr:parent")
				joins = append(joins, foreignKey{tm.table, child, parent.table, parentCol})
			}
		}
	}
	for _, tb := range tables {
		for _, c := range tb.columns {
			if !used[tb.name][c.name] {
				t.Errorf("column %s.%s is not mapped", tb.name, c.name)
			}
		}
	}
	for _, fk := range foreignKeys {
		if !slices.Contains(joins, fk) {
			t.Errorf("foreign key %s has no referencing object map with that join condition", fk)
		}
	}
}

// TestMappingFeatures checks that the demo mapping shows the R2RML features it is
// meant to show a reader: each is one predicate of the R2RML vocabulary.
func TestMappingFeatures(t *testing.T) {
	g := parseMapping(t)
	for _, feature := range []string{"tableName", "sqlQuery", "template", "class", "column", "datatype",
		"language", "parentTriplesMap", "joinCondition", "object"} {
		found := false
		for _, props := range g {
			if len(props[rdf.IRI(rrNS+feature)]) > 0 {
				found = true
				break
			}
		}
		if !found {
			t.Errorf("mapping.ttl uses no rr:%s", feature)
		}
	}
}

// vocabulary returns the wf: classes and properties the mapping produces.
func (g graph) vocabulary() map[rdf.IRI]bool {
	terms := map[rdf.IRI]bool{}
	for _, props := range g {
		for _, p := range []string{"class", "predicate"} {
			for _, o := range props[rdf.IRI(rrNS+p)] {
				if iri, ok := o.(rdf.IRI); ok {
					terms[iri] = true
				}
			}
		}
	}
	return terms
}
