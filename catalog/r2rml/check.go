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
	// Columns are the columns of the logical tables that could be read.
	Columns *catalog.Columns
	// Problems are the mapping's mistakes, the problems the database revealed
	// and the warnings, sorted by file and position.
	Problems catalog.ErrorList
}

// Err returns the problems that are errors, as a catalog.ErrorList, or nil.
func (r *Report) Err() error {
	if errs := r.Problems.Errors(); len(errs) > 0 {
		return errs
	}
	return nil
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
	cols, problems := catalog.Check(ctx, src, cat)
	return &Report{Catalog: cat, Columns: cols, Problems: append(mistakes, problems...).Sorted(paths...)}, nil
}

// LoadChecked reads mapping files and checks them against the live schema of
// src: it returns the catalog and the columns the planner needs, or an error,
// which for a mapping with problems is the catalog.ErrorList of all its errors.
// A server calls it to load its mapping, and again to reload it when the files
// change, keeping the catalog it serves when the new one fails.
func LoadChecked(ctx context.Context, src source.Source, paths ...string) (*catalog.Catalog, *catalog.Columns, error) {
	r, err := CheckFiles(ctx, src, paths...)
	if err == nil {
		err = r.Err()
	}
	if err != nil {
		return nil, nil, err
	}
	return r.Catalog, r.Columns, nil
}
