package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"strings"

	"veneer/catalog/r2rml"
)

// runCheck validates R2RML mappings against the live schema and prints every
// problem, one a line with its file:line:column, then a summary. It fails
// when there is an error; warnings alone do not fail it.
func runCheck(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	c, rest, err := commandConfig("check", args, true, stderr)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return fmt.Errorf("check: unexpected argument %q", rest[0])
	}
	sc := c.source()
	switch {
	case sc.DB == "":
		return errNoDatabase("check")
	case len(sc.Mappings) == 0:
		return errors.New("check: give the mapping files to check with --mapping (or VENEER_MAPPINGS, or sources[0].mappings)")
	}
	src, err := openSource(ctx, sc)
	if err != nil {
		return err
	}
	defer src.Close()
	rep, err := r2rml.CheckFiles(ctx, src, sc.Mappings...)
	if err != nil {
		// A syntax error shows its source line; print it whole.
		fmt.Fprintln(stdout, err)
		return fmt.Errorf("check: %s cannot be read", strings.Join(sc.Mappings, ", "))
	}
	for _, p := range rep.Problems {
		fmt.Fprintln(stdout, p)
	}
	errs, warnings := len(rep.Problems.Errors()), len(rep.Problems.Warnings())
	fmt.Fprintf(stdout, "%s: %s checked against the %s database: %s, %s\n", strings.Join(sc.Mappings, ", "),
		count(len(rep.Catalog.Maps), "triples map"), src.Dialect(), count(errs, "error"), count(warnings, "warning"))
	if errs > 0 {
		return fmt.Errorf("check: the mapping has %s", count(errs, "error"))
	}
	return nil
}

// count writes n things, in the plural unless n is 1.
func count(n int, thing string) string {
	if n == 1 {
		return "1 " + thing
	}
	return fmt.Sprintf("%d %ss", n, thing)
}
