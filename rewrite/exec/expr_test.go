package exec

import (
	"context"
	"strings"
	"testing"
	"time"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// The expression tests write each expression in SPARQL syntax; it is parsed and
// translated by rewrite/sparql and rewrite/algebra, compiled here and evaluated
// over a solution that binds nothing (so ?u is an unbound variable). Results
// are written as in Turtle with xsd: for the XML Schema namespace, or "error".

const testPrologue = `PREFIX xsd: <http://www.w3.org/2001/XMLSchema#> PREFIX ex: <http://x.example/> `

// testNow is the NOW() of the expression tests.
var testNow = time.Date(2024, 3, 9, 14, 30, 5, 250e6, time.FixedZone("", -5*3600))

func compileText(t *testing.T, text string) (evalFn, *compiler) {
	t.Helper()
	ast, err := sparql.Parse(testPrologue + "SELECT (" + text + " AS ?result) {}")
	if err != nil {
		t.Fatalf("%s: %v", text, err)
	}
	q, err := algebra.Translate(ast)
	if err != nil {
		t.Fatalf("%s: %v", text, err)
	}
	var e algebra.Expr
	var find func(n algebra.Node)
	find = func(n algebra.Node) {
		if x, ok := n.(algebra.Extend); ok && x.Var == "result" {
			e = x.Expr
		}
		for _, c := range n.Children() {
			find(c)
		}
	}
	find(q.Root)
	if e == nil {
		t.Fatalf("%s: no expression in %#v", text, q.Root)
	}
	r, err := newRun(context.Background(), nil, &memPlanner{}, Options{Base: "http://x.example/base/", Now: testNow})
	if err != nil {
		t.Fatal(err)
	}
	c := &compiler{r: r, l: &layout{}}
	fn, err := c.expr(e)
	if err != nil {
		t.Fatalf("%s: %v", text, err)
	}
	return fn, c
}

func evalText(t *testing.T, text string) string {
	t.Helper()
	fn, c := compileText(t, text)
	term, err := fn(make([]rdf.Term, c.l.width()))
	if err != nil {
		if fatal(err) {
			t.Fatalf("%s: %v", text, err)
		}
		return "error"
	}
	return show(term)
}

// show writes a term as the tables here do.
func show(t rdf.Term) string {
	switch t := t.(type) {
	case rdf.Literal:
		s := `"` + rdf.EscapeString(t.Lexical) + `"`
		switch {
		case t.Lang != "":
			return s + "@" + t.Lang
		case t.Datatype == rdf.XSDString:
			return s
		case strings.HasPrefix(string(t.Datatype), rdf.XSDNS):
			return s + "^^xsd:" + strings.TrimPrefix(string(t.Datatype), rdf.XSDNS)
		}
		return s + "^^" + t.Datatype.String()
	case nil:
		return "unbound"
	}
	return t.String()
}

type exprCase struct {
	expr, want string
	src        string // where the expected value comes from
}

func runExprCases(t *testing.T, cases []exprCase) {
	t.Helper()
	for _, c := range cases {
		if got := evalText(t, c.expr); got != c.want {
			t.Errorf("%s = %s, want %s (%s)", c.expr, got, c.want, c.src)
		}
	}
}

const (
	T = `"true"^^xsd:boolean`
	F = `"false"^^xsd:boolean`
	E = "error"
)

func TestLogicalTruthTable(t *testing.T) {
	// SPARQL 1.1 Query §17.2, the truth table of || and && with errors (E); an
	// unbound variable is the error.
	operand := map[string]string{"T": "true", "F": "false", "E": "?u"}
	value := map[string]string{"T": T, "F": F, "E": E}
	table := []struct{ a, b, or, and string }{
		{"T", "T", "T", "T"}, {"T", "F", "T", "F"}, {"F", "T", "T", "F"}, {"F", "F", "F", "F"},
		{"T", "E", "T", "E"}, {"E", "T", "T", "E"}, {"F", "E", "E", "F"}, {"E", "F", "E", "F"},
		{"E", "E", "E", "E"},
	}
	for _, r := range table {
		if got := evalText(t, operand[r.a]+" || "+operand[r.b]); got != value[r.or] {
			t.Errorf("%s || %s = %s, want %s", r.a, r.b, got, value[r.or])
		}
		if got := evalText(t, operand[r.a]+" && "+operand[r.b]); got != value[r.and] {
			t.Errorf("%s && %s = %s, want %s", r.a, r.b, got, value[r.and])
		}
	}
	runExprCases(t, []exprCase{
		{"!?u", E, "§17.2: fn:not of an error is an error"},
		{"!true", F, "§17.3 fn:not"},
		{`!""`, T, "§17.2.2: the EBV of an empty string is false"},
	})
}

func TestEffectiveBooleanValue(t *testing.T) {
	// SPARQL 1.1 Query §17.2.2; the operand goes through fn:not, whose
	// argument is an EBV.
	runExprCases(t, []exprCase{
		{`!""`, T, "§17.2.2: zero-length string"},
		{`!"abc"`, F, "§17.2.2: non-empty string"},
		{`!"abc"^^xsd:string`, F, "§17.2.2: xsd:string"},
		{`!0`, T, "§17.2.2: numeric zero"},
		{`!0.0`, T, "§17.2.2: numeric zero"},
		{`!"NaN"^^xsd:double`, T, "§17.2.2: NaN"},
		{`!1`, F, "§17.2.2: non-zero numeric"},
		{`!"abc"^^xsd:integer`, T, "§17.2.2: an invalid numeric lexical form has EBV false"},
		{`!"maybe"^^xsd:boolean`, T, "§17.2.2: an invalid boolean lexical form has EBV false"},
		{`!"1"^^xsd:boolean`, F, "§17.2.2: the boolean value"},
		{`!"2021-01-01"^^xsd:date`, E, "§17.2.2: any other literal is a type error"},
		{`!"chat"@fr`, E, "§17.2.2: a language-tagged literal is not a plain literal without tag"},
		{`!ex:a`, E, "§17.2.2: an IRI is a type error"},
	})
}

func TestComparisons(t *testing.T) {
	runExprCases(t, []exprCase{
		{"1 = 1.0", T, "§17.3 op:numeric-equal across numeric types"},
		{"2 < 1.5E1", T, "§17.3 numeric promotion (XPath 2.0 §B.1)"},
		{`"1"^^xsd:int = 1`, T, "§17.1: derived integer types are numerics"},
		{`"300"^^xsd:byte = 300`, E, "XML Schema Part 2 §3.3.19: 300 is outside xsd:byte, so the literal is ill-formed"},
		{`"NaN"^^xsd:double = "NaN"^^xsd:double`, F, "XPath op:numeric-equal: NaN equals nothing"},
		{`"NaN"^^xsd:double != "NaN"^^xsd:double`, T, "XPath fn:not(op:numeric-equal)"},
		{`"INF"^^xsd:double > 1e308`, T, "XML Schema: INF is above every finite double"},
		{`0.1 = 1e-1`, T, "XPath 2.0 §B.1: the decimal is promoted to double before comparing"},
		{`"a" < "b"`, T, "§17.3 fn:compare on simple literals"},
		{`"Z" < "a"`, T, "§17.3: the codepoint collation"},
		{`"abc" = "abc"^^xsd:string`, T, "RDF 1.1: a simple literal is an xsd:string"},
		{`1 < "a"`, E, "§17.3: no operator for numeric < string"},
		{`1 = "a"`, F, "§17.4.1.7: literals of known, different types are not equal (from memory: the open-eq tests of the DAWG suite)"},
		{`"a"@en = "a"@EN`, T, "RDF 1.1 Concepts §3.3: language tags compare case-insensitively"},
		{`"a"@en = "a"@fr`, F, "§17.4.1.7: different language tags"},
		{`"a"@en < "b"@en`, E, "§17.3: < has no row for language-tagged literals"},
		{`ex:a = ex:a`, T, "§17.4.1.7 RDFterm-equal on IRIs"},
		{`ex:a = ex:b`, F, "§17.4.1.7"},
		{`ex:a < ex:b`, E, "§17.3: no < on IRIs"},
		{`"x"^^ex:dt = "y"^^ex:dt`, E, "§17.4.1.7: unknown datatypes cannot be told apart"},
		{`"x"^^ex:dt != "y"^^ex:dt`, E, "§17.4.1.7, the romanNumeral example"},
		{`"x"^^ex:dt = "x"^^ex:dt`, T, "§17.4.1.7: the same term"},
		{`"2005-01-01T00:00:00Z"^^xsd:dateTime = "2004-12-31T19:00:00-05:00"^^xsd:dateTime`, T, "§17.4.1.7, the dc:date example"},
		{`"2021-01-01T00:00:00Z"^^xsd:dateTime < "2021-01-01T01:00:00+00:00"^^xsd:dateTime`, T, "§17.3 op:dateTime-less-than"},
		{`true > false`, T, "§17.3 op:boolean-greater-than"},
		{`"1"^^xsd:boolean = true`, T, "§17.3 op:boolean-equal compares values"},
		{`1 >= 1`, T, "§17.3"},
		{`1 <= 0.5`, F, "§17.3"},
		{`?u = 1`, E, "§17.2: an unbound argument is an error"},
		{`1.10 = 1.1`, T, "XML Schema: decimals compare by value"},
		{`"+1.50"^^xsd:decimal = 1.5`, T, "XML Schema Part 2 §3.2.3.1 decimal lexical space"},
		{`12345678901234567890.5 > 12345678901234567890`, T, "decimals beyond 18 digits compare exactly"},
		{`0.000000000000000000001 > 0`, T, "a decimal of 21 fractional digits"},
		{`-0.5 < 0`, T, "§17.3"},
		{`"2006-08-23Z"^^xsd:date = "2006-08-23"^^xsd:date`, E, "XML Schema Part 2 §3.2.7.4: a zoned and an unzoned value within 14 hours are incomparable (DAWG open-world date-1)"},
		{`"2006-08-23Z"^^xsd:date > "2006-08-22"^^xsd:date`, T, "XML Schema Part 2 §3.2.7.4 (DAWG open-world date-3)"},
		{`"2006-08-23"^^xsd:date != "2001-01-01Z"^^xsd:date`, T, "XML Schema Part 2 §3.2.7.4 (DAWG open-world date-2)"},
	})
}

func TestArithmetic(t *testing.T) {
	// SPARQL 1.1 Query §17.3 with XPath 2.0's op:numeric-* and promotion; the
	// lexical forms are the canonical ones of XML Schema 1.0 Part 2.
	runExprCases(t, []exprCase{
		{"1 + 2", `"3"^^xsd:integer`, "op:numeric-add on integers"},
		{"1 + 2.5", `"3.5"^^xsd:decimal`, "integer promoted to decimal"},
		{"1.5 + 1.5", `"3"^^xsd:decimal`, "XSD 1.1 canonical decimal: no point for integral values (W3C functions/ceil01 writes decimals so)"},
		{"1 + 1e0", `"2.0E0"^^xsd:double`, "promotion to double; canonical double"},
		{`1 + "1"^^xsd:float`, `"2.0E0"^^xsd:float`, "promotion to float"},
		{`"1"^^xsd:float + 1e0`, `"2.0E0"^^xsd:double`, "float promoted to double"},
		{"7 / 2", `"3.5"^^xsd:decimal`, "§17.3: integer / integer is a decimal"},
		{"6 / 3", `"2"^^xsd:decimal`, "§17.3; XSD 1.1 canonical decimal"},
		{"1 / 3", `"0.33333333333333333333"^^xsd:decimal`, "decimal division rounded to 20 digits (implementation-defined, F&O §6.2.4)"},
		{"1 / 0", E, "F&O op:numeric-divide: integer division by zero (FOAR0001)"},
		{"1.0 / 0", E, "F&O: decimal division by zero"},
		{"1 / 0e0", `"INF"^^xsd:double`, "IEEE 754 division of doubles"},
		{"-1 / 0e0", `"-INF"^^xsd:double`, "IEEE 754"},
		{"0e0 / 0e0", `"NaN"^^xsd:double`, "IEEE 754"},
		{"3 * 0.5", `"1.5"^^xsd:decimal`, "op:numeric-multiply"},
		{"3 - 5", `"-2"^^xsd:integer`, "op:numeric-subtract"},
		{"9223372036854775807 + 1", `"9223372036854775808"^^xsd:integer`, "xsd:integer is unbounded"},
		{"-(-9223372036854775807 - 1)", `"9223372036854775808"^^xsd:integer`, "unary minus beyond int64"},
		{`"5"^^xsd:byte + "5"^^xsd:short`, `"10"^^xsd:integer`, "derived types give xsd:integer results"},
		{"-(2)", `"-2"^^xsd:integer`, "op:numeric-unary-minus"},
		{"+(2.50)", `"2.5"^^xsd:decimal`, "op:numeric-unary-plus gives the value in canonical form"},
		{`1 + "a"`, E, "§17.3: no operator for numeric + string"},
		{`"1" + 1`, E, "§17.3: a string is not a numeric"},
		{"1e300 * 1e300", `"INF"^^xsd:double`, "IEEE 754 overflow"},
		{`"0.1"^^xsd:float + 0`, `"1.0E-1"^^xsd:float`, "float canonical form uses float precision"},
	})
}

func TestFunctionalForms(t *testing.T) {
	// SPARQL 1.1 Query §17.4.1, the examples given there where it has them.
	runExprCases(t, []exprCase{
		{"BOUND(?u)", F, "§17.4.1.1"},
		{`IF(2 = 2, "yes", "no")`, `"yes"`, "§17.4.1.2 example"},
		{`IF(BOUND(?u), "yes", "no")`, `"no"`, "§17.4.1.2 example"},
		{`IF(2 = 2, "yes", 1/0)`, `"yes"`, "§17.4.1.2: the other branch is not evaluated"},
		{`IF(2 = 1, "yes", 1/0)`, E, "§17.4.1.2 example"},
		{`IF("2" > 1, "yes", "no")`, E, "§17.4.1.2 example"},
		{"COALESCE(1/0, 2)", `"2"^^xsd:integer`, "§17.4.1.3 example"},
		{"COALESCE(5, ?u)", `"5"^^xsd:integer`, "§17.4.1.3 example"},
		{"COALESCE(?u, 3)", `"3"^^xsd:integer`, "§17.4.1.3 example"},
		{"COALESCE(?u)", E, "§17.4.1.3 example"},
		{"COALESCE()", E, "§17.4.1.3: no argument evaluates"},
		{"2 IN (1, 2, 3)", T, "§17.4.1.9 example"},
		{"2 IN ()", F, "§17.4.1.9 example"},
		{"2 IN (<http://example/iri>, \"str\", 2.0)", T, "§17.4.1.9 example"},
		{"2 IN (1/0, 2)", T, "§17.4.1.9 example"},
		{"2 IN (2, 1/0)", T, "§17.4.1.9 example"},
		{"2 IN (3, 1/0)", E, "§17.4.1.9 example"},
		{"2 NOT IN (1, 2, 3)", F, "§17.4.1.10 example"},
		{"2 NOT IN ()", T, "§17.4.1.10 example"},
		{"2 NOT IN (<http://example/iri>, \"str\", 2.0)", F, "§17.4.1.10 example"},
		{"2 NOT IN (1/0, 2)", F, "§17.4.1.10 example"},
		{"2 NOT IN (2, 1/0)", F, "§17.4.1.10 example"},
		{"2 NOT IN (3, 1/0)", E, "§17.4.1.10 example"},
		{`sameTerm(1, 1.0)`, F, "§17.4.1.8: different terms"},
		{`sameTerm("a"@en, "a"@EN)`, T, "RDF 1.1 Concepts §3.3"},
	})
}

func TestTermFunctions(t *testing.T) {
	runExprCases(t, []exprCase{
		{"isIRI(ex:a)", T, "§17.4.2.1"},
		{"isURI(\"a\")", F, "§17.4.2.1"},
		{"isBlank(BNODE())", T, "§17.4.2.2, §17.4.2.9"},
		{"isLiteral(\"a\"@en)", T, "§17.4.2.3"},
		{"isNumeric(12)", T, "§17.4.2.4 example"},
		{`isNumeric("12")`, F, "§17.4.2.4 example"},
		{`isNumeric("12"^^xsd:nonNegativeInteger)`, T, "§17.4.2.4 example"},
		{`isNumeric("1200"^^xsd:byte)`, F, "§17.4.2.4 example"},
		{`isNumeric(<http://example/>)`, F, "§17.4.2.4 example"},
		{"STR(ex:a)", `"http://x.example/a"`, "§17.4.2.5"},
		{`STR("chat"@en)`, `"chat"`, "§17.4.2.5"},
		{"STR(BNODE())", E, "§17.4.2.5: a blank node has no string"},
		{`LANG("chat"@en)`, `"en"`, "§17.4.2.6"},
		{`LANG("chat")`, `""`, "§17.4.2.6"},
		{"LANG(ex:a)", E, "§17.4.2.6: the argument is a literal"},
		{`DATATYPE("chat")`, "<" + rdf.XSDNS + "string>", "§17.4.2.7"},
		{`DATATYPE("chat"@en)`, "<" + rdf.RDFNS + "langString>", "§17.4.2.7"},
		{`DATATYPE(1.5)`, "<" + rdf.XSDNS + "decimal>", "§17.4.2.7"},
		{`IRI("http://example/")`, "<http://example/>", "§17.4.2.8 example"},
		{`IRI(<http://example/>)`, "<http://example/>", "§17.4.2.8 example"},
		{`IRI("rel")`, "<http://x.example/base/rel>", "§17.4.2.8: resolved against the base IRI"},
		{`URI("../up")`, "<http://x.example/up>", "§17.4.2.8 with RFC 3986 §5.2 dot segments"},
		{`IRI(1)`, E, "§17.4.2.8: other terms are an error"},
		{`STRDT("123", xsd:integer)`, `"123"^^xsd:integer`, "§17.4.2.10 example"},
		{`STRDT("iiii", <http://example/romanNumeral>)`, `"iiii"^^<http://example/romanNumeral>`, "§17.4.2.10 example"},
		{`STRDT("123"@en, xsd:integer)`, E, "§17.4.2.10: the lexical form is a simple literal"},
		{`STRLANG("chat", "en")`, `"chat"@en`, "§17.4.2.11 example"},
		{`STRLANG("chat"@fr, "en")`, E, "§17.4.2.11: the lexical form is a simple literal"},
		{`STRLANG("chat", "")`, E, "RDF 1.1: a language tag is not empty"},
		{`STRSTARTS(STR(UUID()), "urn:uuid:")`, T, "§17.4.2.12"},
		{`STRLEN(STRUUID())`, `"36"^^xsd:integer`, "§17.4.2.13: the UUID text form (RFC 4122)"},
		{`REGEX(STRUUID(), "^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$")`, T, "RFC 4122 §4.4: a version 4 UUID"},
		{`UUID() = UUID()`, F, "§17.4.2.12: each call returns a different UUID"},
		{`BNODE() = BNODE()`, F, "§17.4.2.9: every call of BNODE() is a distinct blank node"},
		{`sameTerm(BNODE("a"), BNODE("a"))`, T, "§17.4.2.9: the same string within one solution"},
		{`sameTerm(BNODE("a"), BNODE("b"))`, F, "§17.4.2.9"},
		{`BNODE("a"@en)`, E, "§17.4.2.9: the argument is a simple literal"},
	})
}

func TestStringFunctions(t *testing.T) {
	// SPARQL 1.1 Query §17.4.3; unless noted, the rows are the tables given for
	// each function there.
	runExprCases(t, []exprCase{
		{`STRLEN("chat")`, `"4"^^xsd:integer`, "§17.4.3.2"},
		{`STRLEN("chat"@en)`, `"4"^^xsd:integer`, "§17.4.3.2"},
		{`STRLEN("日本語")`, `"3"^^xsd:integer`, "§17.4.3.2: characters, not bytes"},
		{`STRLEN(1)`, E, "§17.4.3.1.1: not a string literal"},
		{`SUBSTR("foobar", 4)`, `"bar"`, "§17.4.3.3"},
		{`SUBSTR("foobar"@en, 4)`, `"bar"@en`, "§17.4.3.3"},
		{`SUBSTR("foobar", 4, 1)`, `"b"`, "§17.4.3.3"},
		{`SUBSTR("foobar"@en, 4, 1)`, `"b"@en`, "§17.4.3.3"},
		{`SUBSTR("motor car", 6)`, `" car"`, "F&O fn:substring example"},
		{`SUBSTR("metadata", 4, 3)`, `"ada"`, "F&O fn:substring example"},
		{`SUBSTR("12345", 1.5, 2.6)`, `"234"`, "F&O fn:substring example"},
		{`SUBSTR("12345", 0, 3)`, `"12"`, "F&O fn:substring example"},
		{`SUBSTR("12345", 5, -3)`, `""`, "F&O fn:substring example"},
		{`SUBSTR("12345", -3, 5)`, `"1"`, "F&O fn:substring example"},
		{`SUBSTR("12345", 0e0/0e0, 3)`, `""`, "F&O fn:substring example (NaN)"},
		{`SUBSTR("12345", -42, 1e0/0e0)`, `"12345"`, "F&O fn:substring example (INF)"},
		{`UCASE("foo"@en)`, `"FOO"@en`, "§17.4.3.4"},
		{`LCASE("BAR"^^xsd:string)`, `"bar"`, "§17.4.3.5"},
		{`STRSTARTS("foobar", "foo")`, T, "§17.4.3.6"},
		{`STRSTARTS("foobar"@en, "foo"@en)`, T, "§17.4.3.6"},
		{`STRSTARTS("foobar"@en, "foo")`, T, "§17.4.3.6"},
		{`STRENDS("foobar", "bar"^^xsd:string)`, T, "§17.4.3.7"},
		{`CONTAINS("foobar"@en, "foo")`, T, "§17.4.3.8"},
		{`CONTAINS("abc"@fr, "b"@ja)`, E, "§17.4.3.1.2: incompatible"},
		{`CONTAINS("abc", "b"@ja)`, E, "§17.4.3.1.2: incompatible"},
		{`CONTAINS("abc"@en, "b"@EN)`, T, "§17.4.3.1.2 with case-insensitive tags (RDF 1.1 Concepts §3.3)"},
		{`STRBEFORE("abc","b")`, `"a"`, "§17.4.3.9"},
		{`STRBEFORE("abc"@en,"bc")`, `"a"@en`, "§17.4.3.9"},
		{`STRBEFORE("abc"@en,"b"@cy)`, E, "§17.4.3.9"},
		{`STRBEFORE("abc"^^xsd:string,"")`, `""`, "§17.4.3.9"},
		{`STRBEFORE("abc","xyz")`, `""`, "§17.4.3.9"},
		{`STRBEFORE("abc"@en, "z"@en)`, `""`, "§17.4.3.9"},
		{`STRBEFORE("abc"@en, "z")`, `""`, "§17.4.3.9"},
		{`STRBEFORE("abc"@en, ""@en)`, `""@en`, "§17.4.3.9"},
		{`STRBEFORE("abc"@en, "")`, `""@en`, "§17.4.3.9"},
		{`STRAFTER("abc","b")`, `"c"`, "§17.4.3.10"},
		{`STRAFTER("abc"@en,"ab")`, `"c"@en`, "§17.4.3.10"},
		{`STRAFTER("abc"@en,"b"@cy)`, E, "§17.4.3.10"},
		{`STRAFTER("abc"^^xsd:string,"")`, `"abc"`, "§17.4.3.10"},
		{`STRAFTER("abc","xyz")`, `""`, "§17.4.3.10"},
		{`STRAFTER("abc"@en, "z"@en)`, `""`, "§17.4.3.10"},
		{`STRAFTER("abc"@en, ""@en)`, `"abc"@en`, "§17.4.3.10"},
		{`STRAFTER("abc"@en, "")`, `"abc"@en`, "§17.4.3.10"},
		{`ENCODE_FOR_URI("Los Angeles")`, `"Los%20Angeles"`, "§17.4.3.11"},
		{`ENCODE_FOR_URI("Los Angeles"@en)`, `"Los%20Angeles"`, "§17.4.3.11"},
		{`ENCODE_FOR_URI("100% organic")`, `"100%25%20organic"`, "F&O fn:encode-for-uri example"},
		{`ENCODE_FOR_URI("~bébé")`, `"~b%C3%A9b%C3%A9"`, "F&O fn:encode-for-uri example"},
		{`CONCAT("foo", "bar")`, `"foobar"`, "§17.4.3.12"},
		{`CONCAT("foo"@en, "bar"@en)`, `"foobar"@en`, "§17.4.3.12"},
		{`CONCAT("foo"^^xsd:string, "bar"^^xsd:string)`, `"foobar"`, "§17.4.3.12"},
		{`CONCAT("foo"@en, "bar")`, `"foobar"`, "§17.4.3.12"},
		{`CONCAT()`, `""`, "§17.4.3.12: no arguments (W3C sparql11 functions concat-empty)"},
		{`CONCAT("a", 1)`, E, "§17.4.3.12: arguments are string literals"},
		{`langMatches("fr", "FR")`, T, "§17.4.3.13 example"},
		{`langMatches("fr-BE", "FR")`, T, "§17.4.3.13 example"},
		{`langMatches("en", "FR")`, F, "§17.4.3.13"},
		{`langMatches("fra", "fr")`, F, "RFC 4647 §3.3.1: prefixes end at a hyphen"},
		{`langMatches("", "*")`, F, "§17.4.3.13: * matches non-empty tags only"},
		{`langMatches("de", "*")`, T, "§17.4.3.13"},
	})
}

func TestRegex(t *testing.T) {
	// SPARQL 1.1 Query §17.4.3.14 and §17.4.3.15 over XPath's fn:matches and
	// fn:replace (F&O §7.6); F&O rows are its examples.
	runExprCases(t, []exprCase{
		{`REGEX("Alice", "^ali", "i")`, T, "§17.4.3.14 example"},
		{`REGEX("Bob", "^ali", "i")`, F, "§17.4.3.14 example"},
		{`REGEX("abracadabra", "bra")`, T, "F&O fn:matches example"},
		{`REGEX("abracadabra", "^a.*a$")`, T, "F&O fn:matches example"},
		{`REGEX("abracadabra", "^bra")`, F, "F&O fn:matches example"},
		{`REGEX("a\nb", "a.b")`, F, "F&O §7.6.1: . does not match a newline"},
		{`REGEX("a\rb", "a.b")`, F, "F&O §7.6.1: nor a carriage return"},
		{`REGEX("a\nb", "a.b", "s")`, T, "F&O §7.6.6: s flag"},
		{`REGEX("x\nabc", "^abc$")`, F, "F&O §7.6.6: without m, ^ anchors at the string's start"},
		{`REGEX("x\nabc", "^abc$", "m")`, T, "F&O §7.6.6: m flag"},
		{`REGEX("hello world", "hello world", "x")`, F, "F&O §7.6.6: x removes whitespace from the pattern"},
		{`REGEX("helloworld", "hello world", "x")`, T, "F&O §7.6.6: x flag"},
		{`REGEX("a+b", "a+b", "q")`, T, "F&O 3.0 §5.6.1: q takes the pattern literally"},
		{`REGEX("aab", "a+b", "q")`, F, "F&O 3.0 q flag"},
		{`REGEX("٣", "^\\d$")`, T, "F&O §7.6.1: \\d is the Unicode class Nd"},
		{`REGEX("\f", "\\s")`, F, "XML Schema Part 2 §F.1.1: \\s is space, tab, CR and LF only"},
		{`REGEX("é", "^\\w$")`, T, "XML Schema Part 2 §F.1.1: \\w is every character but punctuation, separators and others"},
		{`REGEX("٣", "^[\\d]$")`, T, "XML Schema Part 2 §F.1.1: \\d inside a class"},
		{`REGEX("a b", "^a[\\s]b$")`, T, "\\s inside a class"},
		{`REGEX("\f", "^[^\\s]$")`, T, "a negated class with \\s: form feed is not XML whitespace"},
		{`REGEX("a", "^[\\S]$")`, T, "\\S inside a class"},
		{`REGEX("A", "^\\p{Lu}$")`, T, "F&O §7.6.1 category escapes"},
		{`REGEX("A", "\\p{IsBasicLatin}")`, E, "Unicode blocks are not in RE2"},
		{`REGEX("abcabc", "(abc)\\1")`, E, "back-references are not in RE2: an error, not a wrong answer"},
		{`REGEX("b", "[a-z-[aeiou]]")`, E, "character class subtraction is not in RE2"},
		{`REGEX("a", "a", "z")`, E, "F&O §7.6.6: an unknown flag is an error (FORX0001)"},
		{`REGEX("a", "(")`, E, "F&O: an invalid pattern is an error (FORX0002)"},
		{`REGEX(1, "1")`, E, "§17.4.3.14: text is a string literal"},
		{`REGEX("chat"@en, "^ch")`, T, "§17.4.3.1.1: a language-tagged text is a string literal"},
		{`REGEX("chat", "^ch"@en)`, E, "§17.4.3.14: the pattern is a simple literal"},
		{`REPLACE("abcd", "b", "Z")`, `"aZcd"`, "§17.4.3.15 example"},
		{`REPLACE("abab", "B", "Z","i")`, `"aZaZ"`, "§17.4.3.15 example"},
		{`REPLACE("abab", "B.", "Z","i")`, `"aZb"`, "§17.4.3.15 example"},
		{`REPLACE("abracadabra", "bra", "*")`, `"a*cada*"`, "F&O fn:replace example"},
		{`REPLACE("abracadabra", "a.*a", "*")`, `"*"`, "F&O fn:replace example"},
		{`REPLACE("abracadabra", "a.*?a", "*")`, `"*c*bra"`, "F&O fn:replace example"},
		{`REPLACE("abracadabra", "a", "")`, `"brcdbr"`, "F&O fn:replace example"},
		{`REPLACE("abracadabra", "a(.)", "a$1$1")`, `"abbraccaddabbra"`, "F&O fn:replace example"},
		{`REPLACE("abracadabra", ".*?", "$1")`, E, "F&O fn:replace example: a pattern matching \"\" is an error"},
		{`REPLACE("AAAA", "A+", "b")`, `"b"`, "F&O fn:replace example"},
		{`REPLACE("AAAA", "A+?", "b")`, `"bbbb"`, "F&O fn:replace example"},
		{`REPLACE("darted", "^(.*?)d(.*)$", "$1c$2")`, `"carted"`, "F&O fn:replace example"},
		{`REPLACE("a.b", ".", "$", "q")`, `"a$b"`, "F&O 3.0: with q the replacement is literal too"},
		{`REPLACE("ab", "(a)", "\\$1")`, `"$1b"`, "F&O §7.6.3: \\$ is a literal dollar"},
		{`REPLACE("ab", "(a)", "$")`, E, "F&O §7.6.3: a lone $ is an error (FORX0004)"},
		{`REPLACE("ab", "(a)", "$2x")`, `"xb"`, "F&O §7.6.3: a group number above the groups is the empty string"},
		{`REPLACE("chat"@fr, "a", "o")`, `"chot"@fr`, "§17.4.3.1.3: the result has the kind of the first argument"},
	})
}

func TestNumericFunctions(t *testing.T) {
	runExprCases(t, []exprCase{
		{"ABS(1)", `"1"^^xsd:integer`, "§17.4.4.1 example"},
		{"ABS(-1.5)", `"1.5"^^xsd:decimal`, "§17.4.4.1 example"},
		{`ABS("-2"^^xsd:float)`, `"2.0E0"^^xsd:float`, "F&O fn:abs keeps the type"},
		{"ROUND(2.4999)", `"2"^^xsd:decimal`, "§17.4.4.2 example (the spec shows the value as 2.0; W3C functions/round01 writes the canonical 2)"},
		{"ROUND(2.5)", `"3"^^xsd:decimal`, "§17.4.4.2 example"},
		{"ROUND(-2.5)", `"-2"^^xsd:decimal`, "§17.4.4.2 example"},
		{"ROUND(-2.5e0)", `"-2.0E0"^^xsd:double`, "F&O fn:round: halves go up"},
		{"ROUND(-0.4e0)", `"-0.0E0"^^xsd:double`, "F&O fn:round example: round(-0.4e0) is -0.0e0"},
		{"ROUND(7)", `"7"^^xsd:integer`, "F&O fn:round keeps integers"},
		{"CEIL(10.5)", `"11"^^xsd:decimal`, "§17.4.4.3 example; W3C functions/ceil01"},
		{"CEIL(-10.5)", `"-10"^^xsd:decimal`, "§17.4.4.3 example"},
		{"FLOOR(10.5)", `"10"^^xsd:decimal`, "§17.4.4.4 example; W3C functions/floor01"},
		{"FLOOR(-10.5)", `"-11"^^xsd:decimal`, "§17.4.4.4 example"},
		{`FLOOR("NaN"^^xsd:double)`, `"NaN"^^xsd:double`, "F&O fn:floor"},
		{`ABS("a")`, E, "§17.4.4.1: an error for a non-numeric"},
		{"RAND() >= 0 && RAND() < 1", T, "§17.4.4.5"},
		{"DATATYPE(RAND())", "<" + rdf.XSDNS + "double>", "§17.4.4.5"},
	})
}

func TestDateTimeFunctions(t *testing.T) {
	const dt = `"2011-01-10T14:45:13.815-05:00"^^xsd:dateTime`
	runExprCases(t, []exprCase{
		{"YEAR(" + dt + ")", `"2011"^^xsd:integer`, "§17.4.5.2 example"},
		{"MONTH(" + dt + ")", `"1"^^xsd:integer`, "§17.4.5.3 example"},
		{"DAY(" + dt + ")", `"10"^^xsd:integer`, "§17.4.5.4 example"},
		{"HOURS(" + dt + ")", `"14"^^xsd:integer`, "§17.4.5.5 example"},
		{"MINUTES(" + dt + ")", `"45"^^xsd:integer`, "§17.4.5.6 example"},
		{"SECONDS(" + dt + ")", `"13.815"^^xsd:decimal`, "§17.4.5.7 example"},
		{"TIMEZONE(" + dt + ")", `"-PT5H"^^xsd:dayTimeDuration`, "§17.4.5.8 example"},
		{`TIMEZONE("2011-01-10T14:45:13.815Z"^^xsd:dateTime)`, `"PT0S"^^xsd:dayTimeDuration`, "§17.4.5.8 example"},
		{`TIMEZONE("2011-01-10T14:45:13.815"^^xsd:dateTime)`, E, "§17.4.5.8 example"},
		{`TIMEZONE("2011-01-10T14:45:13+05:30"^^xsd:dateTime)`, `"PT5H30M"^^xsd:dayTimeDuration`, "XML Schema 1.1 dayTimeDuration lexical form"},
		{"TZ(" + dt + ")", `"-05:00"`, "§17.4.5.9 example"},
		{`TZ("2011-01-10T14:45:13.815Z"^^xsd:dateTime)`, `"Z"`, "§17.4.5.9 example"},
		{`TZ("2011-01-10T14:45:13.815"^^xsd:dateTime)`, `""`, "§17.4.5.9 example"},
		{`HOURS("2011-01-10T24:00:00"^^xsd:dateTime)`, `"24"^^xsd:integer`, "§17.4.5.5: the value as given in the lexical form"},
		{`YEAR("2011-02-30T00:00:00Z"^^xsd:dateTime)`, E, "XML Schema: February has no 30th"},
		{`YEAR("2011-01-10")`, E, "§17.4.5.2: the argument is an xsd:dateTime"},
		{`YEAR("-0044-03-15"^^xsd:date)`, `"-44"^^xsd:integer`, "XML Schema 1.0 negative years; xsd:date accepted as fn:year-from-date does"},
		{"NOW()", `"2024-03-09T14:30:05.25-05:00"^^xsd:dateTime`, "§17.4.5.1: the run's fixed moment"},
		{"NOW() = NOW()", T, "§17.4.5.1: one value per query execution"},
	})
}

func TestHashFunctions(t *testing.T) {
	// SPARQL 1.1 Query §17.4.6, the table of examples.
	runExprCases(t, []exprCase{
		{`MD5("abc")`, `"900150983cd24fb0d6963f7d28e17f72"`, "§17.4.6.1"},
		{`MD5("abc"^^xsd:string)`, `"900150983cd24fb0d6963f7d28e17f72"`, "§17.4.6.1"},
		{`SHA1("abc")`, `"a9993e364706816aba3e25717850c26c9cd0d89d"`, "§17.4.6.2"},
		{`SHA256("abc")`, `"ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"`, "§17.4.6.3"},
		{`SHA384("abc")`, `"cb00753f45a35e8bb5a03d699ac65007272c32ab0eded1631a8b605a43ff5bed8086072ba1e7cc2358baeca134c825a7"`, "§17.4.6.4"},
		{`SHA512("abc")`, `"ddaf35a193617abacc417349ae20413112e6fa4e89a97ea20a9eeee64b55d39a2192992a274fc1a836ba3c23a3feebbd454d4423643ce80e2a9ac94fa54ca49f"`, "§17.4.6.5"},
		{`MD5("abc"@en)`, E, "§17.4.6.1: the argument is a simple literal or xsd:string"},
	})
}

func TestCasts(t *testing.T) {
	// SPARQL 1.1 Query §17.5 and XPath casting (F&O §17.1); the W3C sparql11
	// cast tests (cast-*) use the same values over a graph.
	runExprCases(t, []exprCase{
		{`xsd:string(ex:z)`, `"http://x.example/z"`, "§17.5: an IRI casts to its string (cast-string)"},
		{`xsd:string(0.0)`, `"0"`, "F&O §17.1.2: decimal to string (cast-string :n04)"},
		{`xsd:string(1e0)`, `"1"`, "F&O §17.1.2: double to string (cast-string :n08)"},
		{`xsd:string("-7.875"^^xsd:float)`, `"-7.875"`, "F&O §17.1.2 (cast-string :n12)"},
		{`xsd:string(1e7)`, `"1.0E7"`, "F&O §17.1.2: large doubles keep the exponent"},
		{`xsd:string("0"^^xsd:boolean)`, `"false"`, "F&O §17.1.2: boolean to string by value (cast-string :b03)"},
		{`xsd:string("chat"@en)`, E, "§17.5: a language-tagged literal is neither a simple literal nor an XSD type"},
		{`xsd:integer("13")`, `"13"^^xsd:integer`, "cast-int :s11"},
		{`xsd:integer("1.5")`, E, "cast-int :s08: not an integer lexical form"},
		{`xsd:integer("-7.875"^^xsd:float)`, `"-7"^^xsd:integer`, "F&O §17.1.3.2: truncation (cast-int :n12)"},
		{`xsd:integer(2.5)`, `"2"^^xsd:integer`, "cast-int :n13"},
		{`xsd:integer(true)`, `"1"^^xsd:integer`, "cast-int :b01"},
		{`xsd:integer("INF"^^xsd:double)`, E, "F&O §17.1.3.2: INF has no integer (FOCA0002)"},
		{`xsd:integer(ex:z)`, E, "§17.5: IRIs cast only to xsd:string"},
		{`xsd:decimal("+33.3300")`, `"33.33"^^xsd:decimal`, "cast-decimal :s04"},
		{`xsd:decimal("-10.2E3")`, E, "cast-decimal :s03: no exponent in decimals"},
		{`xsd:decimal(1e0)`, `"1"^^xsd:decimal`, "cast-decimal :n08, in the canonical form"},
		{`xsd:decimal(false)`, `"0"^^xsd:decimal`, "cast-decimal :b02, in the canonical form"},
		{`xsd:double("-10.2E3")`, `"-1.02E4"^^xsd:double`, "cast-double :s03"},
		{`xsd:double("1")`, `"1.0E0"^^xsd:double`, "cast-double :s09"},
		{`xsd:double("string")`, E, "cast-double :s02"},
		{`xsd:double(true)`, `"1.0E0"^^xsd:double`, "cast-double :b01"},
		{`xsd:float("+33.3300")`, `"3.333E1"^^xsd:float`, "cast-float :s04"},
		{`xsd:float(1.25)`, `"1.25E0"^^xsd:float`, "cast-float"},
		{`xsd:boolean("1")`, T, "cast-bool"},
		{`xsd:boolean("0E1")`, E, "cast-bool :s07: not a boolean lexical form"},
		{`xsd:boolean(0.0)`, F, "cast-bool :n04"},
		{`xsd:boolean("NaN"^^xsd:double)`, F, "F&O §17.1.5: NaN is false"},
		{`xsd:boolean(-1)`, T, "cast-bool :n03"},
		{`xsd:dateTime("2002-10-10T17:00:00Z")`, `"2002-10-10T17:00:00Z"^^xsd:dateTime`, "cast-dT :s12"},
		{`xsd:dateTime("2002-10-10")`, E, "§17.5: not a dateTime lexical form"},
		{`xsd:dateTime(1)`, E, "§17.5 table: numerics never cast to xsd:dateTime"},
		{`xsd:dateTime("2002-10-10Z"^^xsd:date)`, `"2002-10-10T00:00:00Z"^^xsd:dateTime`, "F&O §17.1.8: date to dateTime (an extension here)"},
		{`xsd:date("2002-10-10T17:00:00-05:00"^^xsd:dateTime)`, `"2002-10-10-05:00"^^xsd:date`, "F&O §17.1.9: dateTime to date"},
		{`xsd:byte(127)`, `"127"^^xsd:byte`, "XML Schema Part 2 §3.3.19 range of xsd:byte"},
		{`xsd:byte(128)`, E, "XML Schema Part 2 §3.3.19 range of xsd:byte"},
	})
}

func TestCompileErrors(t *testing.T) {
	// Calls the evaluator cannot run at all are a bad query, reported before
	// any SQL runs.
	for _, text := range []string{"<http://x.example/fn>(1)", "xsd:integer(1, 2)"} {
		ast, err := sparql.Parse(testPrologue + "SELECT (" + text + " AS ?r) {}")
		if err != nil {
			t.Fatal(err)
		}
		q, err := algebra.Translate(ast)
		if err != nil {
			t.Fatal(err)
		}
		e := q.Root.(algebra.Project).Input.(algebra.Extend).Expr
		r, _ := newRun(context.Background(), nil, nil, Options{})
		_, err = (&compiler{r: r, l: &layout{}}).expr(e)
		if err == nil || KindOf(err) != BadQuery {
			t.Errorf("%s: got %v, want a bad-query error", text, err)
		}
	}
}
