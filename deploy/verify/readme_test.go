package verify

import (
	"bytes"
	"os"
	"os/exec"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
	"veneer/rewrite"

	"veneer/catalog/source"
	"veneer/server"
)

// limitRow matches a row of the README's limits table: config key, flag,
// default.
var limitRow = regexp.MustCompile("(?m)^\\| `([a-z_.0-9\\[\\]]+)` \\| `--([a-z-]+)` \\| ([^|]+?) \\|")

// TestReadmeLimits checks the README's limits table against the binary: each
// default is the server's (or the source pool's), and each flag is one that
// `veneer serve -h` lists.
func TestReadmeLimits(t *testing.T) {
	data, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	d := server.DefaultConfig()
	l := d.Limits
	dur := func(v time.Duration) string { return v.String() }
	num := func(v int64) string { return strconv.FormatInt(v, 10) }
	defaults := map[string]string{
		"limits.query_timeout":   dur(l.QueryTimeout),
		"limits.max_concurrent":  num(int64(l.MaxConcurrent)),
		"limits.max_queued":      num(int64(l.MaxQueued)),
		"limits.queue_timeout":   dur(l.QueueTimeout),
		"limits.max_query_bytes": num(l.MaxQueryBytes),
		"limits.max_body_bytes":  num(l.MaxBodyBytes),
		"limits.max_rows":        num(l.MaxRows),
		"limits.max_unions":      num(int64(rewrite.DefaultLimits().MaxUnions)),
		"limits.max_tables":      num(int64(rewrite.DefaultLimits().MaxTables)),
		"sources[0].max_conns":   num(source.DefaultMaxConns),
		"drain_timeout":          dur(d.DrainTimeout),
		"log.slow_query":         dur(d.SlowQuery),
	}
	cmd := exec.Command(binary(t), "serve", "-h")
	var help bytes.Buffer
	cmd.Stdout, cmd.Stderr = &help, &help
	cmd.Run() // -h ends with the usage exit code; the text is what counts
	rows := limitRow.FindAllStringSubmatch(string(data), -1)
	if len(rows) != len(defaults) {
		t.Errorf("the README's limits table has %d rows, want %d (one per key below)", len(rows), len(defaults))
	}
	for _, r := range rows {
		key, flag, def := r[1], r[2], strings.Trim(r[3], "` ")
		want, ok := defaults[key]
		if !ok {
			t.Errorf("the README lists %s, which this test does not know the default of", key)
			continue
		}
		if def != want {
			t.Errorf("the README gives %s the default %s; the server's is %s", key, def, want)
		}
		if !strings.Contains(help.String(), "  -"+flag+" ") {
			t.Errorf("the README names --%s for %s; veneer serve -h does not list it:\n%s", flag, key, help.String())
		}
	}
}
