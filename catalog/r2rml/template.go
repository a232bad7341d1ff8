package r2rml

import (
	"fmt"
	"regexp"
	"strings"

	"veneer/catalog"
)

// ParseTemplate parses an rr:template string into literal text and column
// references (R2RML §7.4): a column name stands between '{' and '}'; in text and
// in column names alike, "\{", "\}" and "\\" stand for '{', '}' and '\'. Adjacent
// text is merged into one part, so a template has no empty or consecutive text
// parts. The error says at which character (counted from 1) the template is wrong.
func ParseTemplate(s string) (catalog.Template, error) {
	var t catalog.Template
	var cur strings.Builder
	inColumn, open := false, 0
	flush := func() {
		if cur.Len() > 0 {
			t.Parts = append(t.Parts, catalog.TemplatePart{Text: cur.String()})
			cur.Reset()
		}
	}
	runes := []rune(s)
	for i := 0; i < len(runes); i++ {
		switch r := runes[i]; r {
		case '\\':
			if i+1 == len(runes) || !strings.ContainsRune(`{}\`, runes[i+1]) {
				return catalog.Template{}, fmt.Errorf(`template %q, character %d: a backslash must be followed by '{', '}' or '\' (write \\ for a backslash)`, s, i+1)
			}
			i++
			cur.WriteRune(runes[i])
		case '{':
			if inColumn {
				return catalog.Template{}, fmt.Errorf(`template %q, character %d: '{' inside the column reference opened at character %d (write \{ for a literal brace)`, s, i+1, open+1)
			}
			flush()
			inColumn, open = true, i
		case '}':
			if !inColumn {
				return catalog.Template{}, fmt.Errorf(`template %q, character %d: '}' without a matching '{' (write \} for a literal brace)`, s, i+1)
			}
			if cur.Len() == 0 {
				return catalog.Template{}, fmt.Errorf("template %q, character %d: empty column reference {}", s, open+1)
			}
			t.Parts = append(t.Parts, catalog.TemplatePart{Column: cur.String()})
			cur.Reset()
			inColumn = false
		default:
			cur.WriteRune(r)
		}
	}
	if inColumn {
		return catalog.Template{}, fmt.Errorf(`template %q, character %d: '{' is never closed (write \{ for a literal brace)`, s, open+1)
	}
	flush()
	return t, nil
}

// languageTag matches a well-formed BCP 47 language tag (RFC 5646 §2.1, the
// langtag, privateuse and irregular grandfathered productions, from memory),
// except that a primary language subtag must have 2 or 3 letters: the 5-8
// letter form is well-formed, but the IANA registry has no such subtag, and
// R2RML §7.7 asks for a valid tag (W3C R2RML test R2RMLTC0015b uses "english").
var languageTag = regexp.MustCompile(`(?i)^(?:` +
	`[a-z]{2,3}(?:-[a-z]{3}){0,3}` + // language, extlang
	`(?:-[a-z]{4})?` + // script
	`(?:-(?:[a-z]{2}|[0-9]{3}))?` + // region
	`(?:-(?:[a-z0-9]{5,8}|[0-9][a-z0-9]{3}))*` + // variants
	`(?:-[0-9a-wyz](?:-[a-z0-9]{2,8})+)*` + // extensions
	`(?:-x(?:-[a-z0-9]{1,8})+)?` + // private use
	`|x(?:-[a-z0-9]{1,8})+` +
	`|en-gb-oed|i-(?:ami|bnn|default|enochian|hak|klingon|lux|mingo|navajo|pwn|tao|tay|tsu)|sgn-(?:be-fr|be-nl|ch-de)` +
	`)$`)
