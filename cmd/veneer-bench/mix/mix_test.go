package mix

import (
	"net/url"
	"testing"
	"time"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/sparql"
)

func TestRebind(t *testing.T) {
	for _, tt := range []struct {
		d        source.Dialect
		in, want string
	}{
		{source.Postgres, "a = ? AND b IN (?, ?)", "a = $1 AND b IN ($2, $3)"},
		{source.MySQL, "a = ?", "a = ?"},
		{source.SQLite, "a = ?", "a = ?"},
	} {
		if got := Rebind(tt.in, tt.d); got != tt.want {
			t.Errorf("Rebind(%q, %v) = %q, want %q", tt.in, tt.d, got, tt.want)
		}
	}
}

// TestResource checks IRI building against R2RML §7.3's rule: a column value
// in a template is percent-encoded except for iunreserved characters (the
// part numbers of bearings hold a "/").
func TestResource(t *testing.T) {
	if got, want := Resource("part/", "GNB-23-00013/C3"), rdf.IRI(Data+"part/GNB-23-00013%2FC3"); got != want {
		t.Errorf("Resource = %s, want %s", got, want)
	}
	if got, want := Resource("part-usage/", "12", "7"), rdf.IRI(Data+"part-usage/12-7"); got != want {
		t.Errorf("Resource = %s, want %s", got, want)
	}
}

// TestQueriesParse checks that every query of the mix is SPARQL 1.1 and that
// each twin's parts agree with each other.
func TestQueriesParse(t *testing.T) {
	p := Params{WorkOrder: "WO-2023-0000051", Turbine: "WF23-2011-000003", Site: "SDV0001", Technician: 3,
		Turbines: []string{"WF23-2011-000001", "WF36-2016-000002"}}
	qs := Queries(p, source.Postgres)
	if len(qs) < 14 {
		t.Errorf("%d queries, want at least 14", len(qs))
	}
	for _, q := range qs {
		if _, err := sparql.Parse(q.SPARQL); err != nil {
			t.Errorf("%s: %v", q.Name, err)
		}
		if q.Form != Ask && len(q.Twin.Vars) != len(q.Twin.Terms) {
			t.Errorf("%s: %d variables, %d term builders", q.Name, len(q.Twin.Vars), len(q.Twin.Terms))
		}
	}
}

// TestInstantiate checks that a template triple with an unbound variable is
// left out (SPARQL 1.1 Query §16.2).
func TestInstantiate(t *testing.T) {
	s, p := rdf.IRI("https://data.veneer.example/windfarm/site/A"), rdf.IRI(vocab+"region")
	tw := Twin{Template: []Triple{{Slot{Term: s}, Slot{Term: p}, Slot{Var: 0}}}}
	if got := tw.Instantiate([]rdf.Term{nil}); len(got) != 0 {
		t.Errorf("unbound object: got %v", got)
	}
	if got := tw.Instantiate([]rdf.Term{rdf.NewString("Kerry")}); len(got) != 1 || got[0].O != rdf.NewString("Kerry") {
		t.Errorf("bound object: got %v", got)
	}
}

func TestTwinArgsRoundTrip(t *testing.T) {
	// What the bench client sends is what the SQL handler binds, type for type.
	at := time.Date(2024, 3, 1, 11, 45, 30, 5e8, time.UTC)
	tw := Twin{Args: []any{"WF23-2011-000001", "a&b=c d", int64(-3000), 6.5, at}}
	q, err := url.ParseQuery(tw.ArgsQuery())
	if err != nil {
		t.Fatal(err)
	}
	got, err := tw.ReadArgs(q["a"])
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range tw.Args {
		if w, ok := want.(time.Time); ok {
			if g, ok := got[i].(time.Time); !ok || !g.Equal(w) {
				t.Errorf("argument %d: %#v, want %v", i, got[i], w)
			}
		} else if got[i] != want {
			t.Errorf("argument %d: %#v, want %#v", i, got[i], want)
		}
	}
	if _, err := tw.ReadArgs(q["a"][:2]); err == nil {
		t.Error("two arguments of five were read")
	}
	if _, err := (Twin{Args: []any{int64(1)}}).ReadArgs([]string{"x"}); err == nil {
		t.Error(`"x" was read as an integer`)
	}
}
