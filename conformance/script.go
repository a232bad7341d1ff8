package conformance

import (
	"fmt"
	"strings"
	"unicode"
	"unicode/utf8"

	"veneer/catalog/source"
)

// The suites' SQL scripts are written in the SQL standard's dialect:
// double-quoted (delimited) identifiers, 'strings', N'national strings', and a
// few vendor spellings (0x… binary literals, DATETIME, BIT, VARBINARY). Loading
// one splits it into statements and translates what the target database would
// not accept:
//
//   - N'…' becomes '…': the scratch databases store text as UTF-8 anyway;
//   - 0xHEX becomes X'HEX' (SQLite reads 0x… as an integer), and on PostgreSQL
//     decode('HEX', 'hex'), since X'…' is a bit string there;
//   - in CREATE TABLE, table constraints (PRIMARY KEY, UNIQUE, FOREIGN KEY,
//     CHECK, CONSTRAINT) move after the column definitions, which SQLite's
//     grammar requires;
//   - on PostgreSQL the types DATETIME, BIT, VARBINARY(n) and NVARCHAR become
//     TIMESTAMP, BOOLEAN, BYTEA and VARCHAR, and the integers 0 and 1 inserted
//     into a former BIT column become FALSE and TRUE (PostgreSQL has no
//     implicit integer-to-boolean cast).
//
// MySQL keeps the double-quoted identifiers: the scratch database's sessions
// run with sql_mode ANSI_QUOTES (see Server).

// tokKind is the kind of a token of an SQL script.
type tokKind int

const (
	tokSpace  tokKind = iota // white space or a comment
	tokWord                  // keyword or regular identifier
	tokIdent                 // "delimited identifier", with its quotes
	tokString                // 'string', with its quotes (an N prefix dropped)
	tokHex                   // 0x… binary literal: text is the hex digits
	tokNumber                // numeric literal
	tokPunct                 // any other character
)

// tok is a token of an SQL script.
type tok struct {
	kind tokKind
	text string
	// pos is the byte offset of the token in the script.
	pos int
}

// is reports whether t is the keyword kw (case-insensitively) or, for
// punctuation, the character kw.
func (t tok) is(kw string) bool {
	switch t.kind {
	case tokWord:
		return strings.EqualFold(t.text, kw)
	case tokPunct:
		return t.text == kw
	}
	return false
}

// scriptError is a mistake in an SQL script, at a line and column.
type scriptError struct {
	name      string
	line, col int
	msg       string
}

func (e *scriptError) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s", e.name, e.line, e.col, e.msg)
}

// errorAt makes a scriptError at byte offset pos of src.
func errorAt(name, src string, pos int, format string, args ...any) error {
	line := 1 + strings.Count(src[:pos], "\n")
	col := 1 + utf8.RuneCountInString(src[strings.LastIndexByte(src[:pos], '\n')+1:pos])
	return &scriptError{name: name, line: line, col: col, msg: fmt.Sprintf(format, args...)}
}

// lexScript splits an SQL script into tokens.
func lexScript(name, src string) ([]tok, error) {
	var toks []tok
	for i := 0; i < len(src); {
		start := i
		c := src[i]
		r, size := utf8.DecodeRuneInString(src[i:])
		switch {
		case unicode.IsSpace(r):
			for i < len(src) {
				r, size := utf8.DecodeRuneInString(src[i:])
				if !unicode.IsSpace(r) {
					break
				}
				i += size
			}
			toks = append(toks, tok{tokSpace, src[start:i], start})
		case strings.HasPrefix(src[i:], "--"):
			end := strings.IndexByte(src[i:], '\n')
			if end < 0 {
				end = len(src) - i
			}
			i += end
			toks = append(toks, tok{tokSpace, src[start:i], start})
		case strings.HasPrefix(src[i:], "/*"):
			end := strings.Index(src[i+2:], "*/")
			if end < 0 {
				return nil, errorAt(name, src, start, "comment not closed")
			}
			i += 2 + end + 2
			toks = append(toks, tok{tokSpace, src[start:i], start})
		case c == '\'' || (c == 'N' || c == 'n') && strings.HasPrefix(src[i+1:], "'"):
			if c != '\'' {
				i++
			}
			end, ok := closeQuote(src, i)
			if !ok {
				return nil, errorAt(name, src, start, "string not closed")
			}
			toks = append(toks, tok{tokString, src[i:end], start})
			i = end
		case c == '"':
			end, ok := closeQuote(src, i)
			if !ok {
				return nil, errorAt(name, src, start, "delimited identifier not closed")
			}
			toks = append(toks, tok{tokIdent, src[i:end], start})
			i = end
		case c == '0' && i+1 < len(src) && (src[i+1] == 'x' || src[i+1] == 'X'):
			i += 2
			for i < len(src) && isHexDigit(src[i]) {
				i++
			}
			if i == start+2 || (i-start)%2 != 0 {
				return nil, errorAt(name, src, start, "binary literal %s needs an even, non-zero number of hex digits", src[start:i])
			}
			toks = append(toks, tok{tokHex, src[start+2 : i], start})
		case c >= '0' && c <= '9' || c == '.' && i+1 < len(src) && src[i+1] >= '0' && src[i+1] <= '9':
			for i < len(src) && (src[i] >= '0' && src[i] <= '9' || src[i] == '.') {
				i++
			}
			if i < len(src) && (src[i] == 'e' || src[i] == 'E') {
				i++
				if i < len(src) && (src[i] == '+' || src[i] == '-') {
					i++
				}
				for i < len(src) && src[i] >= '0' && src[i] <= '9' {
					i++
				}
			}
			toks = append(toks, tok{tokNumber, src[start:i], start})
		case r == '_' || unicode.IsLetter(r):
			for i < len(src) {
				r, size := utf8.DecodeRuneInString(src[i:])
				if r != '_' && r != '$' && !unicode.IsLetter(r) && !unicode.IsDigit(r) {
					break
				}
				i += size
			}
			toks = append(toks, tok{tokWord, src[start:i], start})
		case r == utf8.RuneError && size == 1:
			return nil, errorAt(name, src, start, "invalid UTF-8")
		default:
			i += size
			toks = append(toks, tok{tokPunct, src[start:i], start})
		}
	}
	return toks, nil
}

// closeQuote returns the offset just past the quote that closes the quoted
// text starting at src[i], where a doubled quote stands for one.
func closeQuote(src string, i int) (int, bool) {
	q := src[i]
	for j := i + 1; j < len(src); j++ {
		if src[j] != q {
			continue
		}
		if j+1 < len(src) && src[j+1] == q {
			j++
			continue
		}
		return j + 1, true
	}
	return 0, false
}

func isHexDigit(c byte) bool {
	return c >= '0' && c <= '9' || c >= 'a' && c <= 'f' || c >= 'A' && c <= 'F'
}

// scriptStmt is one statement of a script, as its tokens.
type scriptStmt struct {
	toks []tok
}

// next returns the index of the first token at or after i that is not space,
// or len(toks).
func (s scriptStmt) next(i int) int {
	for i < len(s.toks) && s.toks[i].kind == tokSpace {
		i++
	}
	return i
}

// translator translates the statements of one script for one dialect; it
// remembers the columns declared BIT, for the INSERTs that follow.
type translator struct {
	dialect source.Dialect
	// columns are the column names of each table created so far, by the raw
	// text of the table's and columns' names.
	columns map[string][]string
	// bits are the columns declared BIT, by table and column name.
	bits map[string]map[string]bool
}

// TranslateScript splits an SQL script into statements and translates them
// for the dialect (see the comment at the top of script.go). name is used in
// errors, which give the line and column.
func TranslateScript(name string, script []byte, d source.Dialect) ([]string, error) {
	src := strings.TrimPrefix(string(script), "\uFEFF")
	toks, err := lexScript(name, src)
	if err != nil {
		return nil, err
	}
	var stmts []scriptStmt
	var cur []tok
	for _, t := range toks {
		if !t.is(";") {
			cur = append(cur, t)
			continue
		}
		if st := (scriptStmt{toks: cur}); st.next(0) < len(cur) {
			stmts = append(stmts, st)
		}
		cur = nil
	}
	if st := (scriptStmt{toks: cur}); st.next(0) < len(cur) {
		stmts = append(stmts, st)
	}
	if d == source.SQLite {
		if stmts, err = foldAddConstraints(name, src, stmts); err != nil {
			return nil, err
		}
	}
	tr := &translator{dialect: d, columns: map[string][]string{}, bits: map[string]map[string]bool{}}
	out := make([]string, 0, len(stmts))
	for _, st := range stmts {
		text, err := tr.translate(st)
		if err != nil {
			return nil, errorAt(name, src, st.toks[st.next(0)].pos, "%v", err)
		}
		out = append(out, text)
	}
	return out, nil
}

// foldAddConstraints moves each ALTER TABLE t ADD <table constraint> into the
// CREATE TABLE t before it, as a table element: SQLite's ALTER TABLE cannot
// add constraints. SQLite enforces no foreign keys unless asked to, so a
// foreign key may then name a table created later.
// name and src are the script's, for errors.
func foldAddConstraints(name, src string, stmts []scriptStmt) ([]scriptStmt, error) {
	created := map[string]int{}
	var out []scriptStmt
	for _, st := range stmts {
		i := st.next(0)
		j := st.next(i + 1)
		if j >= len(st.toks) || !st.toks[i].is("CREATE") && !st.toks[i].is("ALTER") || !st.toks[j].is("TABLE") {
			out = append(out, st)
			continue
		}
		nameAt := st.next(j + 1)
		if nameAt >= len(st.toks) {
			out = append(out, st)
			continue
		}
		table := st.toks[nameAt].text
		if st.toks[i].is("CREATE") {
			created[table] = len(out)
			out = append(out, st)
			continue
		}
		add := st.next(nameAt + 1)
		if add >= len(st.toks) || !st.toks[add].is("ADD") || !tableConstraint(st.toks[add+1:]) {
			out = append(out, st)
			continue
		}
		k, ok := created[table]
		if !ok {
			return nil, errorAt(name, src, st.toks[i].pos, "ALTER TABLE %s ADD: no CREATE TABLE %s before it", table, table)
		}
		target := out[k]
		// CREATE TABLE name ( … ): the list opens after the name.
		open := target.next(target.next(target.next(target.next(0)+1)+1) + 1)
		_, end, err := parenList(target.toks, open)
		if err != nil {
			return nil, errorAt(name, src, target.toks[target.next(0)].pos, "CREATE TABLE %s: %v", table, err)
		}
		toks := append([]tok{}, target.toks[:end-1]...)
		toks = append(toks, tok{kind: tokPunct, text: ","})
		toks = append(toks, st.toks[add+1:]...)
		out[k] = scriptStmt{toks: append(toks, target.toks[end-1:]...)}
	}
	return out, nil
}

// translate renders one statement for the dialect.
func (tr *translator) translate(st scriptStmt) (string, error) {
	i := st.next(0)
	j := st.next(i + 1)
	switch {
	case j < len(st.toks) && st.toks[i].is("CREATE") && st.toks[j].is("TABLE"):
		if err := tr.createTable(&st, st.next(j+1)); err != nil {
			return "", err
		}
	case j < len(st.toks) && st.toks[i].is("INSERT") && st.toks[j].is("INTO"):
		if err := tr.insert(&st, st.next(j+1)); err != nil {
			return "", err
		}
	}
	var b strings.Builder
	for _, t := range st.toks {
		b.WriteString(tr.render(t))
	}
	return strings.TrimSpace(b.String()), nil
}

// render writes one token in the dialect.
func (tr *translator) render(t tok) string {
	if t.kind == tokHex {
		if tr.dialect == source.Postgres {
			return "decode('" + t.text + "', 'hex')"
		}
		return "X'" + t.text + "'"
	}
	return t.text
}

// parenList splits the parenthesised list that starts at toks[open] (a "(")
// into its comma-separated elements, and returns them and the index just past
// the closing parenthesis.
func parenList(toks []tok, open int) ([][]tok, int, error) {
	if open >= len(toks) || !toks[open].is("(") {
		return nil, 0, fmt.Errorf("expected (")
	}
	var elems [][]tok
	depth, start := 0, open+1
	for i := open; i < len(toks); i++ {
		switch {
		case toks[i].is("("):
			depth++
		case toks[i].is(")"):
			depth--
			if depth == 0 {
				return append(elems, toks[start:i]), i + 1, nil
			}
		case toks[i].is(",") && depth == 1:
			elems = append(elems, toks[start:i])
			start = i + 1
		}
	}
	return nil, 0, fmt.Errorf("a parenthesis is not closed")
}

// nonSpace returns the tokens of toks that are not space.
func nonSpace(toks []tok) []tok {
	var out []tok
	for _, t := range toks {
		if t.kind != tokSpace {
			out = append(out, t)
		}
	}
	return out
}

// tableConstraint says whether a CREATE TABLE element is a table constraint.
func tableConstraint(elem []tok) bool {
	ns := nonSpace(elem)
	if len(ns) == 0 {
		return false
	}
	for _, kw := range []string{"PRIMARY", "UNIQUE", "FOREIGN", "CHECK", "CONSTRAINT"} {
		if ns[0].is(kw) {
			return true
		}
	}
	return false
}

// pgTypes are the PostgreSQL spellings of the vendor types the scripts use.
var pgTypes = map[string]string{
	"DATETIME":  "TIMESTAMP",
	"BIT":       "BOOLEAN",
	"VARBINARY": "BYTEA",
	"NVARCHAR":  "VARCHAR",
}

// createTable reorders the table elements of CREATE TABLE name (…), whose name
// is at st.toks[at], records its columns, and translates column types.
func (tr *translator) createTable(st *scriptStmt, at int) error {
	if at >= len(st.toks) || st.toks[at].kind != tokIdent && st.toks[at].kind != tokWord {
		return fmt.Errorf("CREATE TABLE without a table name")
	}
	table := st.toks[at].text
	open := st.next(at + 1)
	elems, end, err := parenList(st.toks, open)
	if err != nil {
		return fmt.Errorf("CREATE TABLE %s: %w", table, err)
	}
	var cols, constraints [][]tok
	tr.bits[table] = map[string]bool{}
	tr.columns[table] = nil
	for _, e := range elems {
		if tableConstraint(e) {
			constraints = append(constraints, e)
			continue
		}
		ns := nonSpace(e)
		if len(ns) < 2 || ns[1].kind != tokWord {
			return fmt.Errorf("CREATE TABLE %s: column definition without a name and type", table)
		}
		name, typ := ns[0].text, strings.ToUpper(ns[1].text)
		tr.columns[table] = append(tr.columns[table], name)
		if typ == "BIT" {
			tr.bits[table][name] = true
		}
		if tr.dialect == source.Postgres {
			e = pgColumnType(e, typ)
		}
		cols = append(cols, e)
	}
	var body []tok
	for i, e := range append(cols, constraints...) {
		if i > 0 {
			body = append(body, tok{kind: tokPunct, text: ","})
		}
		body = append(body, e...)
	}
	rebuilt := append(append([]tok{}, st.toks[:open+1]...), body...)
	rebuilt = append(rebuilt, tok{kind: tokPunct, text: ")"})
	st.toks = append(rebuilt, st.toks[end:]...)
	return nil
}

// pgColumnType rewrites the type of a column definition, whose type word is
// typ (upper case), for PostgreSQL.
func pgColumnType(elem []tok, typ string) []tok {
	pg, ok := pgTypes[typ]
	if !ok {
		return elem
	}
	out := append([]tok{}, elem...)
	seen := 0
	for i, t := range out {
		if t.kind == tokSpace {
			continue
		}
		if seen++; seen < 2 {
			continue
		}
		out[i].text = pg
		if typ == "VARBINARY" { // BYTEA takes no length
			k := scriptStmt{toks: out}.next(i + 1)
			if k < len(out) && out[k].is("(") {
				if _, end, err := parenList(out, k); err == nil {
					out = append(out[:i+1], out[end:]...)
				}
			}
		}
		break
	}
	return out
}

// insert translates the values of INSERT INTO name [(cols)] VALUES (…), …,
// whose name is at st.toks[at]: on PostgreSQL, 0 and 1 bound for a BIT column
// become FALSE and TRUE.
func (tr *translator) insert(st *scriptStmt, at int) error {
	if tr.dialect != source.Postgres || at >= len(st.toks) {
		return nil
	}
	table := st.toks[at].text
	if len(tr.bits[table]) == 0 {
		return nil
	}
	cols := tr.columns[table]
	i := st.next(at + 1)
	if i < len(st.toks) && st.toks[i].is("(") {
		elems, end, err := parenList(st.toks, i)
		if err != nil {
			return fmt.Errorf("INSERT INTO %s: %w", table, err)
		}
		cols = nil
		for _, e := range elems {
			ns := nonSpace(e)
			if len(ns) != 1 {
				return fmt.Errorf("INSERT INTO %s: a column list entry is not one name", table)
			}
			cols = append(cols, ns[0].text)
		}
		i = st.next(end)
	}
	if i >= len(st.toks) || !st.toks[i].is("VALUES") {
		return nil // INSERT … SELECT: nothing to translate
	}
	for i = st.next(i + 1); i < len(st.toks) && st.toks[i].is("("); {
		elems, end, err := parenList(st.toks, i)
		if err != nil {
			return fmt.Errorf("INSERT INTO %s: %w", table, err)
		}
		for k, e := range elems {
			if k >= len(cols) || !tr.bits[table][cols[k]] {
				continue
			}
			for n := range e {
				switch t := &e[n]; {
				case t.kind == tokNumber && t.text == "0":
					t.kind, t.text = tokWord, "FALSE"
				case t.kind == tokNumber && t.text == "1":
					t.kind, t.text = tokWord, "TRUE"
				}
			}
		}
		i = st.next(end)
		if i < len(st.toks) && st.toks[i].is(",") {
			i = st.next(i + 1)
		}
	}
	return nil
}
