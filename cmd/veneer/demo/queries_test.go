package demo

import (
	"io/fs"
	"regexp"
	"slices"
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

func TestQueries(t *testing.T) {
	qs := Queries()
	if len(qs) < 6 || len(qs) > 10 {
		t.Errorf("%d example queries, want 6 to 10", len(qs))
	}
	files, err := fs.Glob(QueryFS(), "*.rq")
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, q := range qs {
		names = append(names, q.Name+".rq")
		if !strings.HasPrefix(q.Text, "# ") || q.Summary == "" || strings.Contains(q.Summary, "\n") {
			t.Errorf("%s: the first line must be a one-line # comment, got summary %q", q.Name, q.Summary)
		}
	}
	if !slices.Equal(names, files) {
		t.Errorf("Queries() names %q, QueryFS() holds %q", names, files)
	}
}

// simpleForbidden are the keywords that take a query out of the simple subset the
// first three queries keep to: PREFIX, SELECT with variables, one basic graph
// pattern, FILTER comparisons, LIMIT.
var simpleForbidden = regexp.MustCompile(`(?i)\b(OPTIONAL|UNION|MINUS|GRAPH|SERVICE|BIND|VALUES|GROUP|ORDER|HAVING|OFFSET|DISTINCT|REDUCED|EXISTS|ASK|CONSTRUCT|DESCRIBE|COUNT|SUM|MAX|MIN|AVG|IN)\b|[;,/|*]`)

func TestFirstQueriesAreSimple(t *testing.T) {
	for _, q := range Queries()[:3] {
		body := stripComments(q.Text)
		// IRIs hold slashes and the like; only the syntax around them matters.
		body = regexp.MustCompile(`<[^<>]*>`).ReplaceAllString(body, "<>")
		if m := simpleForbidden.FindString(body); m != "" {
			t.Errorf("%s uses %q, outside the simple subset", q.Name, m)
		}
		if !strings.Contains(body, "SELECT ?") || !strings.Contains(body, "LIMIT ") {
			t.Errorf("%s: want SELECT of variables and a LIMIT", q.Name)
		}
		if strings.Count(body, "{") != 1 {
			t.Errorf("%s: want one group holding one basic graph pattern", q.Name)
		}
	}
}

func stripComments(text string) string {
	var b strings.Builder
	for line := range strings.Lines(text) {
		if !strings.HasPrefix(strings.TrimSpace(line), "#") {
			b.WriteString(line)
		}
	}
	return b.String()
}

var (
	wfName   = regexp.MustCompile(`\bwf:([A-Za-z][A-Za-z0-9]*)`)
	siteIRI  = regexp.MustCompile(`<` + regexp.QuoteMeta(dataNS) + `site/([^>]*)>`)
	wfPrefix = "PREFIX wf: <" + wfNS + ">"
)

// TestQueriesUseTheMapping checks that every class and property a query names is one
// the mapping produces, and that the sites a query names exist, so that no example
// is empty for want of a typo.
func TestQueriesUseTheMapping(t *testing.T) {
	vocab := parseMapping(t).vocabulary()
	for _, q := range Queries() {
		body := stripComments(q.Text)
		if !strings.Contains(body, wfPrefix) {
			t.Errorf("%s does not declare %s", q.Name, wfPrefix)
		}
		for _, m := range wfName.FindAllStringSubmatch(body, -1) {
			if !vocab[rdf.IRI(wfNS+m[1])] {
				t.Errorf("%s uses wf:%s, which the mapping never produces", q.Name, m[1])
			}
		}
		for _, m := range siteIRI.FindAllStringSubmatch(body, -1) {
			if !slices.ContainsFunc(siteSpecs, func(s site) bool { return s.code == m[1] }) {
				t.Errorf("%s names site %q, which the data lack", q.Name, m[1])
			}
		}
	}
}
