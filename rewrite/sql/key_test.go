package sql

import (
	"math/rand/v2"
	"reflect"
	"testing"

	"veneer/catalog"
)

// TestSameMatchesDeepEqual checks Same against Go's reflect.DeepEqual, the
// standard library's structural equality, on random expressions made of the
// kinds the planner repeats (no sub-queries, whose identity Same compares).
func TestSameMatchesDeepEqual(t *testing.T) {
	rnd := rand.New(rand.NewPCG(3, 5))
	var gen func(depth int) Expr
	leaf := func() Expr {
		switch rnd.IntN(6) {
		case 0:
			return ColumnRef{Table: []string{"t1", "t2"}[rnd.IntN(2)], Column: catalog.Ident{Name: []string{"a", "b"}[rnd.IntN(2)], Quoted: rnd.IntN(2) == 0}}
		case 1:
			return Param{Value: []any{int64(3), float64(3), "3", true, int64(-1), ""}[rnd.IntN(6)]}
		case 2:
			return Int(rnd.IntN(2))
		case 3:
			return Null{}
		case 4:
			return Late{ID: rnd.IntN(2)}
		default:
			return Param{Value: 3} // an int: a type AppendKey has no case for
		}
	}
	gen = func(depth int) Expr {
		if depth == 0 {
			return leaf()
		}
		switch rnd.IntN(9) {
		case 0:
			return Binary{Op: []string{"=", "<"}[rnd.IntN(2)], L: gen(depth - 1), R: gen(depth - 1), Exact: rnd.IntN(2) == 0}
		case 1:
			return IsNull{X: gen(depth - 1), Not: rnd.IntN(2) == 0}
		case 2:
			return Not{X: gen(depth - 1)}
		case 3:
			args := make([]Expr, rnd.IntN(3))
			for i := range args {
				args[i] = gen(depth - 1)
			}
			return Func{Name: []string{"lower", "upper"}[rnd.IntN(2)], Args: args}
		case 4:
			return Cast{X: gen(depth - 1), Type: []string{"TEXT", "NUMERIC"}[rnd.IntN(2)]}
		case 5:
			return In{X: gen(depth - 1), List: []Expr{gen(depth - 1)}, Exact: rnd.IntN(2) == 0}
		case 6:
			return Case{When: gen(depth - 1), Then: gen(depth - 1)}
		case 7:
			return Agg{Name: "COUNT", Distinct: rnd.IntN(2) == 0, Arg: gen(depth - 1)}
		default:
			return leaf()
		}
	}
	equal := 0
	for range 20000 {
		a, b := gen(2), gen(2)
		if rnd.IntN(4) == 0 {
			b = a
		}
		want := reflect.DeepEqual(a, b)
		if got := Same(a, b); got != want {
			t.Fatalf("Same(%#v, %#v) = %v, reflect.DeepEqual says %v", a, b, got, want)
		}
		if want {
			equal++
		}
	}
	if equal < 1000 {
		t.Errorf("only %d of the pairs were equal: the check compares too little", equal)
	}
}
