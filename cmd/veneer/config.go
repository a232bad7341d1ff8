package main

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net/url"
	"os"
	"strconv"
	"strings"
	"time"
	"veneer/rewrite"
	"veneer/rewrite/exec"

	"go.yaml.in/yaml/v3"

	"veneer/catalog/source"
	"veneer/server"
)

// config is everything `veneer serve` can be told. Each setting comes from,
// in rising order of precedence: its default, the YAML file named by --config
// (or VENEER_CONFIG), its environment variable, and its flag. The options
// table below lists the flag and variable of every setting; the YAML keys are
// the field tags.
type config struct {
	Listen         string        `yaml:"listen"`
	Sources        []sourceConf  `yaml:"sources"`
	Base           string        `yaml:"base"`
	Limits         limitsConf    `yaml:"limits"`
	Auth           authConf      `yaml:"auth"`
	CORS           corsConf      `yaml:"cors"`
	TLS            tlsConf       `yaml:"tls"`
	Log            logConf       `yaml:"log"`
	Service        serviceConf   `yaml:"service"`
	TrustForwarded bool          `yaml:"trust_forwarded"`
	DrainTimeout   time.Duration `yaml:"drain_timeout"`
}

// sourceConf is one database and the mappings over it. Only one source is
// served for now. With replicas, db is the primary and queries are spread
// over it and the replicas that answer (source.Group); max_conns then
// bounds each member's pool.
type sourceConf struct {
	DB          string        `yaml:"db"`
	Replicas    []replicaConf `yaml:"replicas"`
	MemberRetry retryConf     `yaml:"member_retry"`
	Mappings    []string      `yaml:"mappings"`
	MaxConns    int           `yaml:"max_conns"`
}

// replicaConf is a read replica of a source. Its name labels it in metrics
// and logs (the DSN never does); it defaults to replica-N, N counting from 1.
type replicaConf struct {
	Name string `yaml:"name"`
	DB   string `yaml:"db"`
}

// retryConf says how a member of a replicated source that failed is tried
// again: after First, then after twice as long each time, up to Max.
type retryConf struct {
	First time.Duration `yaml:"first"`
	Max   time.Duration `yaml:"max"`
}

// primaryName is the member name of a replicated source's db.
const primaryName = "primary"

// members lists the database of the source and its replicas, named.
func (sc *sourceConf) members() []source.Member {
	ms := []source.Member{{Name: primaryName, DSN: sc.DB}}
	for i, r := range sc.Replicas {
		name := r.Name
		if name == "" {
			name = fmt.Sprintf("replica-%d", i+1)
		}
		ms = append(ms, source.Member{Name: name, DSN: r.DB})
	}
	return ms
}

type limitsConf struct {
	QueryTimeout  time.Duration `yaml:"query_timeout"`
	MaxConcurrent int           `yaml:"max_concurrent"`
	MaxQueued     int           `yaml:"max_queued"`
	QueueTimeout  time.Duration `yaml:"queue_timeout"`
	MaxQueryBytes int64         `yaml:"max_query_bytes"`
	MaxBodyBytes  int64         `yaml:"max_body_bytes"`
	MaxRows       int64         `yaml:"max_rows"`
	// MaxUnions and MaxTables bound the SQL one query may become (see
	// rewrite.Limits): a query beyond them is refused as too complex.
	MaxUnions int64 `yaml:"max_unions"`
	MaxTables int64 `yaml:"max_tables"`
}

// authConf names where the bearer tokens come from. The tokens themselves are
// never in the YAML file or on the command line (which other users of the
// machine can list): they are in the token file, one a line, or in the
// VENEER_TOKENS variable, separated by commas.
type authConf struct {
	TokenFile string `yaml:"token_file"`
}

type corsConf struct {
	Origins []string `yaml:"origins"`
}

type tlsConf struct {
	Cert string `yaml:"cert"`
	Key  string `yaml:"key"`
}

// serviceConf governs the SERVICE calls queries make to other endpoints:
// Allow lists the endpoint IRIs that may be called (none: SERVICE is off).
type serviceConf struct {
	Allow    []string      `yaml:"allow"`
	Timeout  time.Duration `yaml:"timeout"`
	MaxBytes int64         `yaml:"max_bytes"`
}

type logConf struct {
	Level     string        `yaml:"level"`
	Format    string        `yaml:"format"`
	SlowQuery time.Duration `yaml:"slow_query"`
}

// tokensEnv holds bearer tokens, comma-separated.
const tokensEnv = "VENEER_TOKENS"

// defaultConfig is the configuration before any file, variable or flag.
func defaultConfig() config {
	d := server.DefaultConfig()
	return config{
		Listen: defaultListen,
		Limits: limitsConf{
			QueryTimeout:  d.Limits.QueryTimeout,
			MaxConcurrent: d.Limits.MaxConcurrent,
			MaxQueued:     d.Limits.MaxQueued,
			QueueTimeout:  d.Limits.QueueTimeout,
			MaxQueryBytes: d.Limits.MaxQueryBytes,
			MaxBodyBytes:  d.Limits.MaxBodyBytes,
			MaxRows:       d.Limits.MaxRows,
			MaxUnions:     int64(rewrite.DefaultLimits().MaxUnions),
			MaxTables:     int64(rewrite.DefaultLimits().MaxTables),
		},
		Log:          logConf{Level: "info", Format: "json", SlowQuery: d.SlowQuery},
		Service:      serviceConf{Timeout: exec.DefaultServiceTimeout, MaxBytes: exec.DefaultServiceMaxBytes},
		DrainTimeout: d.DrainTimeout,
	}
}

// source returns the one source, adding it if there is none yet.
func (c *config) source() *sourceConf {
	if len(c.Sources) == 0 {
		c.Sources = append(c.Sources, sourceConf{})
	}
	return &c.Sources[0]
}

// option is one setting as a flag and an environment variable. set takes
// every value given (a list option takes them all, a scalar the last); a list
// given as a variable is split at commas.
type option struct {
	flag, env, usage string
	list             bool
	// source marks the options of the database and its mappings, which the
	// demo does not take.
	source bool
	set    func(c *config, vals []string) error
}

// options lists the settings that have a flag and a variable.
var options = []option{
	{flag: "listen", env: "VENEER_LISTEN", usage: "address to serve HTTP on (YAML listen)",
		set: str(func(c *config) *string { return &c.Listen })},
	{flag: "db", env: "VENEER_DB", source: true, usage: "database DSN: postgres://…, mysql://… or sqlite:PATH (YAML sources[0].db)",
		set: str(func(c *config) *string { return &c.source().DB })},
	{flag: "mapping", env: "VENEER_MAPPINGS", source: true, list: true,
		usage: "R2RML mapping file, repeatable; none serves the Direct Mapping (YAML sources[0].mappings)",
		set:   func(c *config, v []string) error { c.source().Mappings = v; return nil }},
	{flag: "replica", env: "VENEER_REPLICAS", source: true, list: true,
		usage: "read replica DSN of the database, repeatable, named replica-1, replica-2, … (YAML sources[0].replicas)",
		set: func(c *config, v []string) error {
			c.source().Replicas = nil
			for _, dsn := range v {
				c.source().Replicas = append(c.source().Replicas, replicaConf{DB: dsn})
			}
			return nil
		}},
	{flag: "member-retry-first", env: "VENEER_MEMBER_RETRY_FIRST", source: true,
		usage: "first wait before a failed database of a replicated source is tried again (YAML sources[0].member_retry.first)",
		set:   dur(func(c *config) *time.Duration { return &c.source().MemberRetry.First })},
	{flag: "member-retry-max", env: "VENEER_MEMBER_RETRY_MAX", source: true,
		usage: "longest wait between tries of a failed database of a replicated source (YAML sources[0].member_retry.max)",
		set:   dur(func(c *config) *time.Duration { return &c.source().MemberRetry.Max })},
	{flag: "max-conns", env: "VENEER_MAX_CONNS", source: true, usage: "most connections to the database (YAML sources[0].max_conns)",
		set: integer(func(c *config) *int { return &c.source().MaxConns })},
	{flag: "base", env: "VENEER_BASE", source: true, usage: "base IRI of the Direct Mapping (YAML base)",
		set: str(func(c *config) *string { return &c.Base })},
	{flag: "query-timeout", env: "VENEER_QUERY_TIMEOUT", usage: "time limit of a query, e.g. 30s (YAML limits.query_timeout)",
		set: dur(func(c *config) *time.Duration { return &c.Limits.QueryTimeout })},
	{flag: "max-concurrent", env: "VENEER_MAX_CONCURRENT", usage: "queries that run at once, 0 for no limit (YAML limits.max_concurrent)",
		set: integer(func(c *config) *int { return &c.Limits.MaxConcurrent })},
	{flag: "max-queued", env: "VENEER_MAX_QUEUED", usage: "queries that may wait for a slot (YAML limits.max_queued)",
		set: integer(func(c *config) *int { return &c.Limits.MaxQueued })},
	{flag: "queue-timeout", env: "VENEER_QUEUE_TIMEOUT", usage: "longest wait for a query slot (YAML limits.queue_timeout)",
		set: dur(func(c *config) *time.Duration { return &c.Limits.QueueTimeout })},
	{flag: "max-query-bytes", env: "VENEER_MAX_QUERY_BYTES", usage: "longest query text (YAML limits.max_query_bytes)",
		set: int64s(func(c *config) *int64 { return &c.Limits.MaxQueryBytes })},
	{flag: "max-body-bytes", env: "VENEER_MAX_BODY_BYTES", usage: "largest request body (YAML limits.max_body_bytes)",
		set: int64s(func(c *config) *int64 { return &c.Limits.MaxBodyBytes })},
	{flag: "max-rows", env: "VENEER_MAX_ROWS", usage: "most solutions or triples in one answer, 0 for no limit (YAML limits.max_rows)",
		set: int64s(func(c *config) *int64 { return &c.Limits.MaxRows })},
	{flag: "max-unions", env: "VENEER_MAX_UNIONS", usage: "most union branches one query's SQL may unfold into (YAML limits.max_unions)",
		set: int64s(func(c *config) *int64 { return &c.Limits.MaxUnions })},
	{flag: "max-tables", env: "VENEER_MAX_TABLES", usage: "most tables one SELECT of a query's SQL may join (YAML limits.max_tables)",
		set: int64s(func(c *config) *int64 { return &c.Limits.MaxTables })},
	{flag: "token-file", env: "VENEER_TOKEN_FILE", usage: "file of bearer tokens, one a line; tokens may also come from " + tokensEnv + " (YAML auth.token_file)",
		set: str(func(c *config) *string { return &c.Auth.TokenFile })},
	{flag: "cors-origin", env: "VENEER_CORS_ORIGINS", list: true, usage: "origin whose pages may read answers, repeatable, * for any (YAML cors.origins)",
		set: func(c *config, v []string) error { c.CORS.Origins = v; return nil }},
	{flag: "tls-cert", env: "VENEER_TLS_CERT", usage: "TLS certificate, PEM (YAML tls.cert)",
		set: str(func(c *config) *string { return &c.TLS.Cert })},
	{flag: "tls-key", env: "VENEER_TLS_KEY", usage: "TLS private key, PEM (YAML tls.key)",
		set: str(func(c *config) *string { return &c.TLS.Key })},
	{flag: "trust-forwarded", env: "VENEER_TRUST_FORWARDED", usage: "take the public URL from X-Forwarded-* headers (YAML trust_forwarded)",
		set: boolean(func(c *config) *bool { return &c.TrustForwarded })},
	{flag: "drain-timeout", env: "VENEER_DRAIN_TIMEOUT", usage: "time running queries get to finish at shutdown (YAML drain_timeout)",
		set: dur(func(c *config) *time.Duration { return &c.DrainTimeout })},
	{flag: "service-allow", env: "VENEER_SERVICE_ALLOW", list: true,
		usage: "endpoint IRI that SERVICE in queries may call, repeatable; none turns SERVICE off (YAML service.allow)",
		set:   func(c *config, v []string) error { c.Service.Allow = v; return nil }},
	{flag: "service-timeout", env: "VENEER_SERVICE_TIMEOUT", usage: "time limit of one SERVICE call (YAML service.timeout)",
		set: dur(func(c *config) *time.Duration { return &c.Service.Timeout })},
	{flag: "service-max-bytes", env: "VENEER_SERVICE_MAX_BYTES", usage: "largest SERVICE answer read, in bytes (YAML service.max_bytes)",
		set: int64s(func(c *config) *int64 { return &c.Service.MaxBytes })},
	{flag: "log-level", env: "VENEER_LOG_LEVEL", usage: "debug, info, warn or error (YAML log.level)",
		set: str(func(c *config) *string { return &c.Log.Level })},
	{flag: "log-format", env: "VENEER_LOG_FORMAT", usage: "json or text (YAML log.format)",
		set: str(func(c *config) *string { return &c.Log.Format })},
	{flag: "slow-query", env: "VENEER_SLOW_QUERY", usage: "log queries that take this long with their SQL, 0 for none (YAML log.slow_query)",
		set: dur(func(c *config) *time.Duration { return &c.Log.SlowQuery })},
}

func str(field func(*config) *string) func(*config, []string) error {
	return func(c *config, v []string) error { *field(c) = v[len(v)-1]; return nil }
}

func dur(field func(*config) *time.Duration) func(*config, []string) error {
	return func(c *config, v []string) error {
		d, err := time.ParseDuration(v[len(v)-1])
		if err != nil {
			return fmt.Errorf("%q is not a duration such as 30s or 500ms", v[len(v)-1])
		}
		*field(c) = d
		return nil
	}
}

func integer(field func(*config) *int) func(*config, []string) error {
	return func(c *config, v []string) error {
		n, err := strconv.Atoi(v[len(v)-1])
		if err != nil {
			return fmt.Errorf("%q is not a whole number", v[len(v)-1])
		}
		*field(c) = n
		return nil
	}
}

func int64s(field func(*config) *int64) func(*config, []string) error {
	return func(c *config, v []string) error {
		n, err := strconv.ParseInt(v[len(v)-1], 10, 64)
		if err != nil {
			return fmt.Errorf("%q is not a whole number", v[len(v)-1])
		}
		*field(c) = n
		return nil
	}
}

func boolean(field func(*config) *bool) func(*config, []string) error {
	return func(c *config, v []string) error {
		b, err := strconv.ParseBool(v[len(v)-1])
		if err != nil {
			return fmt.Errorf("%q is not true or false", v[len(v)-1])
		}
		*field(c) = b
		return nil
	}
}

// flagValues collects the values a flag is given, for the last layer.
type flagValues struct {
	vals    []string
	boolean bool
}

func (f *flagValues) String() string     { return strings.Join(f.vals, ",") }
func (f *flagValues) Set(v string) error { f.vals = append(f.vals, v); return nil }
func (f *flagValues) IsBoolFlag() bool   { return f.boolean }

// commandConfig reads the configuration of the subcommand name from its
// arguments, the environment and the configuration file (loadConfig), and
// returns it with the arguments left over.
func commandConfig(name string, args []string, withSource bool, stderr io.Writer) (*config, []string, error) {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	return loadConfig(name, args, os.Getenv, withSource, fs)
}

// errNoDatabase is the error of a subcommand that needs a database and has none.
func errNoDatabase(name string) error {
	return fmt.Errorf("%s: a database is required: --db, VENEER_DB or sources[0].db in the configuration", name)
}

// loadConfig builds the configuration of a serve or demo command from args
// and the environment (getenv). withSource says whether the command takes the
// database options. It returns the remaining arguments.
func loadConfig(name string, args []string, getenv func(string) string, withSource bool, fs *flag.FlagSet) (*config, []string, error) {
	configPath := fs.String("config", "", "YAML configuration file (or VENEER_CONFIG)")
	given := map[string]*flagValues{}
	for _, o := range options {
		if o.source && !withSource {
			continue
		}
		v := &flagValues{boolean: o.flag == "trust-forwarded"}
		given[o.flag] = v
		fs.Var(v, o.flag, o.usage+"; env "+o.env)
	}
	if err := fs.Parse(args); err != nil {
		return nil, nil, err
	}
	c := defaultConfig()
	path := *configPath
	if path == "" {
		path = getenv("VENEER_CONFIG")
	}
	if path != "" {
		if err := c.readFile(path); err != nil {
			return nil, nil, err
		}
	}
	for _, o := range options {
		if o.source && !withSource {
			continue
		}
		if v := getenv(o.env); v != "" {
			vals := []string{v}
			if o.list {
				vals = splitList(v)
			}
			if err := o.set(&c, vals); err != nil {
				return nil, nil, fmt.Errorf("%s: %s=%s", name, o.env, err)
			}
		}
		if f := given[o.flag]; len(f.vals) > 0 {
			if err := o.set(&c, f.vals); err != nil {
				return nil, nil, fmt.Errorf("%s: --%s: %w", name, o.flag, err)
			}
		}
	}
	if err := c.check(); err != nil {
		return nil, nil, fmt.Errorf("%s: %w", name, err)
	}
	return &c, fs.Args(), nil
}

// splitList splits a list variable at commas, dropping empty items.
func splitList(s string) []string {
	var out []string
	for _, v := range strings.Split(s, ",") {
		if v = strings.TrimSpace(v); v != "" {
			out = append(out, v)
		}
	}
	return out
}

// readFile reads the YAML configuration file over c. Unknown keys are errors,
// so that a misspelt setting does not pass unnoticed; errors give the line.
func (c *config) readFile(path string) error {
	src, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("reading the configuration: %w", err)
	}
	dec := yaml.NewDecoder(bytes.NewReader(src))
	dec.KnownFields(true)
	if err := dec.Decode(c); err != nil && !errors.Is(err, io.EOF) { // io.EOF: an empty file
		return fmt.Errorf("%s: %s", path, strings.TrimPrefix(err.Error(), "yaml: "))
	}
	return nil
}

// check rejects settings that cannot work together.
func (c *config) check() error {
	switch {
	case len(c.Sources) > 1:
		return fmt.Errorf("the configuration names %d sources; one source is served for now", len(c.Sources))
	case (c.TLS.Cert == "") != (c.TLS.Key == ""):
		return errors.New("TLS needs both a certificate and a key")
	case c.Limits.MaxUnions < 1 || c.Limits.MaxTables < 1:
		return fmt.Errorf("limits: max_unions and max_tables must be at least 1")
	case c.Limits.MaxConcurrent < 0 || c.Limits.MaxQueued < 0 || c.Limits.MaxRows < 0:
		return errors.New("limits cannot be negative")
	case c.Service.Timeout < 0 || c.Service.MaxBytes < 0:
		return errors.New("service: timeout and max_bytes cannot be negative")
	}
	for _, sc := range c.Sources {
		if err := sc.checkMembers(); err != nil {
			return err
		}
	}
	for _, iri := range c.Service.Allow {
		if u, err := url.Parse(iri); err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
			return fmt.Errorf("service.allow: %q is not an http or https IRI", iri)
		}
	}
	if _, err := c.level(); err != nil {
		return err
	}
	if c.Log.Format != "json" && c.Log.Format != "text" {
		return fmt.Errorf("log format %q: use json or text", c.Log.Format)
	}
	return nil
}

// checkMembers rejects replicas without a database, two members of one
// name, and negative waits.
func (sc *sourceConf) checkMembers() error {
	if len(sc.Replicas) > 0 && sc.DB == "" {
		return errors.New("sources[0]: replicas need the primary's db")
	}
	seen := map[string]bool{}
	for i, m := range sc.members() {
		if i > 0 && m.DSN == "" {
			return fmt.Errorf("sources[0].replicas[%d] (%s): no db", i-1, m.Name)
		}
		if seen[m.Name] {
			return fmt.Errorf("sources[0].replicas: two members are named %q", m.Name)
		}
		seen[m.Name] = true
	}
	if sc.MemberRetry.First < 0 || sc.MemberRetry.Max < 0 {
		return errors.New("sources[0].member_retry: waits cannot be negative")
	}
	return nil
}

func (c *config) level() (slog.Level, error) {
	var l slog.Level
	if err := l.UnmarshalText([]byte(c.Log.Level)); err != nil {
		return l, fmt.Errorf("log level %q: use debug, info, warn or error", c.Log.Level)
	}
	return l, nil
}

// tokens reads the bearer tokens from the token file and VENEER_TOKENS.
func (c *config) tokens(getenv func(string) string) (*server.Tokens, error) {
	toks, err := server.ReadTokens(tokensEnv, strings.NewReader(strings.ReplaceAll(getenv(tokensEnv), ",", "\n")))
	if err != nil {
		return nil, err
	}
	if c.Auth.TokenFile != "" {
		f, err := os.Open(c.Auth.TokenFile)
		if err != nil {
			return nil, fmt.Errorf("reading the token file: %w", err)
		}
		defer f.Close()
		more, err := server.ReadTokens(c.Auth.TokenFile, f)
		if err != nil {
			return nil, err
		}
		toks = append(toks, more...)
	}
	return server.NewTokens(toks...), nil
}

// execOptions are the evaluator's options the configuration sets.
func (c *config) execOptions() exec.Options {
	return exec.Options{ServiceAllow: c.Service.Allow, ServiceTimeout: c.Service.Timeout, ServiceMaxBytes: c.Service.MaxBytes}
}

// plannerLimits are the planner's limits the configuration sets.
func (c *config) plannerLimits() rewrite.Limits {
	return rewrite.Limits{MaxUnions: int(c.Limits.MaxUnions), MaxTables: int(c.Limits.MaxTables)}
}
