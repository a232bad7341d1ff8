package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"veneer/cmd/veneer/demo"
)

// asVeneer, in the environment of this test binary, makes it run as the
// veneer command with these arguments (a JSON array) instead of the tests:
// the replica test starts real processes it can stop with signals.
const asVeneer = "VENEER_TEST_RUN_AS_VENEER"

func TestMain(m *testing.M) {
	if env, ok := os.LookupEnv(asVeneer); ok {
		var args []string
		if err := json.Unmarshal([]byte(env), &args); err != nil {
			fmt.Fprintln(os.Stderr, asVeneer+":", err)
			os.Exit(exitUsage)
		}
		os.Exit(command(args))
	}
	os.Exit(m.Run())
}

// replica is one veneer process.
type replica struct {
	addr   string
	cmd    *exec.Cmd
	stderr *bytes.Buffer
	exited chan error
}

// startReplica starts veneer serve on a free loopback port and waits until
// it is ready.
func startReplica(t *testing.T, args ...string) *replica {
	t.Helper()
	r := &replica{addr: freeAddr(t), stderr: &bytes.Buffer{}, exited: make(chan error, 1)}
	args = append([]string{"serve", "--listen", r.addr, "--log-level", "warn"}, args...)
	r.cmd = exec.Command(os.Args[0])
	encoded, _ := json.Marshal(args)
	r.cmd.Env = append(os.Environ(), asVeneer+"="+string(encoded))
	r.cmd.Stderr = r.stderr
	if err := r.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { r.exited <- r.cmd.Wait() }()
	t.Cleanup(func() {
		r.cmd.Process.Kill()
		<-r.exited
		if t.Failed() {
			t.Logf("replica %s said:\n%s", r.addr, r.stderr)
		}
	})
	for deadline := time.Now().Add(60 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		resp, err := http.Get("http://" + r.addr + "/readyz")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return r
			}
		}
		select {
		case err := <-r.exited:
			t.Fatalf("replica exited before it was ready (%v):\n%s", err, r.stderr)
		default:
		}
		if time.Now().After(deadline) {
			t.Fatalf("replica %s not ready after 60s:\n%s", r.addr, r.stderr)
		}
	}
}

// metric returns the value of one sample of the replica's metrics, "0" when
// it has none.
func (r *replica) metric(t *testing.T, sample string) string {
	t.Helper()
	resp, err := http.Get("http://" + r.addr + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	for _, l := range strings.Split(string(b), "\n") {
		if v, ok := strings.CutPrefix(l, sample+" "); ok {
			return v
		}
	}
	return "0"
}

// startNginx runs nginx in the foreground as a load balancer over the
// replicas on a free loopback port, retrying idempotent requests on the next
// replica when one cannot be reached or fails before it answers.
func startNginx(t *testing.T, replicas []*replica) string {
	t.Helper()
	bin, err := exec.LookPath("nginx")
	if err != nil {
		for _, p := range []string{"/usr/sbin/nginx", "/usr/local/sbin/nginx"} {
			if _, serr := os.Stat(p); serr == nil {
				bin, err = p, nil
			}
		}
	}
	if err != nil {
		t.Skip("no tool: nginx (Debian package nginx) runs the replica test")
	}
	dir := t.TempDir()
	addr := freeAddr(t)
	var servers strings.Builder
	for _, r := range replicas {
		fmt.Fprintf(&servers, "    server %s max_fails=1 fail_timeout=2s;\n", r.addr)
	}
	user := ""
	if os.Geteuid() == 0 {
		user = "user root;" // the workers read the temporary directory the test owns
	}
	conf := fmt.Sprintf(`%s
worker_processes 1;
pid %[2]s/nginx.pid;
error_log %[2]s/error.log warn;
events { worker_connections 512; }
http {
  access_log off;
  client_body_temp_path %[2]s/body;
  proxy_temp_path %[2]s/proxy;
  fastcgi_temp_path %[2]s/fastcgi;
  uwsgi_temp_path %[2]s/uwsgi;
  scgi_temp_path %[2]s/scgi;
  upstream veneer {
%[3]s    keepalive 32;
  }
  server {
    listen %[4]s;
    location / {
      proxy_pass http://veneer;
      proxy_http_version 1.1;
      proxy_set_header Connection "";
      proxy_next_upstream error timeout http_502 http_503;
      proxy_next_upstream_tries 3;
      proxy_connect_timeout 1s;
      proxy_read_timeout 30s;
    }
  }
}
`, user, dir, servers.String(), addr)
	confPath := filepath.Join(dir, "nginx.conf")
	if err := os.WriteFile(confPath, []byte(conf), 0o600); err != nil {
		t.Fatal(err)
	}
	var stderr bytes.Buffer
	cmd := exec.Command(bin, "-p", dir, "-c", confPath, "-g", "daemon off;")
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	done := make(chan struct{})
	go func() { cmd.Wait(); close(done) }()
	t.Cleanup(func() {
		cmd.Process.Signal(syscall.SIGQUIT)
		select {
		case <-done:
		case <-time.After(10 * time.Second):
			cmd.Process.Kill()
			<-done
		}
		if t.Failed() {
			log, _ := os.ReadFile(filepath.Join(dir, "error.log"))
			t.Logf("nginx said:\n%s%s", stderr.String(), log)
		}
	})
	for deadline := time.Now().Add(30 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		resp, err := http.Get("http://" + addr + "/healthz")
		if err == nil {
			resp.Body.Close()
			return "http://" + addr
		}
		select {
		case <-done:
			t.Fatalf("nginx exited: %s", stderr.String())
		default:
		}
		if time.Now().After(deadline) {
			t.Fatalf("nginx does not answer on %s: %s", addr, stderr.String())
		}
	}
}

// loadResult counts what the clients of one load phase saw.
type loadResult struct {
	ok     int64
	failed int64
	errs   []string
}

// loadThrough sends the query from clients goroutines through base until stop is
// closed or max requests have gone out, and counts the answers that are not a
// complete 200 JSON result.
func loadThrough(base, query string, clients int, max int64, stop <-chan struct{}) *loadResult {
	client := &http.Client{Timeout: 30 * time.Second, Transport: &http.Transport{MaxIdleConnsPerHost: clients}}
	u := base + "/sparql?query=" + url.QueryEscape(query)
	var res loadResult
	var sent atomic.Int64
	var mu sync.Mutex
	var wg sync.WaitGroup
	for range clients {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for sent.Add(1) <= max {
				select {
				case <-stop:
					return
				default:
				}
				err := fetchComplete(client, u)
				if err == nil {
					atomic.AddInt64(&res.ok, 1)
					continue
				}
				atomic.AddInt64(&res.failed, 1)
				mu.Lock()
				if len(res.errs) < 5 {
					res.errs = append(res.errs, err.Error())
				}
				mu.Unlock()
			}
		}()
	}
	wg.Wait()
	return &res
}

// fetchComplete GETs a SPARQL JSON result and fails unless it is a 200 whose
// body parses as a complete document.
func fetchComplete(c *http.Client, u string) error {
	req, _ := http.NewRequest("GET", u, nil)
	req.Header.Set("Accept", "application/sparql-results+json")
	resp, err := c.Do(req)
	if err != nil {
		return err
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		return err
	}
	if resp.StatusCode != http.StatusOK {
		return fmt.Errorf("status %d: %.200s", resp.StatusCode, body)
	}
	var doc struct {
		Results *struct {
			Bindings []json.RawMessage `json:"bindings"`
		} `json:"results"`
	}
	if err := json.Unmarshal(body, &doc); err != nil || doc.Results == nil {
		return fmt.Errorf("an incomplete result document (%v): %.200s", err, body)
	}
	return nil
}

// TestReplicasBehindNginx runs three veneer processes over one demo database
// behind nginx (loopback only) and, under a bounded load: reloads each with a
// broken mapping (SIGHUP: the old catalog must keep answering on every
// replica), stops one with SIGTERM (it drains: no client may see an error)
// and kills another with SIGKILL (only requests in flight may fail; nginx
// retries the idempotent GETs it can).
func TestReplicasBehindNginx(t *testing.T) {
	if testing.Short() {
		t.Skip("starts processes and nginx")
	}
	dir := t.TempDir()
	dbPath, mapping := filepath.Join(dir, "windfarm.db"), filepath.Join(dir, "mapping.ttl")
	if err := demo.BuildSQLite(context.Background(), dbPath); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(mapping, []byte(demo.Mapping()), 0o600); err != nil {
		t.Fatal(err)
	}
	var replicas []*replica
	for range 3 {
		replicas = append(replicas, startReplica(t, "--db", "sqlite:"+dbPath, "--mapping", mapping, "--drain-timeout", "10s"))
	}
	base := startNginx(t, replicas)
	query := prefixes + `SELECT ?serial ?kw WHERE { ?t wf:serialNumber ?serial ; wf:ratedPowerKW ?kw } ORDER BY ?serial LIMIT 20`
	const clients = 8

	phase := func(name string, d time.Duration, during func()) *loadResult {
		stop := make(chan struct{})
		resc := make(chan *loadResult, 1)
		go func() { resc <- loadThrough(base, query, clients, 200_000, stop) }()
		if during != nil {
			time.Sleep(d / 3)
			during()
			time.Sleep(d / 3)
		} else {
			time.Sleep(d)
		}
		close(stop)
		res := <-resc
		t.Logf("%s: %d complete answers, %d failed %v", name, res.ok, res.failed, res.errs)
		if res.ok == 0 {
			t.Fatalf("%s: no request succeeded", name)
		}
		return res
	}

	if res := phase("all three replicas", 2*time.Second, nil); res.failed > 0 {
		t.Errorf("with all replicas up, %d requests failed", res.failed)
	}

	// A mapping that cannot be loaded: every replica keeps its catalog.
	if err := os.WriteFile(mapping, []byte("@prefix rr: <http://www.w3.org/ns/r2rml#> .\n<#broken> rr:logicalTable [ rr:tableName \"no_such_table\" ] ;"), 0o600); err != nil {
		t.Fatal(err)
	}
	res := phase("SIGHUP with a broken mapping", 3*time.Second, func() {
		for _, r := range replicas {
			if err := r.cmd.Process.Signal(syscall.SIGHUP); err != nil {
				t.Fatal(err)
			}
		}
		for _, r := range replicas {
			for deadline := time.Now().Add(20 * time.Second); r.metric(t, `veneer_catalog_reloads_total{result="failed"}`) != "1"; time.Sleep(20 * time.Millisecond) {
				if time.Now().After(deadline) {
					t.Fatalf("replica %s counted no failed reload after SIGHUP", r.addr)
				}
			}
		}
	})
	if res.failed > 0 {
		t.Errorf("during the failed reloads, %d requests failed", res.failed)
	}
	for _, r := range replicas {
		if err := fetchComplete(http.DefaultClient, "http://"+r.addr+"/sparql?query="+url.QueryEscape(query)); err != nil {
			t.Errorf("replica %s after the failed reload: %v", r.addr, err)
		}
	}

	res = phase("SIGTERM to one replica", 3*time.Second, func() {
		if err := replicas[0].cmd.Process.Signal(syscall.SIGTERM); err != nil {
			t.Fatal(err)
		}
		select {
		case err := <-replicas[0].exited:
			replicas[0].exited <- err // for the cleanup
			if err != nil {
				t.Errorf("the replica stopped by SIGTERM exited with %v", err)
			}
		case <-time.After(20 * time.Second):
			t.Error("the replica stopped by SIGTERM did not exit within 20s")
		}
	})
	if res.failed > 0 {
		t.Errorf("a graceful stop of one replica cost %d failed requests, want none", res.failed)
	}

	res = phase("SIGKILL to another replica", 3*time.Second, func() {
		if err := replicas[1].cmd.Process.Kill(); err != nil {
			t.Fatal(err)
		}
	})
	// A client request is lost only if it was in flight on the killed process
	// and nginx could not send it again: at most one per client.
	if res.failed > clients {
		t.Errorf("killing one replica cost %d failed requests, more than the %d that can be in flight", res.failed, clients)
	}

	if res := phase("the last replica", 2*time.Second, nil); res.failed > 0 {
		t.Errorf("with one replica left, %d requests failed", res.failed)
	}
}
