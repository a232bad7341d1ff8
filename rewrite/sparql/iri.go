package sparql

import "strings"

// iriParts are the five components of an IRI reference (RFC 3986 §3); the has*
// flags tell an empty component from an absent one.
type iriParts struct {
	scheme, authority, path, query, fragment   string
	hasScheme, hasAuthority, hasQuery, hasFrag bool
}

// splitIRI splits ref the way RFC 3986 Appendix B does.
func splitIRI(ref string) iriParts {
	var p iriParts
	if i := strings.IndexAny(ref, ":/?#"); i > 0 && ref[i] == ':' && isScheme(ref[:i]) {
		p.scheme, p.hasScheme, ref = ref[:i], true, ref[i+1:]
	}
	if i := strings.IndexByte(ref, '#'); i >= 0 {
		p.fragment, p.hasFrag, ref = ref[i+1:], true, ref[:i]
	}
	if i := strings.IndexByte(ref, '?'); i >= 0 {
		p.query, p.hasQuery, ref = ref[i+1:], true, ref[:i]
	}
	if strings.HasPrefix(ref, "//") {
		ref = ref[2:]
		i := strings.IndexByte(ref, '/')
		if i < 0 {
			i = len(ref)
		}
		p.authority, p.hasAuthority, ref = ref[:i], true, ref[i:]
	}
	p.path = ref
	return p
}

// isScheme reports whether s matches scheme = ALPHA *( ALPHA / DIGIT / "+" / "-" / "." ).
func isScheme(s string) bool {
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case isASCIILetter(c):
		case i > 0 && (('0' <= c && c <= '9') || c == '+' || c == '-' || c == '.'):
		default:
			return false
		}
	}
	return s != ""
}

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
	if p.hasFrag {
		b.WriteByte('#')
		b.WriteString(p.fragment)
	}
	return b.String()
}

// resolveIRI resolves ref against base (RFC 3986 §5.2.2). With no base, or a
// base that is not absolute, ref is returned unchanged.
func resolveIRI(base, ref string) string {
	b := splitIRI(base)
	r := splitIRI(ref)
	if r.hasScheme {
		r.path = removeDotSegments(r.path)
		return r.String()
	}
	if !b.hasScheme {
		return ref
	}
	var t iriParts
	switch {
	case r.hasAuthority:
		t.authority, t.hasAuthority = r.authority, true
		t.path = removeDotSegments(r.path)
		t.query, t.hasQuery = r.query, r.hasQuery
	case r.path == "":
		t.authority, t.hasAuthority = b.authority, b.hasAuthority
		t.path = b.path
		t.query, t.hasQuery = b.query, b.hasQuery
		if r.hasQuery {
			t.query, t.hasQuery = r.query, true
		}
	default:
		t.authority, t.hasAuthority = b.authority, b.hasAuthority
		if strings.HasPrefix(r.path, "/") {
			t.path = removeDotSegments(r.path)
		} else {
			t.path = removeDotSegments(mergePaths(b, r.path))
		}
		t.query, t.hasQuery = r.query, r.hasQuery
	}
	t.scheme, t.hasScheme = b.scheme, true
	t.fragment, t.hasFrag = r.fragment, r.hasFrag
	return t.String()
}

// mergePaths implements RFC 3986 §5.2.3.
func mergePaths(base iriParts, ref string) string {
	if base.hasAuthority && base.path == "" {
		return "/" + ref
	}
	i := strings.LastIndexByte(base.path, '/')
	return base.path[:i+1] + ref
}

// removeDotSegments implements RFC 3986 §5.2.4.
func removeDotSegments(in string) string {
	var out []string
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
			if len(out) > 0 {
				out = out[:len(out)-1]
			}
		case in == "/..":
			in = "/"
			if len(out) > 0 {
				out = out[:len(out)-1]
			}
		case in == "." || in == "..":
			in = ""
		default:
			i := strings.IndexByte(in[1:], '/')
			if i < 0 {
				i = len(in)
			} else {
				i++
			}
			out = append(out, in[:i])
			in = in[i:]
		}
	}
	return strings.Join(out, "")
}

// checkIRI reports why s is not an IRI reference (RFC 3987 §2.2), checking
// what the lexer cannot: one fragment at most and well-formed percent escapes.
func checkIRI(s string) string {
	if strings.Count(s, "#") > 1 {
		return "an IRI may contain at most one '#'"
	}
	for i := 0; i < len(s); i++ {
		if s[i] == '%' && (i+2 >= len(s) || hexValue(s[i+1]) < 0 || hexValue(s[i+2]) < 0) {
			return "'%' in an IRI must be followed by two hexadecimal digits"
		}
	}
	return ""
}
