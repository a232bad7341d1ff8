package demo

import (
	"embed"
	"io/fs"
	"path"
	"strings"
)

//go:embed queries/*.rq
var queryFiles embed.FS

// Query is one of the example SPARQL queries.
type Query struct {
	// Name is the file name without ".rq", e.g. "01-turbines-at-site".
	Name string
	// Summary is the text of the query's first line, a "#" comment saying what it asks.
	Summary string
	// Text is the whole query, comment included.
	Text string
}

// QueryFS returns the example queries as a file system of .rq files.
func QueryFS() fs.FS {
	sub, err := fs.Sub(queryFiles, "queries")
	if err != nil {
		// fs.Sub fails only on an invalid path name, and "queries" is valid.
		panic("demo: " + err.Error())
	}
	return sub
}

// Queries returns the example queries in file name order, which is the order a
// dashboard would show them in: the first three keep to basic graph patterns, FILTER
// comparisons and LIMIT; the later ones use more of SPARQL.
func Queries() []Query {
	entries, err := fs.ReadDir(queryFiles, "queries")
	if err != nil {
		// The directory is embedded at build time; reading it cannot fail.
		panic("demo: " + err.Error())
	}
	queries := make([]Query, 0, len(entries))
	for _, e := range entries {
		text, err := queryFiles.ReadFile(path.Join("queries", e.Name()))
		if err != nil {
			panic("demo: " + err.Error())
		}
		first, _, _ := strings.Cut(string(text), "\n")
		queries = append(queries, Query{
			Name:    strings.TrimSuffix(e.Name(), ".rq"),
			Summary: strings.TrimSpace(strings.TrimPrefix(first, "#")),
			Text:    string(text),
		})
	}
	return queries
}
