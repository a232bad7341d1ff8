package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"veneer/server"
)

// runExplain prints how veneer would answer a query: its algebra, the SQL
// and the operators that run in-process. The query is the argument, or with
// a leading '@' the file it names ("@-" for standard input).
func runExplain(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	c, rest, err := commandConfig("explain", args, true, stderr)
	if err != nil {
		return err
	}
	if len(rest) != 1 {
		return errors.New("explain: give one query, as text or as @FILE")
	}
	text, err := queryArg(rest[0])
	if err != nil {
		return err
	}
	sc := c.source()
	if sc.DB == "" {
		return errNoDatabase("explain")
	}
	src, err := openSource(ctx, sc)
	if err != nil {
		return err
	}
	defer src.Close()
	cat, err := loadCatalog(ctx, src, sc.Mappings, c.Base)
	if err != nil {
		return err
	}
	e, err := newEngine(ctx, src, cat)
	if err != nil {
		return err
	}
	ex, err := server.FromExec(e).(server.Explainer).Explain(ctx, server.Query{Text: text})
	if err != nil {
		return err
	}
	_, err = io.WriteString(stdout, ex.Text())
	return err
}

// queryArg reads the query argument: the text itself, or @FILE.
func queryArg(arg string) (string, error) {
	name, ok := strings.CutPrefix(arg, "@")
	if !ok {
		return arg, nil
	}
	var b []byte
	var err error
	if name == "-" {
		b, err = io.ReadAll(os.Stdin)
	} else {
		b, err = os.ReadFile(name)
	}
	if err != nil {
		return "", fmt.Errorf("explain: reading the query: %w", err)
	}
	return string(b), nil
}
