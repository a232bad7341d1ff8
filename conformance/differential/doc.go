// Package differential checks veneer against a reference SPARQL engine: the same
// generated queries, over the same data, must get the same answers.
//
// The data is the demo database (cmd/veneer/demo). Its graph reaches the
// reference engine, the npm package oxigraph run by reference/answer.js, by a
// path that does not touch veneer's planner or executor: Materialise reads each
// triples map's logical table row by row and builds the triples by R2RML's
// rules, with its own value rules (natural datatypes, canonical lexical forms,
// IRI-safe encoding). Generate makes seeded queries from the graph's own
// vocabulary and values; Compare decides whether two answers agree, by the
// rules written beside it. The test (differential_test.go) puts the three
// together against veneer's HTTP endpoint on SQLite, PostgreSQL and MariaDB.
package differential
