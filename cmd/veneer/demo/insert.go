package demo

import (
	"strconv"
	"strings"
)

// maxParams bounds the bind parameters of one INSERT. 999 is the smallest limit among
// the three databases (SQLite's default before version 3.32; PostgreSQL and MySQL
// allow 65535; all three figures from memory of their documentation), so a batch fits
// every server the demo may be loaded into.
const maxParams = 999

// statement is one SQL statement and its bind parameters.
type statement struct {
	query string
	args  []any
}

// inserts returns multi-row INSERT statements that together add every row of data,
// each with at most maxParams bind parameters.
func inserts(data tableData, d dialect) []statement {
	t := data.table
	perBatch := maxParams / len(t.columns)
	var stmts []statement
	for start := 0; start < len(data.rows); start += perBatch {
		rows := data.rows[start:min(start+perBatch, len(data.rows))]
		var q strings.Builder
		q.WriteString("INSERT INTO " + t.name + " " + t.columnList() + " VALUES ")
		args := make([]any, 0, len(rows)*len(t.columns))
		for i, row := range rows {
			if i > 0 {
				q.WriteString(", ")
			}
			q.WriteByte('(')
			for j, v := range row {
				if j > 0 {
					q.WriteString(", ")
				}
				args = append(args, bind(t.columns[j], v))
				q.WriteString(d.placeholder(len(args)))
			}
			q.WriteByte(')')
		}
		stmts = append(stmts, statement{query: q.String(), args: args})
	}
	return stmts
}

// placeholder is the n-th (1-based) bind parameter's placeholder in a statement.
func (d dialect) placeholder(n int) string {
	if d.numbered {
		return "$" + strconv.Itoa(n)
	}
	return "?"
}
