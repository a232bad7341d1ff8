package server

import (
	"strings"
	"testing"
)

func TestBearerTokens(t *testing.T) {
	const good, other = "s3cr3t-token_A.b~c+d/e==", "second-token"
	cfg := DefaultConfig()
	cfg.Tokens = NewTokens(good, other)
	env := newEnv(t, cfg, explainingEngine{&fakeEngine{answer: kindsAnswer}})
	cases := []struct {
		name, path, auth string
		status           int
		challenge        string
	}{
		{"no header", "/sparql?query=q", "", 401, `Bearer realm="veneer"`},
		{"wrong scheme", "/sparql?query=q", "Basic " + good, 401, `Bearer realm="veneer"`},
		{"wrong token", "/sparql?query=q", "Bearer nope", 401, `error="invalid_token"`},
		{"prefix of a token", "/sparql?query=q", "Bearer " + good[:5], 401, `error="invalid_token"`},
		{"good token", "/sparql?query=q", "Bearer " + good, 200, ""},
		{"second token, scheme in lower case", "/sparql?query=q", "bearer " + other, 200, ""},
		{"explain without a token", "/explain?query=q", "", 401, `Bearer realm="veneer"`},
		{"explain with a token", "/explain?query=q", "Bearer " + good, 200, ""},
		// The service description and the page tell nothing about the data.
		{"service description", "/sparql", "", 200, ""},
		{"query page", "/", "", 200, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var h []string
			if c.auth != "" {
				h = []string{"Authorization", c.auth}
			}
			r := env.do(t, "GET", c.path, "", h...)
			if r.status != c.status || !strings.Contains(r.header.Get("WWW-Authenticate"), c.challenge) {
				t.Errorf("%d WWW-Authenticate %q; want %d with %q", r.status, r.header.Get("WWW-Authenticate"), c.status, c.challenge)
			}
		})
	}
	if strings.Contains(env.logs(), good) || strings.Contains(env.logs(), other) {
		t.Errorf("a token is in the log")
	}
	// SetTokens takes effect for the next request; an empty set turns auth off.
	env.srv.SetTokens(NewTokens())
	if r := env.do(t, "GET", "/sparql?query=q", ""); r.status != 200 {
		t.Errorf("after SetTokens(empty): %d", r.status)
	}
}

func TestReadTokens(t *testing.T) {
	list, err := ReadTokens("tokens.txt", strings.NewReader("# dashboards\n  alpha-1  \n\nbeta/2==\n"))
	toks := NewTokens(list...)
	if err != nil || toks.Len() != 2 || !toks.match("alpha-1") || !toks.match("beta/2==") || toks.match("alpha") {
		t.Fatalf("ReadTokens: %v, %q", err, list)
	}
	// RFC 6750 §2.1: b64token; the error names the line, not the token.
	_, err = ReadTokens("tokens.txt", strings.NewReader("ok\nbad token\n"))
	if err == nil || !strings.Contains(err.Error(), "tokens.txt:2") || strings.Contains(err.Error(), "bad token") {
		t.Errorf("error %v", err)
	}
}

func TestCORS(t *testing.T) {
	cfg := DefaultConfig()
	cfg.CORSOrigins = []string{"https://dash.windfarm.example"}
	listed := newEnv(t, cfg, &fakeEngine{answer: kindsAnswer})
	open := newEnv(t, func() Config { c := DefaultConfig(); c.CORSOrigins = []string{"*"}; return c }(), &fakeEngine{answer: kindsAnswer})
	none := newEnv(t, DefaultConfig(), &fakeEngine{answer: kindsAnswer})
	const dash, evil = "https://dash.windfarm.example", "https://evil.example"
	preflight := func(origin string) []string {
		return []string{"Origin", origin, "Access-Control-Request-Method", "POST", "Access-Control-Request-Headers", "authorization, content-type"}
	}
	cases := []struct {
		name, method string
		env          *env
		headers      []string
		status       int
		allowOrigin  string
	}{
		{"allowed origin", "GET", listed, []string{"Origin", dash}, 200, dash},
		{"other origin", "GET", listed, []string{"Origin", evil}, 200, ""},
		{"no origin", "GET", listed, nil, 200, ""},
		{"preflight, allowed", "OPTIONS", listed, preflight(dash), 204, dash},
		{"preflight, other origin", "OPTIONS", listed, preflight(evil), 204, ""},
		{"any origin", "GET", open, []string{"Origin", evil}, 200, evil},
		{"not configured", "GET", none, []string{"Origin", dash}, 200, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := c.env.do(t, c.method, "/sparql?query=q", "", c.headers...)
			if r.status != c.status || r.header.Get("Access-Control-Allow-Origin") != c.allowOrigin {
				t.Errorf("%d Allow-Origin %q; want %d %q", r.status, r.header.Get("Access-Control-Allow-Origin"), c.status, c.allowOrigin)
			}
			if c.method == "OPTIONS" && c.allowOrigin != "" {
				if !strings.Contains(r.header.Get("Access-Control-Allow-Headers"), "Authorization") ||
					!strings.Contains(r.header.Get("Access-Control-Allow-Methods"), "POST") {
					t.Errorf("preflight headers %v", r.header)
				}
			}
			if r.header.Get("Access-Control-Allow-Credentials") != "" {
				t.Errorf("credentials allowed")
			}
		})
	}
}

func TestRequestID(t *testing.T) {
	env := newEnv(t, DefaultConfig(), &fakeEngine{answer: kindsAnswer})
	r := env.do(t, "GET", "/sparql?query=q", "")
	gen := r.header.Get(RequestIDHeader)
	if len(gen) != 24 {
		t.Errorf("generated id %q", gen)
	}
	if r := env.do(t, "GET", "/sparql?query=q", "", RequestIDHeader, "lb-7f3a.22"); r.header.Get(RequestIDHeader) != "lb-7f3a.22" {
		t.Errorf("incoming id not kept: %q", r.header.Get(RequestIDHeader))
	}
	if r := env.do(t, "GET", "/sparql?query=q", "", RequestIDHeader, "a b\"<script>"); len(r.header.Get(RequestIDHeader)) != 24 {
		t.Errorf("unusable id kept: %q", r.header.Get(RequestIDHeader))
	}
	if !strings.Contains(env.logs(), `"request_id":"`+gen+`"`) || !strings.Contains(env.logs(), `"request_id":"lb-7f3a.22"`) {
		t.Errorf("ids not in the log:\n%s", env.logs())
	}
}
