package rewrite

import (
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
	"veneer/rewrite/sql"
)

// A federation engine sends hundreds of sub-queries that differ only in the
// data of a VALUES block. The planner can lift that data out of a plan: the
// conditions the data turns into (IN lists on template columns) become
// sql.Late placeholders, and the inline data operators read each run's rows.
// Such a plan serves every query of the same shape, the text with the data
// cut out, once bind has given it the data of one query. A shape also carries
// what of the data planning looks at (UNDEF, repeated rows), so queries whose
// data plans differently never share a plan.

// liftPlan plans the query of ast so that its plan serves every query of the
// same shape. shared is false when some block's data stays inside the plan
// (an EXISTS evaluated in-process, GRAPH ?g evaluated graph by graph, a
// SERVICE pattern): the plan, bound to ast's data, then serves ast alone.
func (pl *Planner) liftPlan(r Request, ast *sparql.Query) (p *Plan, shared bool, err error) {
	aq, err := translate(r, ast)
	if err != nil {
		return nil, false, err
	}
	qs := &query{pl: pl, dataset: aq.Dataset, lift: true}
	if p, err = pl.plan(aq, qs); err != nil {
		return nil, false, err
	}
	p.Base = baseOf(r, ast)
	p.lifted = qs
	used := map[int]bool{}
	var walk func(Op)
	walk = func(op Op) {
		switch op := op.(type) {
		case *Scan:
			for _, b := range op.lateBlocks {
				used[b] = true
			}
		case *Values:
			if op.block > 0 {
				used[op.block] = true
			}
		}
		for _, in := range inputs(op) {
			walk(in)
		}
	}
	walk(p.Root)
	return p, len(used) == len(ast.Data), nil
}

// bind returns the plan of a lifted plan's query over data, the rows of each
// VALUES block (data[i] for block i+1).
func (p *Plan) bind(data [][][]rdf.Term) *Plan {
	q := p.lifted
	resolve := func(l sql.Late) sql.Expr {
		lt := q.lates[l.ID]
		cond, ok := q.dataCondition(lt, data[lt.block-1])
		if !ok {
			return sql.Binary{Op: "=", L: sql.Int(1), R: sql.Int(0)} // no row of the data fits
		}
		return cond
	}
	var bindOp func(Op) Op
	bindOp = func(op Op) Op {
		switch op := op.(type) {
		case *Scan:
			if op.lateBlocks == nil {
				return op
			}
			c := *op
			c.lateBlocks = nil
			c.SQL, c.Args = sql.PrintLate(c.Stmt, q.pl.dialect, resolve)
			return &c
		case *Values:
			if op.block == 0 {
				return op
			}
			return &Values{Vars: op.Vars, Rows: data[op.block-1]}
		}
		in := inputs(op)
		if in == nil {
			return op
		}
		bound := make([]Op, len(in))
		for i, x := range in {
			bound[i] = bindOp(x)
		}
		return withInputs(op, bound)
	}
	out := *p
	out.Root = bindOp(p.Root)
	out.lifted = nil
	return &out
}

// shapeKey identifies the shape of a request whose query has VALUES blocks:
// the request with the blocks' data cut out of the text, and for each block
// which columns hold UNDEF and whether a row repeats (restrict and prefilter
// plan by them).
func shapeKey(r Request, ast *sparql.Query, data [][][]rdf.Term) cacheKey {
	var b strings.Builder
	at := 0
	for i, v := range ast.Data {
		rows := data[i]
		b.WriteString(r.Text[at:v.Body[0]])
		b.WriteString("{\x00")
		for col := range v.Vars {
			undef := byte('-')
			for _, row := range rows {
				if row[col] == nil {
					undef = 'u'
					break
				}
			}
			b.WriteByte(undef)
		}
		if !distinctRows(rows) {
			b.WriteByte('d')
		}
		b.WriteString("\x00}")
		at = int(v.Body[1])
	}
	b.WriteString(r.Text[at:])
	r.Text = b.String()
	k := requestKey(r)
	k.context = "shape\x00" + k.context
	return k
}

// blockData translates the data of every VALUES block of ast.
func blockData(ast *sparql.Query) [][][]rdf.Term {
	data := make([][][]rdf.Term, len(ast.Data))
	for i, v := range ast.Data {
		data[i] = algebra.InlineData(v).Rows
	}
	return data
}
