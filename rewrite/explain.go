package rewrite

import (
	"fmt"
	"strings"

	"veneer/rewrite/algebra"
)

// Explain describes a plan for people: the SQL with its parameters, and what runs
// in-process.
func Explain(p *Plan) string {
	var b strings.Builder
	if p.Stmt == nil {
		b.WriteString("sql: none (no triples map can produce an answer)\n")
	} else {
		fmt.Fprintf(&b, "sql: %s\n", p.SQL)
		for i, a := range p.Args {
			fmt.Fprintf(&b, "  arg %d: %#v\n", i+1, a)
		}
	}
	var inProcess []string
	for _, c := range p.Checks {
		inProcess = append(inProcess, fmt.Sprintf("check ?%s against a second term map", p.Slots[c.Slot].Var))
	}
	for _, f := range p.Filters {
		inProcess = append(inProcess, "filter "+algebra.ExprString(f))
	}
	if p.Distinct {
		inProcess = append(inProcess, "distinct")
	}
	if p.Offset > 0 || p.Limit >= 0 {
		inProcess = append(inProcess, fmt.Sprintf("slice offset %d limit %d", p.Offset, p.Limit))
	}
	if len(inProcess) == 0 {
		b.WriteString("in-process: nothing\n")
	} else {
		b.WriteString("in-process:\n")
		for _, s := range inProcess {
			b.WriteString("  " + s + "\n")
		}
	}
	return b.String()
}
