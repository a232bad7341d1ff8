package algebra_test

import (
	"os"
	"testing"

	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// BenchmarkParseTranslate measures the front end of a query, text to algebra,
// for the queries under testdata/bench: a dashboard panel's query with ten
// triple patterns, and a sixty-line report query using most of the language.
func BenchmarkParseTranslate(b *testing.B) {
	for _, name := range []string{"dashboard", "long"} {
		src, err := os.ReadFile("testdata/bench/" + name + ".rq")
		if err != nil {
			b.Fatal(err)
		}
		text := string(src)
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(int64(len(text)))
			for b.Loop() {
				q, err := sparql.Parse(text)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := algebra.Translate(q); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
