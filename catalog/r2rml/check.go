package r2rml

import (
	"context"

	"veneer/catalog"
	"veneer/catalog/source"
)

// Report is what checking mapping files against a database found.
type Report struct {
	// Catalog holds the triples maps that could be read; it is the mapping to
	// serve only when Problems has no errors.
	Catalog *catalog.Catalog
	// Problems are the mapping's mistakes, the problems the database revealed
	// and the warnings, sorted by file and position.
	Problems catalog.ErrorList
}

// CheckFiles reads mapping files and checks them against the live schema of
// src, reporting every problem rather than the first: the mistakes LoadFiles
// rejects, and those that catalog.Check finds in what could be read. err is a
// file that cannot be read or a Turtle syntax error, after which nothing could
// be checked.
func CheckFiles(ctx context.Context, src source.Source, paths ...string) (*Report, error) {
	cat, mistakes, err := LoadPartial(paths...)
	if err != nil {
		return nil, err
	}
	_, problems := catalog.Check(ctx, src, cat)
	return &Report{Catalog: cat, Problems: append(mistakes, problems...).Sorted(paths...)}, nil
}
