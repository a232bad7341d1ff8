package rewrite_test

import (
	"context"
	"regexp"
	"slices"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
	"veneer/rewrite"
	"veneer/rewrite/exec"
)

// computedMapping maps the readings table of TestComputedInSQL.
const computedMapping = `@prefix rr: <http://www.w3.org/ns/r2rml#> .
@prefix ex: <https://vocab.veneer.example/reading#> .
<#Reading> rr:logicalTable [ rr:tableName "reading" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/reading/{id}" ] ;
    rr:predicateObjectMap [ rr:predicate ex:label ; rr:objectMap [ rr:column "label" ] ] ;
    rr:predicateObjectMap [ rr:predicate ex:n ; rr:objectMap [ rr:column "n" ] ] ;
    rr:predicateObjectMap [ rr:predicate ex:taken ; rr:objectMap [ rr:column "taken" ] ] ;
    rr:predicateObjectMap [ rr:predicate ex:at ; rr:objectMap [ rr:column "at" ] ] .
`

// computedCases are expressions the planner computes in SQL in the dialects
// listed, over values at the edges of their semantics. Each answer is checked
// against the in-process evaluator's (which the W3C suites check) for the same
// expression with every variable read through IF(true, ?x, ?x), which keeps it
// in-process.
var computedCases = []struct {
	name  string
	query string // over ?r with ?l ?n ?d ?t bound
	inSQL []source.Dialect
}{
	{"integer arithmetic", `BIND(?n * 2 + 1 AS ?v) BIND(-?n - 1 AS ?w) BIND(?n * ?n AS ?x)`, pgMy},
	// XPath F&O §4.2 op:numeric-divide: integer operands give a decimal.
	{"division", `BIND(?n / 3 AS ?v) BIND(?n / -8 AS ?w) BIND(?n / 7 AS ?x)`, pgMy},
	{"division filter", `FILTER(?n / 4 > 2)`, pgMy},
	{"strlen", `BIND(STRLEN(?l) AS ?v) FILTER(STRLEN(?l) + 1 > 2)`, pgMy},
	// The XPath F&O §5.4.3 fn:substring examples with integer arguments:
	// ("metadata", 4, 3) is "ada", ("12345", 0, 3) "12", ("12345", 5, -3) "",
	// ("12345", -3, 5) "1", ("motor car", 6) " car".
	{"substr", `BIND(SUBSTR(?l, 4, 3) AS ?v) BIND(SUBSTR(?l, 0, 3) AS ?w) BIND(SUBSTR(?l, 5, -3) AS ?x)
		BIND(SUBSTR(?l, -3, 5) AS ?y) BIND(SUBSTR(?l, 6) AS ?z)`, pgMy},
	{"concat", `BIND(CONCAT(?l, " | ", ?l) AS ?v) FILTER(CONCAT("<", ?l) != "<12345")`, all},
	{"date fields", `BIND(YEAR(?d) AS ?v) BIND(MONTH(?d) AS ?w) BIND(DAY(?d) AS ?x)
		BIND(HOURS(?t) AS ?y) BIND(MINUTES(?t) AS ?z) BIND(SECONDS(?t) AS ?s)`, pgMy},
	{"date filter", `FILTER(YEAR(?d) < 2000 || SECONDS(?t) > 30)`, pgMy},
	{"not exists, correlated", `FILTER NOT EXISTS { ?q <https://vocab.veneer.example/reading#n> ?m FILTER(?m > ?n) }`, all},
}

var (
	pgMy = []source.Dialect{source.Postgres, source.MySQL}
	all  = []source.Dialect{source.Postgres, source.MySQL, source.SQLite}
)

// TestComputedInSQL runs each computed expression in SQL on each database and
// compares the answers with in-process evaluation.
func TestComputedInSQL(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		e := readingEngine(t, db)
		for _, c := range computedCases {
			t.Run(c.name, func(t *testing.T) {
				q := `PREFIX ex: <https://vocab.veneer.example/reading#>
SELECT * WHERE { ?r ex:label ?l ; ex:n ?n ; ex:taken ?d ; ex:at ?t . ` + c.query + ` }`
				checkPushed(t, e, q, slices.Contains(c.inSQL, db.Dialect))
				got, want := answers(t, e, q), answers(t, e, inProcess(q))
				if !slices.Equal(got, want) {
					t.Errorf("SQL answers\n%s\nin-process answers\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
				}
			})
		}
		t.Run("aggregates", func(t *testing.T) {
			q := `PREFIX ex: <https://vocab.veneer.example/reading#>
SELECT ?r (GROUP_CONCAT(?l; SEPARATOR=" ; ") AS ?g) (SAMPLE(?n) AS ?one) WHERE { ?r ex:label ?l ; ex:n ?n } GROUP BY ?r`
			checkPushed(t, e, q, db.Dialect != source.MySQL)
			got, want := answers(t, e, q), answers(t, e, inProcess(q))
			if !slices.Equal(got, want) {
				t.Errorf("SQL answers\n%s\nin-process answers\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
			}
		})
	})
}

// readingEngine creates and fills the readings table, with the values the
// cases probe: integers at int4's edges, strings with characters beyond the
// BMP and trailing spaces, a leap day, fractional seconds, the first day
// MySQL documents.
func readingEngine(t *testing.T, db *sourcetest.DB) *exec.Engine {
	stamp := map[source.Dialect]string{source.Postgres: "TIMESTAMP(6)", source.MySQL: "DATETIME(6)", source.SQLite: "TIMESTAMP"}[db.Dialect]
	db.Exec(t, `CREATE TABLE reading (id INTEGER PRIMARY KEY, label VARCHAR(40) NOT NULL, n INTEGER NOT NULL, taken DATE NOT NULL, at `+stamp+` NOT NULL)`,
		`INSERT INTO reading VALUES (1, 'metadata', 0, '2024-02-29', '2024-02-29 23:59:58.123456')`,
		`INSERT INTO reading VALUES (2, '12345', 7, '1999-12-31', '1999-12-31 00:00:00')`,
		`INSERT INTO reading VALUES (3, 'motor car', -7, '2000-01-01', '2000-01-01 12:30:45.5')`,
		`INSERT INTO reading VALUES (4, 'Ærø ß€😀 ', 2147483647, '1970-06-15', '1970-06-15 06:07:08')`,
		`INSERT INTO reading VALUES (5, '', -2147483648, '2038-01-19', '2038-01-19 03:14:07.000001')`,
		`INSERT INTO reading VALUES (6, 'x', 10, '1000-01-01', '1000-01-01 00:00:00')`)
	cat, err := r2rml.Load("reading.ttl", []byte(computedMapping))
	if err != nil {
		t.Fatal(err)
	}
	src := db.Open(t)
	cols, err := catalog.ProbeColumns(context.Background(), src, cat)
	if err != nil {
		t.Fatal(err)
	}
	return &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}
}

// checkPushed fails unless the plan computes everything in SQL (inSQL) or
// leaves something in-process (otherwise).
func checkPushed(t *testing.T, e *exec.Engine, q string, inSQL bool) {
	t.Helper()
	p, err := e.Planner.Compile(q)
	if err != nil {
		t.Fatal(err)
	}
	plan := rewrite.Explain(p)
	residual := strings.Contains(plan, "in-process")
	if inSQL == residual {
		t.Fatalf("in SQL: %v, but the plan is\n%s", inSQL, plan)
	}
}

var (
	exprStart = regexp.MustCompile(`(BIND|FILTER|GROUP_CONCAT|SAMPLE)\(`)
	varRef    = regexp.MustCompile(`(AS )?\?[a-z]+\b`)
)

// inProcess reads every variable of the query's expressions (the arguments of
// BIND, FILTER and the aggregates) through IF, which the planner leaves to the
// evaluator.
func inProcess(q string) string {
	var b strings.Builder
	for {
		loc := exprStart.FindStringIndex(q)
		if loc == nil {
			return b.String() + q
		}
		b.WriteString(q[:loc[1]])
		q = q[loc[1]:]
		depth, end := 1, 0
		for depth > 0 && end < len(q) {
			switch q[end] {
			case '(':
				depth++
			case ')':
				depth--
			}
			end++
		}
		b.WriteString(varRef.ReplaceAllStringFunc(q[:end], func(v string) string {
			if strings.HasPrefix(v, "AS ") {
				return v // the variable BIND binds
			}
			return "IF(true, " + v + ", " + v + ")"
		}))
		q = q[end:]
	}
}

// answers runs q and returns its solutions as sorted lines; the parts of a
// GROUP_CONCAT value (whose order is not defined) are sorted within it.
func answers(t *testing.T, e *exec.Engine, q string) []string {
	t.Helper()
	c, err := e.Query(context.Background(), q)
	if err != nil {
		t.Fatalf("%v\n%s", err, q)
	}
	defer c.Close()
	var out []string
	for c.Next() {
		var line []string
		for i, term := range c.Solution() {
			s := "-"
			if term != nil {
				s = term.String()
			}
			if c.Vars()[i] == "g" {
				parts := strings.Split(s, " ; ")
				slices.Sort(parts)
				s = strings.Join(parts, " ; ")
			}
			line = append(line, c.Vars()[i]+"="+s)
		}
		out = append(out, strings.Join(line, " "))
	}
	if err := c.Err(); err != nil {
		t.Fatalf("%v\n%s", err, q)
	}
	slices.Sort(out)
	return out
}
