package exec

import (
	"context"
	"testing"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// turbineScan decodes rows of (id, name, rated) into ?s (an IRI template), ?name
// and ?rated (natural literals).
func turbineScan() *rewrite.Scan {
	tmpl := catalog.Template{Parts: []catalog.TemplatePart{{Text: "http://wind.example/turbine/"}, {Column: "id"}}}
	return &rewrite.Scan{Stmt: &sql.Select{}, SQL: "rows", Slots: []rewrite.Slot{
		{Var: "s", Builders: []rewrite.Builder{{Map: catalog.TermMap{Kind: catalog.TemplateMap, Template: tmpl, TermType: rdf.KindIRI}, Cols: []int{0}, Kinds: []source.TypeKind{source.TypeInteger}}}},
		{Var: "name", Builders: []rewrite.Builder{{Map: catalog.TermMap{Kind: catalog.Column, Column: "name", TermType: rdf.KindLiteral}, Cols: []int{1}, Kinds: []source.TypeKind{source.TypeString}}}},
		{Var: "rated", Builders: []rewrite.Builder{{Map: catalog.TermMap{Kind: catalog.Column, Column: "rated", TermType: rdf.KindLiteral}, Cols: []int{2}, Kinds: []source.TypeKind{source.TypeFloat}}}},
	}}
}

// sameRow is a source.Rows that hands out one row for ever.
type sameRow struct {
	cols []source.Column
	row  []any
}

func (r *sameRow) Columns() []source.Column { return r.cols }
func (r *sameRow) Next() bool               { return true }
func (r *sameRow) Values() []any            { return r.row }
func (r *sameRow) Err() error               { return nil }
func (r *sameRow) Close() error             { return nil }

// turbineRows is a row of turbineScan's statement.
func turbineRows() *sameRow {
	return &sameRow{
		cols: []source.Column{{Name: "id", Kind: source.TypeInteger}, {Name: "name", Kind: source.TypeString}, {Name: "rated", Kind: source.TypeFloat}},
		row:  []any{int64(1234), "North ridge 7", 3.6},
	}
}

// BenchmarkDecodeRow decodes a row into terms (the path of in-process
// operators); BenchmarkViewRow into views (the path of a plain scan streamed
// to a result writer).
func BenchmarkDecodeRow(b *testing.B) {
	r, _ := newRun(context.Background(), nil, nil, Options{})
	n, err := newBuilder(r).build(turbineScan())
	if err != nil {
		b.Fatal(err)
	}
	s := n.it.(*scanIter)
	s.rows.start(turbineRows())
	b.ReportAllocs()
	for b.Loop() {
		s.rows.next()
		if sol, err := s.decode(); sol == nil || err != nil {
			b.Fatal("no solution", err)
		}
	}
}

func BenchmarkViewRow(b *testing.B) {
	r, _ := newRun(context.Background(), nil, nil, Options{})
	bl := newBuilder(r)
	n, err := bl.build(turbineScan())
	if err != nil {
		b.Fatal(err)
	}
	s := n.it.(*scanIter)
	s.rows.start(turbineRows())
	views := make([]rdf.View, bl.l.width())
	var buf []byte
	b.ReportAllocs()
	for b.Loop() {
		clear(views)
		var ok bool
		if ok, buf, err = s.nextViews(views, buf[:0]); !ok || err != nil {
			b.Fatal("no solution", err)
		}
	}
}

func BenchmarkComparisonFilter(b *testing.B) {
	r, _ := newRun(context.Background(), nil, nil, Options{})
	bl := newBuilder(r)
	if _, err := bl.build(turbineScan()); err != nil {
		b.Fatal(err)
	}
	ast := algebra.Call{Op: "&&", Args: []algebra.Expr{
		algebra.Call{Op: ">", Args: []algebra.Expr{algebra.Var("rated"), algebra.Const{Term: rdf.NewTyped("2.5", rdf.XSDDecimal)}}},
		algebra.Call{Op: "!=", Args: []algebra.Expr{algebra.Var("name"), algebra.Const{Term: rdf.NewString("South 1")}}},
	}}
	fn, err := bl.c.expr(ast)
	if err != nil {
		b.Fatal(err)
	}
	sol := []rdf.Term{rdf.IRI("http://wind.example/turbine/1234"), rdf.NewString("North ridge 7"), rdf.NewTyped("3.6E0", rdf.XSDDouble)}
	tests := []evalFn{fn}
	b.ReportAllocs()
	for b.Loop() {
		if ok, err := r.holds(tests, sol); !ok || err != nil {
			b.Fatal("the filter does not hold")
		}
	}
}

func BenchmarkScanFilterSlice(b *testing.B) {
	src := &fakeSource{rows: make([][]any, 10000)}
	for i := range src.rows {
		src.rows[i] = []any{int64(i), "turbine", float64(i % 7)}
	}
	op := &rewrite.Slice{Offset: 0, Limit: -1, Input: &rewrite.Filter{Input: turbineScan(), Exprs: []algebra.Expr{
		algebra.Call{Op: ">", Args: []algebra.Expr{algebra.Var("rated"), algebra.Const{Term: rdf.NewTyped("3", rdf.XSDInteger)}}},
	}}}
	plan := &rewrite.Plan{Form: algebra.Select, Vars: []algebra.Var{"s", "rated"}, Root: op}
	b.ReportAllocs()
	for b.Loop() {
		c, err := start(context.Background(), src, nil, plan, Options{})
		if err != nil {
			b.Fatal(err)
		}
		n := 0
		for c.Next() {
			n++
		}
		if c.Err() != nil || n != 4284 { // the rows with i mod 7 in 4..6
			b.Fatalf("%d solutions, error %v", n, c.Err())
		}
	}
}
