package direct

import (
	"fmt"
	"strings"

	"veneer/catalog/source"
)

// rowIdentity returns an SQL view of a table without a primary key that adds a
// column telling its rows apart, and that column's name. The Direct Mapping
// gives each row of such a table a blank node of its own, duplicates
// included (W3C RDB2RDF test D005 expects three nodes for three rows of which
// two are equal), so the row node needs more than the row's values:
//
//   - PostgreSQL: the row's physical address, ctid, with the oid of the
//     partition it is in (ctid alone repeats across partitions). It is stable
//     within a statement, which is all the planner needs when it joins the
//     table to itself.
//   - SQLite: the rowid, which every table without a primary key has.
//   - MySQL: the row's rank in the order of all its columns. Equal rows get
//     consecutive ranks in some order, but being equal they cannot be told
//     apart, so every numbering of them describes the same graph. (MySQL
//     compares long TEXT and BLOB values on a prefix only, so rows that differ
//     only beyond it may swap numbers between two readings.)
func rowIdentity(d source.Dialect, t *source.Table) (view, column string, err error) {
	column = freeName(t, "veneer_row")
	from := d.QuoteIdent(t.Schema) + "." + d.QuoteIdent(t.Name)
	switch d {
	case source.Postgres:
		return "SELECT *, ROW(tableoid, ctid)::text AS " + d.QuoteIdent(column) + " FROM " + from, column, nil
	case source.SQLite:
		for _, alias := range []string{"rowid", "_rowid_", "oid"} {
			if !hasColumnFold(t, alias) {
				return "SELECT *, " + alias + " AS " + d.QuoteIdent(column) + " FROM " + from, column, nil
			}
		}
		return "", "", fmt.Errorf("it has no primary key, and columns named rowid, _rowid_ and oid hide its row ids")
	case source.MySQL:
		order := make([]string, len(t.Columns))
		for i, c := range t.Columns {
			order[i] = d.QuoteIdent(c.Name)
		}
		return "SELECT *, ROW_NUMBER() OVER (ORDER BY " + strings.Join(order, ", ") + ") AS " + d.QuoteIdent(column) + " FROM " + from, column, nil
	}
	return "", "", fmt.Errorf("no row identity for dialect %v", d)
}

// freeName returns name, or name with a number appended, such that no column
// of t has it (compared without regard to case, as MySQL and SQLite compare).
func freeName(t *source.Table, name string) string {
	candidate := name
	for i := 2; hasColumnFold(t, candidate); i++ {
		candidate = fmt.Sprintf("%s_%d", name, i)
	}
	return candidate
}

func hasColumnFold(t *source.Table, name string) bool {
	for _, c := range t.Columns {
		if strings.EqualFold(c.Name, name) {
			return true
		}
	}
	return false
}
