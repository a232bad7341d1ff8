package server

import (
	"fmt"
	"net/http"
	"net/url"
	"strings"
)

// urlParams reads the parameters of a request's URL.
func urlParams(r *http.Request) (url.Values, error) {
	params, err := parseForm(r.URL.RawQuery)
	if err != nil {
		return nil, badRequest("the URL's query string does not parse: %v", err)
	}
	return params, nil
}

// parseForm reads application/x-www-form-urlencoded text — a URL's query
// string or a form body — as url.ParseQuery does (HTML Living Standard,
// "application/x-www-form-urlencoded parsing", from memory): pairs separated
// by '&', name and value by the first '=', '+' for a space and %XX for a
// byte; a ';' between pairs is refused, as net/url refuses it. It copies the
// text between escapes in whole runs rather than byte by byte, which matters
// for the long queries federation engines send. The error names the byte of
// the text that is wrong.
func parseForm(text string) (url.Values, error) {
	values := url.Values{}
	at := 0 // the offset of pair in text
	for rest := text; rest != ""; {
		pair := rest
		if i := strings.IndexByte(rest, '&'); i >= 0 {
			pair, rest = rest[:i], rest[i+1:]
		} else {
			rest = ""
		}
		if i := strings.IndexByte(pair, ';'); i >= 0 {
			return nil, fmt.Errorf("a ';' at byte %d separates pairs, which only '&' may do", at+i+1)
		}
		if pair != "" {
			name, value, _ := strings.Cut(pair, "=")
			n, err := unescapeForm(name, at)
			if err != nil {
				return nil, err
			}
			v, err := unescapeForm(value, at+len(name)+1)
			if err != nil {
				return nil, err
			}
			values[n] = append(values[n], v)
		}
		at += len(pair) + 1
	}
	return values, nil
}

// unescapeForm decodes one name or value of form text, which starts at
// byte at of the whole text.
func unescapeForm(s string, at int) (string, error) {
	start := 0
	var out []byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c != '%' && c != '+' {
			continue
		}
		if out == nil {
			out = make([]byte, 0, len(s))
		}
		out = append(out, s[start:i]...)
		if c == '+' {
			out = append(out, ' ')
			start = i + 1
			continue
		}
		if i+2 >= len(s) || !isHex(s[i+1]) || !isHex(s[i+2]) {
			end := min(i+3, len(s))
			return "", fmt.Errorf("%q at byte %d is not a %%-escape of two hex digits", s[i:end], at+i+1)
		}
		out = append(out, unhex(s[i+1])<<4|unhex(s[i+2]))
		i += 2
		start = i + 1
	}
	if out == nil {
		return s, nil
	}
	return string(append(out, s[start:]...)), nil
}

func isHex(c byte) bool {
	return '0' <= c && c <= '9' || 'a' <= c && c <= 'f' || 'A' <= c && c <= 'F'
}

func unhex(c byte) byte {
	switch {
	case c <= '9':
		return c - '0'
	case c <= 'F':
		return c - 'A' + 10
	}
	return c - 'a' + 10
}
