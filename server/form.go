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
	i := 0
	for i < len(s) && s[i] != '%' && s[i] != '+' {
		i++
	}
	if i == len(s) {
		return s, nil
	}
	var out strings.Builder
	out.Grow(len(s))
	for run := 0; ; {
		out.WriteString(s[run:i])
		if i == len(s) {
			return out.String(), nil
		}
		if s[i] == '+' {
			out.WriteByte(' ')
			i++
		} else {
			if i+2 >= len(s) || hexValue[s[i+1]]|hexValue[s[i+2]] > 15 {
				end := min(i+3, len(s))
				return "", fmt.Errorf("%q at byte %d is not a %%-escape of two hex digits", s[i:end], at+i+1)
			}
			out.WriteByte(hexValue[s[i+1]]<<4 | hexValue[s[i+2]])
			i += 3
		}
		for run = i; i < len(s) && s[i] != '%' && s[i] != '+'; i++ {
		}
	}
}

// hexValue is the value of each hexadecimal digit, and 0xff for other bytes.
var hexValue = func() (t [256]byte) {
	for c := range t {
		switch {
		case '0' <= c && c <= '9':
			t[c] = byte(c - '0')
		case 'a' <= c && c <= 'f':
			t[c] = byte(c - 'a' + 10)
		case 'A' <= c && c <= 'F':
			t[c] = byte(c - 'A' + 10)
		default:
			t[c] = 0xff
		}
	}
	return t
}()
