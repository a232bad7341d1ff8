// Package hostile checks that values a client puts into a query cannot reach
// the database as SQL: a corpus of hostile values (testdata/values.txt) is
// placed into SPARQL literals, IRIs that the planner decodes into template
// columns, language tags and VALUES blocks, and each query sent to veneer's
// HTTP endpoint on SQLite, PostgreSQL and MariaDB must either get the answer of
// the reference engine (the npm package oxigraph, via conformance/differential)
// or be refused with a clean 400. Beside the demo tables the test creates a
// sentinel table that no mapping exposes and checks, from the database's own
// statistics and from triggers, that it is never read or changed; and it checks
// that no SQL text veneer sends holds a value of the request.
//
// The package's code reads the corpus (ReadValues) and places a value into
// query text (Literal, IRIPart, RegexQuote, Queries); the test is
// hostile_test.go.
package hostile
