package conformance

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/exec"
)

// The queries that read a mapped dataset back: the triples of the default
// graph, and the quads of the named graphs. Two queries rather than one UNION
// keep a failure in one of them apart from the other; blank node labels agree
// between them because veneer derives them from row values.
const (
	defaultGraphQuery = `SELECT ?s ?p ?o WHERE { ?s ?p ?o }`
	namedGraphsQuery  = `SELECT ?s ?p ?o ?g WHERE { GRAPH ?g { ?s ?p ?o } }`
)

// StageError is a failure of one stage of answering over a mapping: probing the
// columns, planning or running a query.
type StageError struct {
	Stage string
	Err   error
}

// Error names the stage and what went wrong there.
func (e *StageError) Error() string { return e.Stage + ": " + e.Err.Error() }

// Unwrap returns the stage's error.
func (e *StageError) Unwrap() error { return e.Err }

// MappedDataset answers over cat on src through veneer's pipeline (column
// probing, planner, executor) and returns every quad of the dataset the
// mapping defines, as the two dataset queries give them, duplicates included.
// A nil graph stands for the default graph.
func MappedDataset(ctx context.Context, src source.Source, cat *catalog.Catalog) ([]rdf.Quad, error) {
	eng, err := newEngine(ctx, src, cat)
	if err != nil {
		return nil, err
	}
	var quads []rdf.Quad
	for _, q := range []string{defaultGraphQuery, namedGraphsQuery} {
		rows, err := solutions(ctx, eng, q)
		if err != nil {
			return nil, &StageError{Stage: "query " + q, Err: err}
		}
		for _, r := range rows {
			quad := rdf.Quad{S: r[0], P: r[1], O: r[2]}
			if len(r) == 4 {
				quad.G = r[3]
			}
			quads = append(quads, quad)
		}
	}
	return quads, nil
}

// newEngine builds veneer's query engine over cat on src, as veneer serve
// does: the mapping's columns probed on the live schema, the planner over
// them, the executor.
func newEngine(ctx context.Context, src source.Source, cat *catalog.Catalog) (*exec.Engine, error) {
	cols, err := catalog.ProbeColumns(ctx, src, cat)
	if err != nil {
		return nil, &StageError{Stage: "probing the mapping's columns", Err: err}
	}
	return &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}, nil
}

// solutions runs a query whose variables must all be bound in every solution.
func solutions(ctx context.Context, eng *exec.Engine, query string) ([][]rdf.Term, error) {
	cur, err := eng.Query(ctx, query)
	if err != nil {
		return nil, err
	}
	defer cur.Close()
	var out [][]rdf.Term
	for cur.Next() {
		sol := cur.Solution()
		for i, t := range sol {
			if t == nil {
				return nil, fmt.Errorf("solution %d leaves ?%s unbound", len(out)+1, cur.Vars()[i])
			}
		}
		out = append(out, append([]rdf.Term(nil), sol...))
	}
	if err := cur.Err(); err != nil {
		return nil, err
	}
	return out, cur.Close()
}

// mappingError reports whether err, from loading a mapping or answering over
// it, may stand for the error a test expects: a part of SPARQL the planner
// lacks, or a query cut short by the deadline, says nothing about the mapping.
func mappingError(err error) bool {
	var unsupported *rewrite.Unsupported
	return !errors.As(err, &unsupported) &&
		!errors.Is(err, context.DeadlineExceeded) && !errors.Is(err, context.Canceled)
}

// Mismatch says how a dataset differs from the expected one.
type Mismatch struct {
	// Want and Got count the distinct quads of each.
	Want, Got int
	// Isomorphic says that the distinct quads are the expected dataset, so only
	// Duplicates are wrong.
	Isomorphic bool
	// Missing and Unexpected are quads in N-Quads syntax with blank node labels
	// shown as "_:*": a diff of graphs that differ only in how blank nodes are
	// shared leaves both empty.
	Missing, Unexpected []string
	// Duplicates are quads that a dataset query returned more than once.
	Duplicates []string
}

// maxShown is how many differing quads a one-line reason shows.
const maxShown = 3

// Error summarises the difference on one line, showing the first few quads.
func (m *Mismatch) Error() string {
	var parts []string
	if len(m.Duplicates) > 0 {
		parts = append(parts, fmt.Sprintf("%d duplicate solutions (first %s)", len(m.Duplicates), m.Duplicates[0]))
	}
	switch {
	case m.Isomorphic:
	case len(m.Missing)+len(m.Unexpected) == 0:
		parts = append(parts, fmt.Sprintf("got %d quads, want %d, equal up to blank node labels but not isomorphic: blank nodes are shared differently", m.Got, m.Want))
	default:
		parts = append(parts, fmt.Sprintf("got %d quads, want %d", m.Got, m.Want))
		if len(m.Missing) > 0 {
			parts = append(parts, fmt.Sprintf("missing %d: %s", len(m.Missing), shown(m.Missing)))
		}
		if len(m.Unexpected) > 0 {
			parts = append(parts, fmt.Sprintf("unexpected %d: %s", len(m.Unexpected), shown(m.Unexpected)))
		}
	}
	return strings.Join(parts, "; ")
}

// Details lists every differing quad, "-" for missing, "+" for unexpected and
// "2x" for duplicates.
func (m *Mismatch) Details() []string {
	var out []string
	for _, q := range m.Missing {
		out = append(out, "- "+q)
	}
	for _, q := range m.Unexpected {
		out = append(out, "+ "+q)
	}
	for _, q := range m.Duplicates {
		out = append(out, "2x "+q)
	}
	return out
}

func shown(qs []string) string {
	if len(qs) <= maxShown {
		return strings.Join(qs, " | ")
	}
	return strings.Join(qs[:maxShown], " | ") + fmt.Sprintf(" | … %d more", len(qs)-maxShown)
}

// CompareDatasets checks got, the quads the dataset queries returned, against
// want: they must be the same RDF dataset up to blank node labels (RDF 1.1
// Concepts §3.6, §4), and no quad may come twice, since a basic graph pattern
// without blank nodes matches each triple of a graph, a set, once (SPARQL 1.1
// Query §18.5: the multiplicity of a solution is the number of distinct
// instance mappings). A difference is a *Mismatch.
func CompareDatasets(want, got []rdf.Quad) error {
	set, dups := dedupe(got)
	wantSet, _ := dedupe(want)
	iso := rdf.Isomorphic(wantSet, set)
	if iso && len(dups) == 0 {
		return nil
	}
	m := &Mismatch{Want: len(wantSet), Got: len(set), Isomorphic: iso, Duplicates: dups}
	if !iso {
		m.Missing, m.Unexpected = diffMasked(wantSet, set)
	}
	return m
}

// dedupe returns the distinct quads of qs in order, and the N-Quads text of
// each quad that came more than once.
func dedupe(qs []rdf.Quad) ([]rdf.Quad, []string) {
	seen := map[string]int{}
	var out []rdf.Quad
	var dups []string
	for _, q := range qs {
		k := quadText(q, false)
		seen[k]++
		switch seen[k] {
		case 1:
			out = append(out, q)
		case 2:
			dups = append(dups, k)
		}
	}
	return out, dups
}

// diffMasked compares two quad sets with blank node labels masked, as
// multisets, and returns what only want has and what only got has, sorted.
func diffMasked(want, got []rdf.Quad) (missing, unexpected []string) {
	count := map[string]int{}
	for _, q := range want {
		count[quadText(q, true)]++
	}
	for _, q := range got {
		count[quadText(q, true)]--
	}
	for k, n := range count {
		for ; n > 0; n-- {
			missing = append(missing, k)
		}
		for ; n < 0; n++ {
			unexpected = append(unexpected, k)
		}
	}
	sort.Strings(missing)
	sort.Strings(unexpected)
	return missing, unexpected
}

// quadText renders a quad as an N-Quads line; with mask, every blank node is
// written "_:*".
func quadText(q rdf.Quad, mask bool) string {
	var b strings.Builder
	for i, t := range []rdf.Term{q.S, q.P, q.O, q.G} {
		if t == nil {
			continue
		}
		if i > 0 {
			b.WriteByte(' ')
		}
		if mask && t.Kind() == rdf.KindBlank {
			b.WriteString("_:*")
		} else {
			b.WriteString(t.String())
		}
	}
	b.WriteString(" .")
	return b.String()
}
