package server

import (
	"bufio"
	"crypto/sha256"
	"crypto/subtle"
	"fmt"
	"io"
	"net/http"
	"strings"
	"sync/atomic"
)

// Tokens is a set of bearer tokens (RFC 6750). Only their SHA-256 digests are
// kept, so that every comparison takes the same time whatever the length of
// the token and of the guess, and a memory dump shows no token.
type Tokens struct {
	digests [][sha256.Size]byte
}

// NewTokens makes a set of the given tokens; empty strings are left out.
func NewTokens(tokens ...string) *Tokens {
	t := &Tokens{}
	for _, tok := range tokens {
		if tok != "" {
			t.digests = append(t.digests, sha256.Sum256([]byte(tok)))
		}
	}
	return t
}

// ReadTokens reads tokens one a line, as a token file holds them: blank lines
// and lines starting with '#' are skipped and surrounding white space is
// trimmed. A token must be a b64token (RFC 6750 §2.1), so that a client can
// send it; the error names the line, never the token.
func ReadTokens(name string, r io.Reader) ([]string, error) {
	var toks []string
	sc := bufio.NewScanner(r)
	for line := 1; sc.Scan(); line++ {
		tok := strings.TrimSpace(sc.Text())
		if tok == "" || strings.HasPrefix(tok, "#") {
			continue
		}
		if !isB64Token(tok) {
			return nil, fmt.Errorf("%s:%d: the token has a character a bearer token cannot carry (RFC 6750 §2.1 allows letters, digits and -._~+/ with trailing =)", name, line)
		}
		toks = append(toks, tok)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("reading tokens from %s: %w", name, err)
	}
	return toks, nil
}

// Len returns the number of tokens.
func (t *Tokens) Len() int { return len(t.digests) }

// match reports whether tok is one of the tokens. It compares the digest with
// every token's, without stopping at a match, in constant time each.
func (t *Tokens) match(tok string) bool {
	d := sha256.Sum256([]byte(tok))
	found := 0
	for i := range t.digests {
		found |= subtle.ConstantTimeCompare(d[:], t.digests[i][:])
	}
	return found == 1
}

// isB64Token reports whether s matches b64token (RFC 6750 §2.1):
//
//	b64token = 1*( ALPHA / DIGIT / "-" / "." / "_" / "~" / "+" / "/" ) *"="
func isB64Token(s string) bool {
	body := strings.TrimRight(s, "=")
	if body == "" {
		return false
	}
	for i := 0; i < len(body); i++ {
		c := body[i]
		if !isAlnum(c) && !strings.ContainsRune("-._~+/", rune(c)) {
			return false
		}
	}
	return true
}

func isAlnum(c byte) bool {
	return 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9'
}

// authenticator checks bearer tokens against the set in force; SetTokens
// replaces it while requests run.
type authenticator struct {
	tokens atomic.Pointer[Tokens] // nil or empty: no authentication
}

// check lets a request through only with a valid "Authorization: Bearer
// TOKEN" header, when tokens are configured. A refusal is 401 with a
// WWW-Authenticate challenge (RFC 6750 §3).
func (a *authenticator) check(r *http.Request) error {
	toks := a.tokens.Load()
	if toks == nil || toks.Len() == 0 {
		return nil
	}
	scheme, tok, _ := strings.Cut(r.Header.Get("Authorization"), " ")
	tok = strings.TrimSpace(tok)
	if !strings.EqualFold(scheme, "Bearer") || tok == "" {
		return unauthorized(`Bearer realm="veneer"`, "this endpoint needs a bearer token: send Authorization: Bearer TOKEN")
	}
	if !toks.match(tok) {
		return unauthorized(`Bearer realm="veneer", error="invalid_token"`, "the bearer token is not valid")
	}
	return nil
}

func unauthorized(challenge, msg string) *problem {
	return &problem{status: http.StatusUnauthorized, msg: msg,
		header: http.Header{"Www-Authenticate": {challenge}}}
}
