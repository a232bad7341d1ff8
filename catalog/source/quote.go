package source

import "strings"

// QuoteIdent delimits name as an identifier of the dialect, doubling any quote
// character inside, so that any name is safe in SQL text.
func (d Dialect) QuoteIdent(name string) string {
	if d == MySQL {
		return "`" + strings.ReplaceAll(name, "`", "``") + "`"
	}
	return `"` + strings.ReplaceAll(name, `"`, `""`) + `"`
}
