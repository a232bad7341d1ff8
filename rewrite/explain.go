package rewrite

import (
	"fmt"
	"strings"

	"veneer/rewrite/algebra"
)

// Explain describes a plan for people: the operator tree, with each SQL scan's
// statement and parameters, so one can see what runs in SQL and what in-process.
func Explain(p *Plan) string {
	var b strings.Builder
	explainOp(&b, p.Root, 0)
	return b.String()
}

func explainOp(b *strings.Builder, op Op, depth int) {
	ind := strings.Repeat("  ", depth)
	line := func(format string, args ...any) { fmt.Fprintf(b, ind+format+"\n", args...) }
	switch op := op.(type) {
	case *Scan:
		if op.Stmt == nil {
			line("sql: none (no triples map can produce an answer)")
			return
		}
		line("sql: %s", op.SQL)
		for i, a := range op.Args {
			line("  arg %d: %#v", i+1, a)
		}
		for _, c := range op.Checks {
			line("  in-process check: ?%s against a second term map", op.Slots[c.Slot].Var)
		}
		return
	case *Filter:
		exprs := make([]string, len(op.Exprs))
		for i, e := range op.Exprs {
			exprs[i] = algebra.ExprString(e)
		}
		line("in-process filter %s", strings.Join(exprs, " && "))
		explainOp(b, op.Input, depth+1)
	case *Extend:
		line("in-process bind ?%s = %s", op.Var, algebra.ExprString(op.Expr))
		explainOp(b, op.Input, depth+1)
	case *Join:
		line("in-process join")
		explainOp(b, op.Left, depth+1)
		explainOp(b, op.Right, depth+1)
	case *LeftJoin:
		if op.Expr != nil {
			line("in-process optional, filter %s", algebra.ExprString(op.Expr))
		} else {
			line("in-process optional")
		}
		explainOp(b, op.Left, depth+1)
		explainOp(b, op.Right, depth+1)
	case *Union:
		line("in-process union")
		explainOp(b, op.Left, depth+1)
		explainOp(b, op.Right, depth+1)
	case *Minus:
		line("in-process minus")
		explainOp(b, op.Left, depth+1)
		explainOp(b, op.Right, depth+1)
	case *Values:
		line("in-process values: %d rows of %v", len(op.Rows), op.Vars)
	case *Group:
		line("in-process group by %d keys, %d aggregates", len(op.Keys), len(op.Aggs))
		explainOp(b, op.Input, depth+1)
	case *Order:
		line("in-process order by %d conditions", len(op.Conds))
		explainOp(b, op.Input, depth+1)
	case *Project:
		line("project %v", op.Vars)
		explainOp(b, op.Input, depth+1)
	case *Path:
		line("in-process path %s (each step planned on its own)", algebra.PathString(op.Path))
	case *PerGraph:
		line("in-process: for each named graph ?%s, %s", op.Var, "the pattern planned in that graph")
		explainOp(b, op.Names, depth+1)
	case *Service:
		silent := ""
		if op.Silent {
			silent = " (silent)"
		}
		line("remote SERVICE %s%s", op.Endpoint, silent)
	case *Distinct:
		line("in-process distinct")
		explainOp(b, op.Input, depth+1)
	case *Slice:
		line("in-process slice offset %d limit %d", op.Offset, op.Limit)
		explainOp(b, op.Input, depth+1)
	}
}
