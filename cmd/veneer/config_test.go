package main

import (
	"flag"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
)

// load runs loadConfig for serve with the given YAML file text (none when
// empty), environment and flags.
func load(t *testing.T, yaml string, env map[string]string, args ...string) (*config, error) {
	t.Helper()
	if yaml != "" {
		path := filepath.Join(t.TempDir(), "veneer.yaml")
		if err := os.WriteFile(path, []byte(yaml), 0o600); err != nil {
			t.Fatal(err)
		}
		args = append([]string{"--config", path}, args...)
	}
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	c, _, err := loadConfig("serve", args, func(k string) string { return env[k] }, true, fs)
	return c, err
}

const sampleYAML = `
listen: 0.0.0.0:8080
sources:
  - db: postgres://veneer@db.internal/maintenance
    mappings: [windfarm.ttl, parts.ttl]
    max_conns: 12
limits:
  query_timeout: 45s
  max_concurrent: 32
  max_rows: 50000
auth:
  token_file: /etc/veneer/tokens
cors:
  origins: ["https://dash.windfarm.example"]
log:
  level: debug
  slow_query: 500ms
trust_forwarded: true
`

func TestConfigLayers(t *testing.T) {
	t.Run("defaults", func(t *testing.T) {
		c, err := load(t, "", nil)
		if err != nil {
			t.Fatal(err)
		}
		if c.Listen != defaultListen || c.Limits.QueryTimeout != 30*time.Second || c.Log.Format != "json" {
			t.Errorf("defaults %+v", c)
		}
	})
	t.Run("file", func(t *testing.T) {
		c, err := load(t, sampleYAML, nil)
		if err != nil {
			t.Fatal(err)
		}
		s := c.Sources[0]
		if c.Listen != "0.0.0.0:8080" || s.DB != "postgres://veneer@db.internal/maintenance" ||
			!slices.Equal(s.Mappings, []string{"windfarm.ttl", "parts.ttl"}) || s.MaxConns != 12 ||
			c.Limits.QueryTimeout != 45*time.Second || c.Limits.MaxConcurrent != 32 || c.Limits.MaxRows != 50000 ||
			c.Limits.MaxQueued != 64 || // not in the file: the default stays
			c.Auth.TokenFile != "/etc/veneer/tokens" || c.CORS.Origins[0] != "https://dash.windfarm.example" ||
			c.Log.Level != "debug" || c.Log.SlowQuery != 500*time.Millisecond || !c.TrustForwarded {
			t.Errorf("from the file: %+v", c)
		}
	})
	t.Run("environment over file, flags over environment", func(t *testing.T) {
		env := map[string]string{
			"VENEER_LISTEN":         "127.0.0.1:9000",
			"VENEER_MAPPINGS":       "a.ttl, b.ttl",
			"VENEER_MAX_CONCURRENT": "4",
			"VENEER_QUERY_TIMEOUT":  "10s",
		}
		c, err := load(t, sampleYAML, env, "--query-timeout", "5s", "--mapping", "x.ttl", "--mapping", "y.ttl", "--trust-forwarded=false")
		if err != nil {
			t.Fatal(err)
		}
		if c.Listen != "127.0.0.1:9000" || c.Limits.MaxConcurrent != 4 || c.Limits.QueryTimeout != 5*time.Second ||
			!slices.Equal(c.Sources[0].Mappings, []string{"x.ttl", "y.ttl"}) || c.TrustForwarded ||
			c.Sources[0].DB != "postgres://veneer@db.internal/maintenance" {
			t.Errorf("layered: %+v", c)
		}
	})
	t.Run("config file from the environment", func(t *testing.T) {
		path := filepath.Join(t.TempDir(), "v.yaml")
		os.WriteFile(path, []byte("listen: 10.0.0.1:1\n"), 0o600)
		c, err := load(t, "", map[string]string{"VENEER_CONFIG": path})
		if err != nil || c.Listen != "10.0.0.1:1" {
			t.Errorf("%v %+v", err, c)
		}
	})
}

func TestConfigErrors(t *testing.T) {
	cases := []struct {
		name, yaml string
		env        map[string]string
		args       []string
		want       string
	}{
		{name: "unknown key, with its line", yaml: "listen: x\nlimits:\n  max_rowz: 3\n", want: "line 3"},
		{name: "wrong type", yaml: "limits:\n  max_concurrent: many\n", want: "line 2"},
		{name: "two sources", yaml: "sources:\n  - db: sqlite:a\n  - db: sqlite:b\n", want: "one source"},
		{name: "half of TLS", args: []string{"--tls-cert", "c.pem"}, want: "both a certificate and a key"},
		{name: "bad duration flag", args: []string{"--query-timeout", "soon"}, want: "--query-timeout"},
		{name: "bad number variable", env: map[string]string{"VENEER_MAX_ROWS": "lots"}, want: "VENEER_MAX_ROWS"},
		{name: "bad log level", args: []string{"--log-level", "loud"}, want: "log level"},
		{name: "negative limit", args: []string{"--max-queued", "-1"}, want: "negative"},
		{name: "missing file", args: []string{"--config", "/nonexistent/veneer.yaml"}, want: "reading the configuration"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := load(t, c.yaml, c.env, c.args...)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want one containing %q", err, c.want)
			}
		})
	}
}

func TestTokensFromFileAndEnvironment(t *testing.T) {
	path := filepath.Join(t.TempDir(), "tokens")
	os.WriteFile(path, []byte("# ops\nfile-token-1\n"), 0o600)
	c := defaultConfig()
	c.Auth.TokenFile = path
	toks, err := c.tokens(func(k string) string {
		if k == tokensEnv {
			return "env-token-1, env-token-2"
		}
		return ""
	})
	if err != nil || toks.Len() != 3 {
		t.Fatalf("%v, %d tokens", err, toks.Len())
	}
	_, err = c.tokens(func(string) string { return "has space" })
	if err == nil || strings.Contains(err.Error(), "has space") {
		t.Errorf("a bad token in %s: %v (and the error must not show it)", tokensEnv, err)
	}
}

func TestReplicaConfig(t *testing.T) {
	const replicated = `
sources:
  - db: postgres://veneer@primary.internal/maintenance
    replicas:
      - name: east
        db: postgres://veneer@replica-east.internal/maintenance
      - db: postgres://veneer@replica-west.internal/maintenance
    member_retry:
      first: 250ms
      max: 20s
`
	c, err := load(t, replicated, nil)
	if err != nil {
		t.Fatal(err)
	}
	sc := c.Sources[0]
	names := func(sc sourceConf) (out []string) {
		for _, m := range sc.members() {
			out = append(out, m.Name+"="+m.DSN)
		}
		return out
	}
	want := []string{"primary=postgres://veneer@primary.internal/maintenance",
		"east=postgres://veneer@replica-east.internal/maintenance",
		"replica-2=postgres://veneer@replica-west.internal/maintenance"}
	if !slices.Equal(names(sc), want) || sc.MemberRetry != (retryConf{First: 250 * time.Millisecond, Max: 20 * time.Second}) {
		t.Errorf("from the file: %v %+v", names(sc), sc.MemberRetry)
	}
	// The variable replaces the file's list, the flag the variable's.
	c, err = load(t, replicated, map[string]string{"VENEER_REPLICAS": "mysql://r1/db, mysql://r2/db", "VENEER_MEMBER_RETRY_MAX": "3s"},
		"--replica", "mysql://r9/db", "--member-retry-first", "1s")
	if err != nil {
		t.Fatal(err)
	}
	sc = c.Sources[0]
	if got := names(sc); !slices.Equal(got, []string{"primary=postgres://veneer@primary.internal/maintenance", "replica-1=mysql://r9/db"}) ||
		sc.MemberRetry != (retryConf{First: time.Second, Max: 3 * time.Second}) {
		t.Errorf("layered: %v %+v", got, sc.MemberRetry)
	}
	c, err = load(t, "", map[string]string{"VENEER_DB": "mysql://p/db", "VENEER_REPLICAS": "mysql://r1/db,mysql://r2/db"})
	if err != nil || !slices.Equal(names(c.Sources[0]), []string{"primary=mysql://p/db", "replica-1=mysql://r1/db", "replica-2=mysql://r2/db"}) {
		t.Errorf("from the environment: %v %v", err, names(c.Sources[0]))
	}
	for _, bad := range []struct{ yaml, want string }{
		{"sources:\n  - replicas:\n      - db: mysql://r/db\n", "replicas need the primary's db"},
		{"sources:\n  - db: mysql://p/db\n    replicas:\n      - name: east\n", "replicas[0] (east): no db"},
		{"sources:\n  - db: mysql://p/db\n    replicas:\n      - {name: primary, db: mysql://r/db}\n", `two members are named "primary"`},
		{"sources:\n  - db: mysql://p/db\n    member_retry: {first: -1s}\n", "cannot be negative"},
	} {
		if _, err := load(t, bad.yaml, nil); err == nil || !strings.Contains(err.Error(), bad.want) {
			t.Errorf("%q: error %v, want %q", bad.yaml, err, bad.want)
		}
	}
}
