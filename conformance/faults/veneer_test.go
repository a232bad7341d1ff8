package faults

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"veneer/cmd/veneer/demo"
)

// veneerBin is the veneer binary TestMain builds.
var veneerBin string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "veneer-faults-bin-")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	veneerBin = filepath.Join(dir, "veneer")
	gobin := filepath.Join(runtime.GOROOT(), "bin", "go")
	build := exec.Command(gobin, "build", "-o", veneerBin, "veneer/cmd/veneer")
	build.Stderr = os.Stderr
	if err := build.Run(); err != nil {
		fmt.Fprintln(os.Stderr, "building veneer:", err)
		os.RemoveAll(dir)
		os.Exit(1)
	}
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// Settings every veneer process of these tests runs with: a short query
// timeout, so that a lock wait ends in seconds, and a small pool, so that
// its connections are easy to count.
const (
	queryTimeout = 2 * time.Second
	maxConns     = 4
)

// long says whether to run the longer variants (VENEER_FAULTS_LONG=1).
func long() bool { return os.Getenv("VENEER_FAULTS_LONG") == "1" }

// outage is how long a database stays down or slow.
func outage() time.Duration {
	if long() {
		return 10 * time.Second
	}
	return 2 * time.Second
}

// veneer is a running veneer serve process.
type veneer struct {
	t        *testing.T
	URL      string // the endpoint, …/sparql
	base     string // http://host:port
	cmd      *exec.Cmd
	exited   chan error
	mu       sync.Mutex
	log      bytes.Buffer
	client   *http.Client
	stopOnce sync.Once
}

// startVeneer runs veneer serve over the demo mapping with the DSN in
// VENEER_DB (DSNs go through the environment, which other users of the
// machine cannot list) and the extra flags, and waits until it serves.
func startVeneer(t *testing.T, dsn string, flags ...string) *veneer {
	return startVeneerEnv(t, []string{"VENEER_DB=" + dsn}, flags...)
}

// startVeneerEnv is startVeneer with the given environment variables.
func startVeneerEnv(t *testing.T, env []string, flags ...string) *veneer {
	t.Helper()
	mapping := filepath.Join(t.TempDir(), "windfarm.ttl")
	if err := os.WriteFile(mapping, []byte(demo.Mapping()), 0o644); err != nil {
		t.Fatal(err)
	}
	args := append([]string{"serve", "--mapping", mapping, "--listen", "127.0.0.1:0", "--log-format", "json",
		"--query-timeout", queryTimeout.String(), "--max-conns", strconv.Itoa(maxConns), "--max-rows", "0",
		"--slow-query", "0"}, flags...)
	v := &veneer{t: t, exited: make(chan error, 1), client: &http.Client{Timeout: queryTimeout + 8*time.Second}}
	v.cmd = exec.Command(veneerBin, args...)
	v.cmd.Env = append(os.Environ(), env...)
	v.cmd.SysProcAttr = &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL}
	stderr, err := v.cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := v.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	serving := make(chan string, 1)
	go func() {
		sc := bufio.NewScanner(stderr)
		sc.Buffer(nil, 1<<20)
		for sc.Scan() {
			line := sc.Text()
			v.mu.Lock()
			v.log.WriteString(line + "\n")
			v.mu.Unlock()
			var rec struct{ Msg, URL string }
			if json.Unmarshal([]byte(line), &rec) == nil && rec.Msg == "serving" {
				serving <- rec.URL
			}
		}
		v.exited <- v.cmd.Wait()
	}()
	t.Cleanup(v.Stop)
	select {
	case u := <-serving:
		v.URL = u
		v.base = strings.TrimSuffix(u, "/sparql")
	case err := <-v.exited:
		t.Fatalf("veneer exited before serving: %v\n%s", err, v.Logs())
	case <-time.After(60 * time.Second):
		t.Fatalf("veneer does not serve after 60s\n%s", v.Logs())
	}
	return v
}

// Stop ends the process with SIGTERM and checks that it exits cleanly.
func (v *veneer) Stop() {
	v.stopOnce.Do(func() {
		v.cmd.Process.Signal(syscall.SIGTERM)
		select {
		case err := <-v.exited:
			if err != nil {
				v.t.Errorf("veneer exited with %v\n%s", err, v.Logs())
			}
		case <-time.After(30 * time.Second):
			v.cmd.Process.Kill()
			v.t.Errorf("veneer did not stop within 30s of SIGTERM")
		}
		v.client.CloseIdleConnections()
	})
}

// Logs returns what the process has written to stderr.
func (v *veneer) Logs() string {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.log.String()
}

// problems returns the lines of the log at level WARN or ERROR, for a
// failure's message.
func (v *veneer) problems() string {
	var out []string
	for line := range strings.Lines(v.Logs()) {
		if strings.Contains(line, `"level":"ERROR"`) || strings.Contains(line, `"level":"WARN"`) {
			out = append(out, line)
		}
	}
	if len(out) > 10 {
		out = out[:10]
	}
	return strings.Join(out, "")
}

// reply is one HTTP exchange as the client saw it.
type reply struct {
	start, end time.Time
	status     int
	ctype      string
	body       []byte
	err        error // from sending the request or reading the body
}

func (r reply) String() string {
	b := string(r.body)
	if len(b) > 120 {
		b = b[:120] + "…"
	}
	return fmt.Sprintf("%d %q after %v, err %v: %q", r.status, r.ctype, r.end.Sub(r.start).Round(time.Millisecond), r.err, b)
}

// get sends a GET to the path (which includes its query string).
func (v *veneer) get(path string, header ...string) reply {
	r := reply{start: time.Now()}
	req, err := http.NewRequest("GET", v.base+path, nil)
	if err != nil {
		v.t.Fatal(err)
	}
	for i := 0; i+1 < len(header); i += 2 {
		req.Header.Set(header[i], header[i+1])
	}
	resp, err := v.client.Do(req)
	if err != nil {
		r.err, r.end = err, time.Now()
		return r
	}
	defer resp.Body.Close()
	r.status, r.ctype = resp.StatusCode, resp.Header.Get("Content-Type")
	r.body, r.err = io.ReadAll(resp.Body)
	r.end = time.Now()
	return r
}

// query asks a SPARQL query for JSON results.
func (v *veneer) query(q string) reply {
	return v.get("/sparql?query="+url.QueryEscape(q), "Accept", "application/sparql-results+json")
}

// ready reports the status of /readyz.
func (v *veneer) ready() int { return v.get("/readyz").status }

// metrics returns the value of every series of the /metrics page, keyed by
// the series as written there (name{labels}).
func (v *veneer) metrics() map[string]float64 {
	r := v.get("/metrics")
	if r.status != 200 {
		v.t.Fatalf("/metrics: %v", r)
	}
	out := map[string]float64{}
	for line := range strings.Lines(string(r.body)) {
		if strings.HasPrefix(line, "#") {
			continue
		}
		i := strings.LastIndexByte(line, ' ')
		if i < 0 {
			continue
		}
		if f, err := strconv.ParseFloat(strings.TrimSpace(line[i+1:]), 64); err == nil {
			out[line[:i]] = f
		}
	}
	return out
}

// waitFor polls cond every 50 ms until it holds or the deadline passes, and
// returns how long it took and whether it held.
func waitFor(within time.Duration, cond func() bool) (time.Duration, bool) {
	start := time.Now()
	for {
		if cond() {
			return time.Since(start), true
		}
		if time.Since(start) > within {
			return time.Since(start), false
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// The load's query: the turbines of one site (the demo's first example).
const siteQuery = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT ?turbine ?serial ?kw WHERE {
  ?turbine wf:locatedAt <https://data.veneer.example/windfarm/site/RKF> ;
           wf:serialNumber ?serial ;
           wf:ratedPowerKW ?kw .
}`

// bindings counts the solutions of a complete JSON result, or fails.
func bindings(body []byte) (int, error) {
	var doc struct {
		Head    struct{ Vars []string }
		Results *struct {
			Bindings []map[string]any
		}
	}
	dec := json.NewDecoder(bytes.NewReader(body))
	if err := dec.Decode(&doc); err != nil {
		return 0, err
	}
	if dec.More() || doc.Results == nil {
		return 0, fmt.Errorf("not one SPARQL JSON result document")
	}
	return len(doc.Results.Bindings), nil
}

// load is a steady, bounded query load: workers that each send the query,
// pause, and send it again, until Stop or until the bound on time or count.
type load struct {
	stop    chan struct{}
	wg      sync.WaitGroup
	mu      sync.Mutex
	replies []reply
}

// Bounds of one load, whatever the test does.
const (
	loadWorkers  = 4
	loadPause    = 20 * time.Millisecond
	loadMaxTime  = 2 * time.Minute
	loadMaxCount = 20000
)

func startLoad(v *veneer, q string) *load {
	l := &load{stop: make(chan struct{})}
	deadline := time.Now().Add(loadMaxTime)
	for range loadWorkers {
		l.wg.Go(func() {
			for time.Now().Before(deadline) {
				select {
				case <-l.stop:
					return
				default:
				}
				r := v.query(q)
				l.mu.Lock()
				l.replies = append(l.replies, r)
				n := len(l.replies)
				l.mu.Unlock()
				if n >= loadMaxCount {
					return
				}
				time.Sleep(loadPause)
			}
		})
	}
	return l
}

// Stop ends the load and returns its replies.
func (l *load) Stop() []reply {
	close(l.stop)
	l.wg.Wait()
	return l.replies
}

// outcome sorts the replies of a load: complete answers with the expected
// number of solutions, clean refusals (503 with a text message), and
// anything else, which is a fault.
type outcome struct {
	ok, refused []reply
	bad         []reply
}

// sorted sorts the replies of a load, logs their counts with what (" while
// locked", or ""), and fails the test on every fault, with veneer's warnings.
func (v *veneer) sorted(t *testing.T, rs []reply, want int, what string) outcome {
	t.Helper()
	o := sortReplies(rs, want)
	t.Logf("%d replies%s: %d answers, %d clean 503s, %d faults; slowest %v", len(rs), what, len(o.ok), len(o.refused), len(o.bad),
		slowest(rs).Round(time.Millisecond))
	v.reportFaults(t, o)
	return o
}

// reportFaults fails the test on each faulty reply (the first five shown)
// and logs veneer's warnings and errors when there was one.
func (v *veneer) reportFaults(t *testing.T, o outcome) {
	t.Helper()
	for i, r := range o.bad {
		if i < 5 {
			t.Errorf("fault: %v", r)
		}
	}
	if len(o.bad) > 0 {
		t.Logf("veneer's warnings and errors:\n%s", v.problems())
	}
}

func sortReplies(rs []reply, want int) outcome {
	var o outcome
	for _, r := range rs {
		switch {
		case r.err == nil && r.status == 200:
			if n, err := bindings(r.body); err == nil && n == want {
				o.ok = append(o.ok, r)
			} else {
				o.bad = append(o.bad, r)
			}
		case r.err == nil && r.status == 503 && strings.HasPrefix(r.ctype, "text/plain") && len(bytes.TrimSpace(r.body)) > 0:
			o.refused = append(o.refused, r)
		default:
			o.bad = append(o.bad, r)
		}
	}
	return o
}

// slowest is the longest exchange among rs.
func slowest(rs []reply) time.Duration {
	var d time.Duration
	for _, r := range rs {
		d = max(d, r.end.Sub(r.start))
	}
	return d
}

// baseline is what a veneer process holds when idle: its goroutines and its
// open connections, as its /metrics shows them.
type baseline struct {
	goroutines, conns float64
}

func (v *veneer) baseline() baseline {
	m := v.metrics()
	return baseline{goroutines: m["go_goroutines"], conns: m[`veneer_db_connections_open{source="default"}`]}
}

// goroutineSlack is how many goroutines over the baseline count as back to
// it: the HTTP server's connections from the load's client that are still
// open, and timers (a bound of common practice, not of a specification).
const goroutineSlack = 2*loadWorkers + 6

// checkBaseline waits until the process is back within its baseline: as
// many goroutines (give or take goroutineSlack), and no more connections
// than its pools may hold idle. It returns what it saw.
func (v *veneer) checkBaseline(t *testing.T, before baseline, poolMax int) baseline {
	t.Helper()
	v.client.CloseIdleConnections()
	var now baseline
	_, ok := waitFor(15*time.Second, func() bool {
		now = v.baseline()
		return now.goroutines <= before.goroutines+goroutineSlack && now.conns <= float64(poolMax)
	})
	if !ok {
		t.Errorf("not back to the baseline 15s after the load: %+v, before %+v (pool max %d)", now, before, poolMax)
	}
	return now
}

// checkSecrets fails when the password of the DSN shows in the log or the
// metrics.
func (v *veneer) checkSecrets(t *testing.T) {
	t.Helper()
	if strings.Contains(v.Logs(), veneerPassword) {
		t.Error("the DSN's password is in veneer's log")
	}
	page := v.get("/metrics")
	if bytes.Contains(page.body, []byte(veneerPassword)) || bytes.Contains(page.body, []byte("://")) {
		t.Error("the metrics show a DSN or its password")
	}
}

// warm waits until veneer answers the load's query and returns the number
// of solutions it has.
func warm(t *testing.T, v *veneer) int {
	t.Helper()
	var r reply
	if _, ok := waitFor(20*time.Second, func() bool { r = v.query(siteQuery); return r.status == 200 }); !ok {
		t.Fatalf("veneer does not answer: %v\n%s", r, v.Logs())
	}
	n, err := bindings(r.body)
	if err != nil || n == 0 {
		t.Fatalf("the load's query: %d solutions, %v", n, err)
	}
	return n
}
