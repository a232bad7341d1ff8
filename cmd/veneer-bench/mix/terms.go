package mix

import (
	"fmt"
	"strconv"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// Solution returns a row's solution, one term per variable of the twin, in sol's
// storage.
func (t Twin) Solution(row []any, sol []rdf.Term) []rdf.Term {
	sol = sol[:0]
	for _, f := range t.Terms {
		sol = append(sol, f(row, t.Kinds))
	}
	return sol
}

// resource builds the IRI of a resource whose template takes the given columns,
// joined by "-" (only part usages take two).
func resource(path string, cols ...int) TermFunc {
	return func(row []any, _ source.Kinds) rdf.Term {
		values := make([]string, len(cols))
		for i, c := range cols {
			switch v := row[c].(type) {
			case nil:
				return nil
			case string:
				values[i] = v
			case int64:
				values[i] = strconv.FormatInt(v, 10)
			default:
				values[i] = fmt.Sprint(v)
			}
		}
		return Resource(path, values...)
	}
}

// natural builds the natural literal of a column's value (R2RML §10.2).
func natural(col int) TermFunc {
	return func(row []any, kinds source.Kinds) rdf.Term {
		if row[col] == nil {
			return nil
		}
		return catalog.NaturalLiteral(row[col], kinds[col])
	}
}

// as builds a literal of the natural datatype of kind from a column computed with
// another SQL type, e.g. an average that SPARQL gives as xsd:decimal.
func as(col int, kind source.TypeKind) TermFunc {
	return func(row []any, _ source.Kinds) rdf.Term {
		if row[col] == nil {
			return nil
		}
		return catalog.NaturalLiteral(row[col], kind)
	}
}

// lang builds a language-tagged literal of a text column.
func lang(col int, tag string) TermFunc {
	return func(row []any, _ source.Kinds) rdf.Term {
		s, ok := row[col].(string)
		if !ok {
			return nil
		}
		return rdf.NewLangString(s, tag)
	}
}

// either builds the first term that its alternatives bind, for the twins of
// UNIONs whose branches fill different columns.
func either(alternatives ...TermFunc) TermFunc {
	return func(row []any, kinds source.Kinds) rdf.Term {
		for _, f := range alternatives {
			if t := f(row, kinds); t != nil {
				return t
			}
		}
		return nil
	}
}
