package catalog

import (
	"fmt"
	"strings"
)

// Ident is an SQL identifier as a mapping writes it (R2RML §5: SQL identifiers).
// A Quoted (delimited) identifier is case-sensitive; a regular one is folded by
// the database as usual.
type Ident struct {
	Name   string
	Quoted bool
}

// ParseName splits a possibly qualified SQL name such as `turbine`,
// `maint.turbine` or `"Maint"."Work Order"` into its identifiers. Regular
// identifiers must be letters, digits, '_' or '$', not starting with a digit.
func ParseName(s string) ([]Ident, error) {
	var out []Ident
	rest := s
	for {
		var id Ident
		if strings.HasPrefix(rest, `"`) {
			var b strings.Builder
			i := 1
			for {
				if i >= len(rest) {
					return nil, fmt.Errorf("SQL name %q: unterminated delimited identifier", s)
				}
				if rest[i] == '"' {
					if i+1 < len(rest) && rest[i+1] == '"' {
						b.WriteByte('"')
						i += 2
						continue
					}
					break
				}
				b.WriteByte(rest[i])
				i++
			}
			id = Ident{Name: b.String(), Quoted: true}
			rest = rest[i+1:]
		} else {
			j := strings.IndexByte(rest, '.')
			if j < 0 {
				j = len(rest)
			}
			id = Ident{Name: rest[:j]}
			rest = rest[j:]
			if !regularIdent(id.Name) {
				return nil, fmt.Errorf("SQL name %q: %q is not a regular identifier (delimit it with double quotes)", s, id.Name)
			}
		}
		if id.Name == "" {
			return nil, fmt.Errorf("SQL name %q: empty identifier", s)
		}
		out = append(out, id)
		if rest == "" {
			return out, nil
		}
		if rest[0] != '.' {
			return nil, fmt.Errorf("SQL name %q: expected '.' after identifier %q", s, id.Name)
		}
		rest = rest[1:]
	}
}

func regularIdent(s string) bool {
	if s == "" {
		return false
	}
	for i, r := range s {
		letter := r == '_' || r == '$' || 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z' || r > 0x7f
		if !letter && (i == 0 || r < '0' || r > '9') {
			return false
		}
	}
	return true
}

// Matches reports whether a name the database reports is this identifier: exactly
// for a delimited one; for a regular one, the name folded to upper case (as the SQL
// standard folds) or to lower case (as PostgreSQL folds). So a regular "Name" does
// not match a column created as "Name" (RDB2RDF test R2RMLTC0002f), while a regular
// "turbine_id" matches turbine_id.
func (id Ident) Matches(name string) bool {
	if id.Quoted {
		return id.Name == name
	}
	return name == strings.ToUpper(id.Name) || name == strings.ToLower(id.Name)
}
