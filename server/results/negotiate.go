package results

import (
	"strings"
	"sync/atomic"
)

// Negotiate picks the format for an answer of kind k from the value of the
// request's Accept header, following RFC 9110 §12.5.1; pass all the Accept
// fields of the request joined with ",". It reports false when the header
// rules out every format that can carry k (the server answers 406).
//
//   - Each format takes the weight (q, 1 by default) of the most specific media
//     range that matches it: "type/subtype" over "type/*" over "*/*". A weight
//     of 0 rules the format out. A format with other media types (aliases such
//     as application/json) takes the most specific match of any of them, so
//     "*/*, application/sparql-results+json;q=0" rules JSON out.
//   - The format with the highest weight wins; between equal weights, the one
//     matched by the more specific range, then the one earlier in Formats(k).
//   - An empty header, or one with no readable media range, counts as absent:
//     every format is acceptable and the default, Formats(k)[0], wins. So does
//     "*/*", and a browser's "text/html,...,*/*;q=0.8" picks JSON for
//     solutions and Turtle for graphs.
//
// Media range parameters other than q are not compared (the formats here have
// none that change their content), and type and subtype compare without
// regard to case (RFC 9110 §8.3.1).
func Negotiate(accept string, k Kind) (Format, bool) {
	if n := lastNegotiated.Load(); n != nil && n.kind == k && n.accept == accept {
		return n.f, n.ok
	}
	f, ok := negotiate(accept, k)
	lastNegotiated.Store(&negotiated{accept: accept, kind: k, f: f, ok: ok})
	return f, ok
}

// negotiated is the outcome of one negotiation.
type negotiated struct {
	accept string
	kind   Kind
	f      Format
	ok     bool
}

// lastNegotiated remembers the latest negotiation: a busy endpoint's clients
// mostly send one Accept header over and over, which then costs a comparison
// instead of a parse.
var lastNegotiated atomic.Pointer[negotiated]

func negotiate(accept string, k Kind) (Format, bool) {
	ranges := parseAccept(accept)
	var (
		best     Format
		bestQ    = 0
		bestSpec = -1
	)
	for _, e := range formats {
		if !e.Supports(k) {
			continue
		}
		if len(ranges) == 0 {
			return e.Format, true
		}
		q, spec := weigh(ranges, e.mediaType)
		for _, alias := range e.aliases {
			if aq, aspec := weigh(ranges, alias); aspec > spec || aspec == spec && aq > q {
				q, spec = aq, aspec
			}
		}
		if q > bestQ || q == bestQ && q > 0 && spec > bestSpec {
			best, bestQ, bestSpec = e.Format, q, spec
		}
	}
	return best, bestQ > 0
}

// mediaRange is one element of an Accept header: type and subtype in lower
// case ("*" for a wildcard) and the weight in thousandths.
type mediaRange struct {
	typ, sub string
	q        int
}

// Specificities of a match between a media range and a media type.
const (
	matchAny     = iota // */*
	matchType           // type/*
	matchSubtype        // type/subtype
)

// weigh returns the weight the ranges give media type mt, and the specificity
// of the range it came from; a weight of 0 means not acceptable.
func weigh(ranges []mediaRange, mt string) (q, spec int) {
	typ, sub, _ := strings.Cut(mt, "/")
	q, spec = 0, -1
	for _, r := range ranges {
		s := -1
		switch {
		case r.typ == "*":
			s = matchAny
		case r.typ == typ && r.sub == "*":
			s = matchType
		case r.typ == typ && r.sub == sub:
			s = matchSubtype
		}
		// The most specific range decides (RFC 9110 §12.5.1); between ranges
		// as specific as each other, the more generous one.
		if s > spec || s == spec && s >= 0 && r.q > q {
			q, spec = r.q, s
		}
	}
	return q, spec
}

// parseAccept reads the media ranges of an Accept header, skipping elements it
// cannot read (RFC 9110 §12.5.1):
//
//	Accept      = #( media-range [ weight ] )
//	media-range = ( "*/*" / ( type "/" "*" ) / ( type "/" subtype ) ) parameters
//	weight      = OWS ";" OWS "q=" qvalue
func parseAccept(s string) []mediaRange {
	var ranges []mediaRange
	for s != "" {
		var elem string
		elem, s = cutOutsideQuotes(s, ',')
		if r, ok := parseMediaRange(elem); ok {
			ranges = append(ranges, r)
		}
	}
	return ranges
}

// parseMediaRange reads one element of an Accept header.
func parseMediaRange(elem string) (mediaRange, bool) {
	head, params := cutOutsideQuotes(elem, ';')
	typ, sub, ok := strings.Cut(strings.ToLower(strings.TrimSpace(head)), "/")
	if !ok || !isToken(typ) || !isToken(sub) || typ == "*" && sub != "*" {
		return mediaRange{}, false
	}
	r := mediaRange{typ: typ, sub: sub, q: 1000}
	for params != "" {
		var p string
		p, params = cutOutsideQuotes(params, ';')
		name, value, _ := strings.Cut(strings.TrimSpace(p), "=")
		if strings.EqualFold(strings.TrimSpace(name), "q") {
			// Anything after the weight is an extension we do not know.
			r.q, ok = parseQValue(strings.TrimSpace(value))
			return r, ok
		}
	}
	return r, true
}

// parseQValue reads a weight into thousandths (RFC 9110 §12.4.2):
//
//	qvalue = ( "0" [ "." 0*3DIGIT ] ) / ( "1" [ "." 0*3("0") ] )
func parseQValue(s string) (int, bool) {
	whole, frac, _ := strings.Cut(s, ".")
	if len(frac) > 3 || !allDigits(frac) {
		return 0, false
	}
	q := 0
	for i := 0; i < 3; i++ {
		q *= 10
		if i < len(frac) {
			q += int(frac[i] - '0')
		}
	}
	switch {
	case whole == "0":
		return q, true
	case whole == "1" && q == 0:
		return 1000, true
	}
	return 0, false
}

// cutOutsideQuotes cuts s around the first sep that is not inside a
// quoted-string (RFC 9110 §5.6.4), where a backslash escapes the next byte.
func cutOutsideQuotes(s string, sep byte) (before, after string) {
	quoted := false
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case quoted && c == '\\':
			i++
		case c == '"':
			quoted = !quoted
		case !quoted && c == sep:
			return s[:i], s[i+1:]
		}
	}
	return s, ""
}

// isToken reports whether s is a token (RFC 9110 §5.6.2):
//
//	token = 1*tchar
//	tchar = "!" / "#" / "$" / "%" / "&" / "'" / "*" / "+" / "-" / "." /
//	        "^" / "_" / "`" / "|" / "~" / DIGIT / ALPHA
func isToken(s string) bool {
	if s == "" {
		return false
	}
	for i := 0; i < len(s); i++ {
		if c := s[i]; !isASCIIAlnum(c) && !strings.ContainsRune("!#$%&'*+-.^_`|~", rune(c)) {
			return false
		}
	}
	return true
}
