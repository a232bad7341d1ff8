package sql

import (
	"fmt"
	"strconv"
)

// AppendKey appends a key of e to dst: two expressions have equal keys
// exactly when they are the same expression, a parameter's value compared
// with its Go type. Sub-queries (Exists, Subquery) and a Late condition's
// renamings are compared by identity, not by content, which may only make
// two equal expressions look different.
func AppendKey(dst []byte, e Expr) []byte {
	switch e := e.(type) {
	case nil:
		return append(dst, '0')
	case ColumnRef:
		dst = appendKeyString(append(dst, 'c'), e.Table)
		return appendKeyBool(appendKeyString(dst, e.Column.Name), e.Column.Quoted)
	case Param:
		return appendKeyValue(append(dst, 'p'), e.Value)
	case Int:
		return append(strconv.AppendInt(append(dst, 'i'), int64(e), 10), ';')
	case Null:
		return append(dst, 'N')
	case Binary:
		dst = appendKeyBool(appendKeyString(append(dst, 'b'), e.Op), e.Exact)
		return AppendKey(AppendKey(dst, e.L), e.R)
	case Not:
		return AppendKey(append(dst, '!'), e.X)
	case IsNull:
		return AppendKey(appendKeyBool(append(dst, 'n'), e.Not), e.X)
	case Func:
		return appendKeyList(appendKeyString(append(dst, 'f'), e.Name), e.Args)
	case Exists:
		return appendKeyBool(appendKeyString(append(dst, 'e'), fmt.Sprintf("%p", e.Stmt)), e.Not)
	case Subquery:
		return appendKeyString(append(dst, 's'), fmt.Sprintf("%p", e.Stmt))
	case Cast:
		return AppendKey(appendKeyString(append(dst, 'C'), e.Type), e.X)
	case Collate:
		return AppendKey(append(dst, 'o'), e.X)
	case Late:
		// The renamings by the array that holds them: a copy of the
		// condition shares it; the same renamings made twice do not.
		dst = strconv.AppendInt(append(dst, 'l'), int64(e.ID), 10)
		return appendKeyString(dst, fmt.Sprintf("%p", e.renames))
	case Agg:
		dst = appendKeyBool(appendKeyString(append(dst, 'a'), e.Name), e.Distinct)
		return AppendKey(dst, e.Arg)
	case In:
		return appendKeyList(AppendKey(appendKeyBool(append(dst, 'I'), e.Exact), e.X), e.List)
	case Case:
		return AppendKey(AppendKey(append(dst, 'w'), e.When), e.Then)
	case StrTest:
		dst = appendKeyString(append(dst, 't'), e.Op)
		return AppendKey(AppendKey(AppendKey(dst, e.X), e.Arg), e.Len)
	case DatePart:
		dst = appendKeyBool(appendKeyString(append(dst, 'd'), e.Field), e.Timestamp)
		return AppendKey(dst, e.X)
	case GroupConcat:
		return AppendKey(AppendKey(appendKeyBool(append(dst, 'g'), e.Distinct), e.X), e.Sep)
	}
	// A kind of expression this function does not know yet: its Go syntax,
	// with its type.
	return appendKeyString(append(dst, '?'), fmt.Sprintf("%T%#v", e, e))
}

// Same reports whether a and b are the same expression (see AppendKey).
func Same(a, b Expr) bool {
	if a, ok := a.(ColumnRef); ok {
		b, ok := b.(ColumnRef)
		return ok && a == b
	}
	return string(AppendKey(nil, a)) == string(AppendKey(nil, b))
}

func appendKeyList(dst []byte, es []Expr) []byte {
	dst = strconv.AppendInt(dst, int64(len(es)), 10)
	for _, e := range es {
		dst = AppendKey(dst, e)
	}
	return dst
}

// appendKeyValue appends a parameter's value with its type.
func appendKeyValue(dst []byte, v any) []byte {
	switch v := v.(type) {
	case string:
		return appendKeyString(append(dst, 's'), v)
	case int64:
		return append(strconv.AppendInt(append(dst, 'i'), v, 10), ';')
	case float64:
		return append(strconv.AppendFloat(append(dst, 'f'), v, 'g', -1, 64), ';')
	case bool:
		return appendKeyBool(append(dst, 'b'), v)
	}
	return appendKeyString(append(dst, '?'), fmt.Sprintf("%T%#v", v, v))
}

// appendKeyString appends s with its length in front, so that no two
// sequences of strings make the same key.
func appendKeyString(dst []byte, s string) []byte {
	return append(append(strconv.AppendInt(dst, int64(len(s)), 10), ':'), s...)
}

func appendKeyBool(dst []byte, b bool) []byte {
	if b {
		return append(dst, 't')
	}
	return append(dst, 'f')
}
