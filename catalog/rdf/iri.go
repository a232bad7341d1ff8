package rdf

import (
	"errors"
	"fmt"
	"strings"
)

// iriParts is an IRI reference split into its five components (RFC 3986 §3);
// the has* flags tell an empty component from a missing one.
type iriParts struct {
	scheme, authority, path, query, fragment       string
	hasScheme, hasAuthority, hasQuery, hasFragment bool
}

// splitIRI splits an IRI reference the way RFC 3986 Appendix B does:
//
//	^(([^:/?#]+):)?(//([^/?#]*))?([^?#]*)(\?([^#]*))?(#(.*))?
//
// except that the part before the first ':' is a scheme only when it has a
// scheme's characters (see IsAbsoluteIRI); otherwise the reference is relative.
func splitIRI(s string) iriParts {
	var p iriParts
	if i := strings.IndexAny(s, ":/?#"); i > 0 && s[i] == ':' && IsAbsoluteIRI(s) {
		p.scheme, p.hasScheme, s = s[:i], true, s[i+1:]
	}
	if strings.HasPrefix(s, "//") {
		s = s[2:]
		i := strings.IndexAny(s, "/?#")
		if i < 0 {
			i = len(s)
		}
		p.authority, p.hasAuthority, s = s[:i], true, s[i:]
	}
	if i := strings.IndexByte(s, '#'); i >= 0 {
		p.fragment, p.hasFragment, s = s[i+1:], true, s[:i]
	}
	if i := strings.IndexByte(s, '?'); i >= 0 {
		p.query, p.hasQuery, s = s[i+1:], true, s[:i]
	}
	p.path = s
	return p
}

// String recomposes the components (RFC 3986 §5.3).
func (p iriParts) String() string {
	var b strings.Builder
	if p.hasScheme {
		b.WriteString(p.scheme)
		b.WriteByte(':')
	}
	if p.hasAuthority {
		b.WriteString("//")
		b.WriteString(p.authority)
	}
	b.WriteString(p.path)
	if p.hasQuery {
		b.WriteByte('?')
		b.WriteString(p.query)
	}
	if p.hasFragment {
		b.WriteByte('#')
		b.WriteString(p.fragment)
	}
	return b.String()
}

// IsAbsoluteIRI reports whether s starts with a scheme (RFC 3986 §3.1):
//
//	scheme = ALPHA *( ALPHA / DIGIT / "+" / "-" / "." ) ":"
func IsAbsoluteIRI(s string) bool {
	for i := 0; i < len(s); i++ {
		c := rune(s[i])
		switch {
		case isAlpha(c):
		case i > 0 && (isDigit(c) || c == '+' || c == '-' || c == '.'):
		case i > 0 && c == ':':
			return true
		default:
			return false
		}
	}
	return false
}

// ErrNoBase is the error of ResolveIRI for a relative reference with no base IRI.
var ErrNoBase = errors.New("relative IRI with no base IRI to resolve it against")

// ResolveIRI resolves the IRI reference ref against the absolute IRI base with
// the strict algorithm of RFC 3986 §5.2.2, removing dot segments. An absolute
// ref needs no base; a relative one with an empty base fails with ErrNoBase,
// and with a base that is not absolute with an error saying so.
func ResolveIRI(base, ref string) (string, error) {
	r := splitIRI(ref)
	var t iriParts
	switch {
	case r.hasScheme:
		t = r
		t.path = removeDotSegments(r.path)
		return t.String(), nil
	case base == "":
		return "", ErrNoBase
	case !IsAbsoluteIRI(base):
		return "", fmt.Errorf("base IRI %q is not absolute", base)
	}
	b := splitIRI(base)
	switch {
	case r.hasAuthority:
		t.authority, t.hasAuthority = r.authority, true
		t.path = removeDotSegments(r.path)
		t.query, t.hasQuery = r.query, r.hasQuery
	case r.path == "":
		t.path = b.path
		t.query, t.hasQuery = b.query, b.hasQuery
		if r.hasQuery {
			t.query, t.hasQuery = r.query, true
		}
		t.authority, t.hasAuthority = b.authority, b.hasAuthority
	default:
		if strings.HasPrefix(r.path, "/") {
			t.path = removeDotSegments(r.path)
		} else {
			t.path = removeDotSegments(mergePaths(b, r.path))
		}
		t.query, t.hasQuery = r.query, r.hasQuery
		t.authority, t.hasAuthority = b.authority, b.hasAuthority
	}
	t.scheme, t.hasScheme = b.scheme, b.hasScheme
	t.fragment, t.hasFragment = r.fragment, r.hasFragment
	return t.String(), nil
}

// mergePaths merges a relative path with the base's path (RFC 3986 §5.2.3).
func mergePaths(base iriParts, path string) string {
	if base.hasAuthority && base.path == "" {
		return "/" + path
	}
	i := strings.LastIndexByte(base.path, '/')
	return base.path[:i+1] + path
}

// removeDotSegments removes "." and ".." segments (RFC 3986 §5.2.4).
func removeDotSegments(in string) string {
	if !strings.Contains(in, ".") {
		return in
	}
	var out strings.Builder
	for in != "" {
		switch {
		case strings.HasPrefix(in, "../"):
			in = in[3:]
		case strings.HasPrefix(in, "./"):
			in = in[2:]
		case strings.HasPrefix(in, "/./"):
			in = in[2:]
		case in == "/.":
			in = "/"
		case strings.HasPrefix(in, "/../"):
			in = in[3:]
			dropLastSegment(&out)
		case in == "/..":
			in = "/"
			dropLastSegment(&out)
		case in == "." || in == "..":
			in = ""
		default:
			i := strings.IndexByte(in[1:], '/')
			if i < 0 {
				i = len(in)
			} else {
				i++
			}
			out.WriteString(in[:i])
			in = in[i:]
		}
	}
	return out.String()
}

// dropLastSegment removes the last "/segment" of the output buffer.
func dropLastSegment(out *strings.Builder) {
	s := out.String()
	i := strings.LastIndexByte(s, '/')
	if i < 0 {
		i = 0
	}
	out.Reset()
	out.WriteString(s[:i])
}
