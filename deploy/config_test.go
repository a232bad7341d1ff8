package deploy

import (
	"encoding/json"
	"fmt"
	"path"
	"strings"
	"testing"
	"time"

	"sigs.k8s.io/yaml"
)

// configFileKey is the ConfigMap key (and so the file name under ConfigDir)
// of the config file.
var configFileKey = path.Base(ConfigFile)

// veneerConfig is the YAML config file of `veneer serve --config`, with the
// keys cmd/veneer/config.go reads. This copy lets the checks below relate the
// file to the manifests without building the binary; deploy/verify runs the
// binary itself on the example files, which catches any difference between
// the two. Decoding is strict, as the binary's is: a key not listed here is
// an error.
type veneerConfig struct {
	Listen  string `json:"listen"`
	Base    string `json:"base,omitempty"`
	Sources []struct {
		// DB is left out of the example files: VENEER_DB carries it.
		DB       string   `json:"db,omitempty"`
		Mappings []string `json:"mappings,omitempty"`
		MaxConns int      `json:"max_conns"`
	} `json:"sources"`
	Limits struct {
		QueryTimeout  duration `json:"query_timeout"`
		MaxConcurrent int      `json:"max_concurrent"`
		MaxQueued     int      `json:"max_queued"`
		QueueTimeout  duration `json:"queue_timeout"`
		MaxQueryBytes int64    `json:"max_query_bytes"`
		MaxBodyBytes  int64    `json:"max_body_bytes"`
		MaxRows       int64    `json:"max_rows"`
	} `json:"limits"`
	Auth struct {
		TokenFile string `json:"token_file"`
	} `json:"auth"`
	CORS struct {
		Origins []string `json:"origins"`
	} `json:"cors"`
	TLS struct {
		Cert string `json:"cert"`
		Key  string `json:"key"`
	} `json:"tls"`
	Log struct {
		Level     string   `json:"level"`
		Format    string   `json:"format"`
		SlowQuery duration `json:"slow_query"`
	} `json:"log"`
	TrustForwarded bool     `json:"trust_forwarded"`
	DrainTimeout   duration `json:"drain_timeout"`
}

// duration is a Go duration written as text ("30s").
type duration struct{ time.Duration }

func (d *duration) UnmarshalJSON(b []byte) error {
	var s string
	if err := json.Unmarshal(b, &s); err != nil {
		return fmt.Errorf("a duration is text such as \"30s\": %w", err)
	}
	v, err := time.ParseDuration(s)
	if err != nil {
		return err
	}
	d.Duration = v
	return nil
}

func parseConfig(name string, data []byte) (*veneerConfig, error) {
	var c veneerConfig
	if err := yaml.UnmarshalStrict(data, &c); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return &c, nil
}

// checkConfig checks a config file against the contract and against the
// other keys of its ConfigMap (the files it can name).
func checkConfig(t *testing.T, name string, c *veneerConfig, cmData map[string]string) {
	t.Helper()
	if c.Listen != ContainerListen {
		t.Errorf("%s: listen %q, want %q: the probes, the Service and the scrape annotations use port %d", name, c.Listen, ContainerListen, Port)
	}
	if c.DrainTimeout.Duration != DrainTimeout {
		t.Errorf("%s: drain_timeout %v, want %v: the pod's termination grace period is sized for it", name, c.DrainTimeout.Duration, DrainTimeout)
	}
	if c.Auth.TokenFile != TokensFile {
		t.Errorf("%s: auth.token_file %q, want %q, where the Secret's %q key is mounted", name, c.Auth.TokenFile, TokensFile, SecretTokensKey)
	}
	if c.Log.Format != "json" {
		t.Errorf("%s: log.format %q: a cluster's log collectors want json", name, c.Log.Format)
	}
	if len(c.Sources) != 1 {
		t.Fatalf("%s: %d sources, want 1 (one source is served for now)", name, len(c.Sources))
	}
	src := c.Sources[0]
	if src.DB != "" {
		t.Errorf("%s: sources[0].db is set; the DSN belongs in the Secret, through %s", name, DSNEnv)
	}
	if len(src.Mappings) == 0 && c.Base == "" {
		t.Errorf("%s: no mappings and no base IRI: the Direct Mapping needs a base", name)
	}
	for _, m := range src.Mappings {
		dir, file := path.Split(m)
		if strings.TrimSuffix(dir, "/") != ConfigDir {
			t.Errorf("%s: mapping %q is not under %s, where the ConfigMap is mounted", name, m, ConfigDir)
			continue
		}
		if _, ok := cmData[file]; !ok {
			t.Errorf("%s: mapping %q: the ConfigMap has no key %q", name, m, file)
		}
	}
	if src.MaxConns < 1 {
		t.Errorf("%s: sources[0].max_conns %d: give the pool size explicitly, it is the unit of database sizing", name, src.MaxConns)
	}
	l := c.Limits
	// A query admitted to a slot should never wait for a connection, so that
	// the admission queue (bounded, with fast 503s) is the only queue.
	if l.MaxConcurrent < 1 || l.MaxConcurrent > src.MaxConns {
		t.Errorf("%s: limits.max_concurrent %d, want 1..sources[0].max_conns (%d)", name, l.MaxConcurrent, src.MaxConns)
	}
	for _, v := range []struct {
		what string
		set  bool
	}{
		{"limits.query_timeout", l.QueryTimeout.Duration > 0},
		{"limits.max_queued", l.MaxQueued > 0},
		{"limits.queue_timeout", l.QueueTimeout.Duration > 0},
		{"limits.max_query_bytes", l.MaxQueryBytes > 0},
		{"limits.max_body_bytes", l.MaxBodyBytes > 0},
		{"limits.max_rows", l.MaxRows > 0},
	} {
		if !v.set {
			t.Errorf("%s: %s is not set: the example configs state every limit", name, v.what)
		}
	}
	if l.MaxBodyBytes < l.MaxQueryBytes {
		t.Errorf("%s: limits.max_body_bytes %d is below limits.max_query_bytes %d: a POSTed query of the allowed length would be refused", name, l.MaxBodyBytes, l.MaxQueryBytes)
	}
	if l.QueueTimeout.Duration >= l.QueryTimeout.Duration {
		t.Errorf("%s: limits.queue_timeout %v is not below limits.query_timeout %v", name, l.QueueTimeout.Duration, l.QueryTimeout.Duration)
	}
}

// TestConfigDecodingIsStrict shows that the config checks can fail: a
// misspelt key, a bad duration and a wrong type are each refused.
func TestConfigDecodingIsStrict(t *testing.T) {
	tests := []struct {
		name, text, want string
	}{
		{"unknown key", "listen: 0.0.0.0:7531\nlisten_addr: x\n", "listen_addr"},
		{"misspelt nested key", "limits:\n  max_concurent: 4\n", "max_concurent"},
		{"bad duration", "drain_timeout: twenty\n", "twenty"},
		{"wrong type", "sources:\n  - max_conns: many\n", "max_conns"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := parseConfig("test.yaml", []byte(tt.text))
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("parseConfig(%q) = %v, want an error naming %q", tt.text, err, tt.want)
			}
		})
	}
}

// TestContractIsConsistent checks the contract's values that repeat one
// another.
func TestContractIsConsistent(t *testing.T) {
	if want := fmt.Sprintf("0.0.0.0:%d", Port); ContainerListen != want {
		t.Errorf("ContainerListen %q, want %q", ContainerListen, want)
	}
	if path.Dir(ConfigFile) != ConfigDir || path.Dir(TokensFile) != SecretsDir {
		t.Errorf("ConfigFile %s and TokensFile %s are not in ConfigDir %s and SecretsDir %s", ConfigFile, TokensFile, ConfigDir, SecretsDir)
	}
	for _, p := range []string{QueryPath, HealthPath, ReadyPath, MetricsPath} {
		if !strings.HasPrefix(p, "/") {
			t.Errorf("path %q does not start with /", p)
		}
	}
}
