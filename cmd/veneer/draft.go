package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"strings"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// runDraft writes an R2RML mapping of the database's schema to standard
// output, as a starting point to edit: the Direct Mapping that serve uses
// without a mapping, written as R2RML.
func runDraft(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	c, rest, err := commandConfig("draft", args, true, stderr)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return fmt.Errorf("draft: unexpected argument %q", rest[0])
	}
	sc := c.source()
	switch {
	case sc.DB == "":
		return errNoDatabase("draft")
	case len(sc.Mappings) > 0:
		return errors.New("draft: --mapping does not apply: draft writes a new mapping from the schema")
	}
	src, err := openSource(ctx, sc)
	if err != nil {
		return err
	}
	defer src.Close()
	base := c.Base
	if base == "" {
		base = defaultBase
	}
	cat, err := loadCatalog(ctx, src, nil, base)
	if err != nil {
		return err
	}
	return writeDraft(stdout, cat, base, src.Dialect())
}

// draftHeader opens a drafted mapping; %s is the database's dialect.
const draftHeader = `# R2RML mapping drafted by "veneer draft" from the schema of a %s database:
# the Direct Mapping of its tables, one triples map per table and a join for
# each foreign key. A row is the IRI of its primary key's values (a blank node
# where the table has none; such a table is read through a query, in this
# database's dialect, that numbers its rows) and each column a literal of the
# column's natural datatype. Edit it to taste; "veneer check" reports what the
# database makes of the result.

`

// writeDraft writes cat, the Direct Mapping made with base, as an R2RML
// document. Each triples map is named map:TABLE (map: is base followed by
// '#', which no IRI of the Direct Mapping starts with), the classes are written
// with the prefix base: and each table's predicates with a prefix named after
// the table where Turtle allows that name.
func writeDraft(w io.Writer, cat *catalog.Catalog, base string, d source.Dialect) error {
	prefixes := []rdf.Prefix{{Name: "map", IRI: rdf.IRI(base + "#")}, {Name: "base", IRI: rdf.IRI(base)}}
	taken := map[string]bool{"rr": true, "xsd": true, "rdf": true, "rdfs": true, "map": true, "base": true}
	for _, tm := range cat.Maps {
		table := tm.Name // the Direct Mapping names a map by its table's IRI
		local := strings.TrimPrefix(table, base)
		tm.Name = base + "#" + local
		if rdf.IsPrefixName(local) && !taken[local] {
			taken[local] = true
			prefixes = append(prefixes, rdf.Prefix{Name: local, IRI: rdf.IRI(table + "#")})
		}
	}
	if _, err := fmt.Fprintf(w, draftHeader, d); err != nil {
		return err
	}
	return r2rml.Write(w, cat, prefixes...)
}
