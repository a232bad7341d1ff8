package algebra_test

import (
	"strings"
	"testing"
	"time"

	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

func try(t *testing.T, name, src string) {
	start := time.Now()
	q, err := sparql.Parse(src)
	pt := time.Since(start)
	if err != nil {
		t.Logf("%s: parse err after %v: %.100s", name, pt, err)
		return
	}
	a, err := algebra.Translate(q)
	tt := time.Since(start)
	if err != nil {
		t.Logf("%s: translate err %v: %.100s", name, tt, err)
		return
	}
	s := a.Root
	_ = algebra.String(s)
	t.Logf("%s: len %d parse %v translate %v print %v", name, len(src), pt, tt, time.Since(start))
}

func TestBig(t *testing.T) {
	n := 300000
	try(t, "plus chain", "SELECT * { FILTER(1"+strings.Repeat("+1", n)+") }")
	try(t, "or chain", "SELECT * { FILTER(?x=1"+strings.Repeat("||?x=1", n/3)+") }")
	try(t, "path seq", "SELECT * { ?s <p>"+strings.Repeat("/<p>", n/4)+" ?o }")
	try(t, "path alt", "SELECT * { ?s <p>"+strings.Repeat("|<p>", n/4)+" ?o }")
	try(t, "union", "SELECT * { {}"+strings.Repeat("UNION{}", n/7)+" }")
	try(t, "optionals", "SELECT * { ?s ?p ?o "+strings.Repeat("OPTIONAL{}", n/10)+" }")
	try(t, "binds", "SELECT * { "+strings.Repeat("BIND(1 AS ?x) {}", 2000)+" }")
	try(t, "triples", "SELECT * { "+strings.Repeat("?s ?p ?o . ", n/10)+" }")
}
