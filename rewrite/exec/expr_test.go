package exec

import (
	"testing"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
)

func lit(s string, dt rdf.IRI) algebra.Const { return algebra.Const{Term: rdf.NewTyped(s, dt)} }

var (
	vTrue   = lit("true", rdf.XSDBoolean)
	vFalse  = lit("false", rdf.XSDBoolean)
	unbound = algebra.Var("nothing") // evaluates to an error
)

func op(name string, args ...algebra.Expr) algebra.Call { return algebra.Call{Op: name, Args: args} }

// result classifies an evaluation: "T", "F" or "E" (error).
func result(v value) string {
	if v.err != nil {
		return "E"
	}
	b, err := ebv(v)
	if err != nil {
		return "E"
	}
	if b {
		return "T"
	}
	return "F"
}

func TestLogicalTruthTable(t *testing.T) {
	// SPARQL 1.1 Query §17.2, the truth table of || and && with errors (E).
	operand := map[string]algebra.Expr{"T": vTrue, "F": vFalse, "E": unbound}
	table := []struct{ a, b, or, and string }{
		{"T", "T", "T", "T"}, {"T", "F", "T", "F"}, {"F", "T", "T", "F"}, {"F", "F", "F", "F"},
		{"T", "E", "T", "E"}, {"E", "T", "T", "E"}, {"F", "E", "E", "F"}, {"E", "F", "E", "F"},
		{"E", "E", "E", "E"},
	}
	for _, r := range table {
		if got := result(Eval(op("||", operand[r.a], operand[r.b]), nil)); got != r.or {
			t.Errorf("%s || %s = %s, want %s", r.a, r.b, got, r.or)
		}
		if got := result(Eval(op("&&", operand[r.a], operand[r.b]), nil)); got != r.and {
			t.Errorf("%s && %s = %s, want %s", r.a, r.b, got, r.and)
		}
	}
	if got := result(Eval(op("!", unbound), nil)); got != "E" {
		t.Errorf("!E = %s, want E", got)
	}
}

func TestEffectiveBooleanValue(t *testing.T) {
	// SPARQL 1.1 Query §17.2.2, the examples given for EBV.
	cases := []struct {
		e    algebra.Expr
		want string
	}{
		{lit("", rdf.XSDString), "F"},
		{lit("abc", rdf.XSDString), "T"},
		{lit("0", rdf.XSDInteger), "F"},
		{lit("0.0", rdf.XSDDecimal), "F"},
		{lit("1", rdf.XSDInteger), "T"},
		{lit("abc", rdf.XSDInteger), "F"}, // an ill-formed numeric literal has EBV false
		{lit("2021-01-01", rdf.XSDDate), "E"},
		{algebra.Const{Term: rdf.IRI("https://x.example/")}, "E"},
	}
	for _, c := range cases {
		if got := result(Eval(c.e, nil)); got != c.want {
			t.Errorf("EBV(%v) = %s, want %s", c.e, got, c.want)
		}
	}
}

func TestComparisons(t *testing.T) {
	cases := []struct {
		e    algebra.Expr
		want string
		src  string
	}{
		{op("=", lit("1", rdf.XSDInteger), lit("1.0", rdf.XSDDecimal)), "T", "§17.3 numeric equality across types"},
		{op("<", lit("2", rdf.XSDInteger), lit("1.5E1", rdf.XSDDouble)), "T", "§17.3 numeric promotion"},
		{op("<", lit("a", rdf.XSDString), lit("b", rdf.XSDString)), "T", "§17.3 string ordering"},
		{op("<", lit("Z", rdf.XSDString), lit("a", rdf.XSDString)), "T", "code point order, as fn:compare with the codepoint collation"},
		{op("<", lit("1", rdf.XSDInteger), lit("a", rdf.XSDString)), "E", "§17.3: no operator for integer < string"},
		{op("=", lit("1", rdf.XSDInteger), lit("a", rdf.XSDString)), "F", "values of known, different types are unequal rather than an error, as the W3C open-eq tests expect (from memory)"},
		{op("=", algebra.Const{Term: rdf.IRI("x:a")}, algebra.Const{Term: rdf.IRI("x:a")}), "T", "§17.4.1.7 RDFterm-equal on IRIs"},
		{op("=", lit("x", "http://x.example/dt"), lit("y", "http://x.example/dt")), "E", "§17.4.1.7: unknown datatypes cannot be told apart"},
		{op("<", lit("2021-01-01T00:00:00Z", rdf.XSDDateTime), lit("2021-01-01T01:00:00+00:00", rdf.XSDDateTime)), "T", "§17.3 dateTime ordering"},
		{op("REGEX", lit("Ringkøbing", rdf.XSDString), lit("^ring", rdf.XSDString), lit("i", rdf.XSDString)), "T", "§17.4.3.14 REGEX with the i flag"},
		{op("CONTAINS", algebra.Const{Term: rdf.NewLangString("gearbox oil", "en")}, lit("oil", rdf.XSDString)), "T", "§17.4.3.1.2 argument compatibility"},
		{op("CONTAINS", lit("gearbox", rdf.XSDString), algebra.Const{Term: rdf.NewLangString("box", "en")}), "E", "§17.4.3.1.2: a tagged second argument needs the same tag"},
	}
	for _, c := range cases {
		if got := result(Eval(c.e, nil)); got != c.want {
			t.Errorf("%v = %s, want %s (%s)", c.e, got, c.want, c.src)
		}
	}
}
