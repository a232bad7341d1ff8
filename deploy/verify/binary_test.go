package verify

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"
	appsv1 "k8s.io/api/apps/v1"
	"sigs.k8s.io/yaml"

	"veneer/cmd/veneer/demo"
	"veneer/deploy"
)

// The kustomizations whose config files the binary must accept.
var kustomizations = []struct {
	dir   string
	query string // a query the example answers with at least one solution
}{
	{"../kubernetes/base", `SELECT ?s ?p ?o WHERE { ?s ?p ?o } LIMIT 3`},
	{"../kubernetes/overlays/example", `PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT ?turbine ?site WHERE { ?i a wf:Inspection ; wf:onTurbine ?turbine . ?turbine wf:locatedAt ?site } LIMIT 3`},
}

// demoDB builds the demo database once for the tests that serve it.
var demoDB struct {
	once sync.Once
	path string
	err  error
}

func demoDatabase(t *testing.T) string {
	t.Helper()
	demoDB.once.Do(func() {
		dir, err := os.MkdirTemp("", "veneer-verify-db-")
		if err != nil {
			demoDB.err = err
			return
		}
		demoDB.path = filepath.Join(dir, "windfarm.db")
		demoDB.err = demo.BuildSQLite(context.Background(), demoDB.path)
	})
	if demoDB.err != nil {
		t.Fatal(demoDB.err)
	}
	return demoDB.path
}

// process is a running veneer binary.
type process struct {
	cmd    *exec.Cmd
	stderr *lockedBuffer
	done   chan error
}

type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// start runs the binary with args and env (and no VENEER_ variables of the
// test's own environment); the test stops it at its end.
func start(t *testing.T, args, env []string) *process {
	t.Helper()
	cmd := exec.Command(binary(t), args...)
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "VENEER_") {
			cmd.Env = append(cmd.Env, kv)
		}
	}
	cmd.Env = append(cmd.Env, env...)
	p := &process{cmd: cmd, stderr: &lockedBuffer{}, done: make(chan error, 1)}
	cmd.Stdout, cmd.Stderr = io.Discard, p.stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { p.done <- cmd.Wait() }()
	t.Cleanup(func() {
		if cmd.ProcessState == nil {
			cmd.Process.Kill()
			<-p.done
		}
	})
	return p
}

// stop sends SIGTERM, as the kubelet does after preStop, and waits for the
// drain to end the process.
func (p *process) stop(t *testing.T) {
	t.Helper()
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	limit := deploy.DrainTimeout + deploy.ShutdownMargin
	select {
	case err := <-p.done:
		if err != nil {
			t.Errorf("after SIGTERM the binary exited with %v\n%s", err, p.stderr)
		}
	case <-time.After(limit):
		t.Errorf("the binary did not exit within %v of SIGTERM", limit)
	}
}

// freeAddr returns a loopback address with a port that was free a moment ago.
func freeAddr(t *testing.T) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().String()
}

// waitHealthy polls the health path until it answers 200, or fails the test
// when the process exits or a minute passes (the startup probe's budget).
func (p *process) waitHealthy(t *testing.T, base string) {
	t.Helper()
	deadline := time.Now().Add(time.Minute)
	for time.Now().Before(deadline) {
		select {
		case err := <-p.done:
			p.done <- err
			t.Fatalf("the binary exited before it served: %v\n%s", err, p.stderr)
		default:
		}
		if resp, err := http.Get(base + deploy.HealthPath); err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return
			}
		}
		time.Sleep(100 * time.Millisecond)
	}
	t.Fatalf("%s%s did not answer 200 within a minute\n%s", base, deploy.HealthPath, p.stderr)
}

// containerArgs returns the args of the Deployment's container in the base.
func containerArgs(t *testing.T) []string {
	t.Helper()
	data, err := os.ReadFile("../kubernetes/base/deployment.yaml")
	if err != nil {
		t.Fatal(err)
	}
	var d appsv1.Deployment
	if err := yaml.Unmarshal(data, &d); err != nil {
		t.Fatal(err)
	}
	if len(d.Spec.Template.Spec.Containers) != 1 {
		t.Fatalf("deployment.yaml: want one container")
	}
	return d.Spec.Template.Spec.Containers[0].Args
}

// configMapFiles returns the files of a kustomization's ConfigMap generator:
// the files the container sees under deploy.ConfigDir.
func configMapFiles(t *testing.T, dir string) []string {
	t.Helper()
	data, err := os.ReadFile(filepath.Join(dir, "kustomization.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	var k struct {
		ConfigMapGenerator []struct {
			Name  string   `json:"name"`
			Files []string `json:"files"`
		} `json:"configMapGenerator"`
	}
	if err := yaml.Unmarshal(data, &k); err != nil {
		t.Fatal(err)
	}
	for _, g := range k.ConfigMapGenerator {
		if g.Name == deploy.ConfigMapName {
			return g.Files
		}
	}
	t.Fatalf("%s generates no ConfigMap %s", dir, deploy.ConfigMapName)
	return nil
}

// TestServeExampleConfigs runs the binary the way the Deployment does, on
// each kustomization's config: the ConfigMap's files and the Secret's tokens
// laid out in a temporary directory in place of their mount points, the
// container's args, the DSN in the environment variable the Secret fills.
// The binary must accept the file, answer its probes, enforce the tokens,
// answer a query, show the contract's metrics, and drain on SIGTERM.
func TestServeExampleConfigs(t *testing.T) {
	db := demoDatabase(t)
	// The image's entrypoint after the binary ("serve"), then the container's
	// args, as the container runtime joins them.
	args := append(readImageSpec(t).entrypoint[1:], containerArgs(t)...)
	for _, k := range kustomizations {
		t.Run(filepath.Base(k.dir), func(t *testing.T) {
			root := t.TempDir()
			configDir := filepath.Join(root, "config")
			if err := os.Mkdir(configDir, 0o755); err != nil {
				t.Fatal(err)
			}
			addr := freeAddr(t)
			token := fmt.Sprintf("verify-%d", time.Now().UnixNano())
			tokens := filepath.Join(root, "tokens")
			if err := os.WriteFile(tokens, []byte(token+"\n"), 0o600); err != nil {
				t.Fatal(err)
			}
			for _, f := range configMapFiles(t, k.dir) {
				data, err := os.ReadFile(filepath.Join(k.dir, f))
				if err != nil {
					t.Fatal(err)
				}
				if f == filepath.Base(deploy.ConfigFile) {
					data = mount(t, data, map[string]string{
						deploy.ContainerListen: addr,
						deploy.TokensFile:      tokens,
						deploy.ConfigDir + "/": configDir + "/",
					})
				}
				if err := os.WriteFile(filepath.Join(configDir, f), data, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			var runArgs []string
			for _, a := range args {
				runArgs = append(runArgs, strings.ReplaceAll(a, deploy.ConfigDir+"/", configDir+"/"))
			}
			p := start(t, runArgs, []string{deploy.DSNEnv + "=sqlite:" + db})
			base := "http://" + addr
			p.waitHealthy(t, base)

			if status, body := get(t, base+deploy.ReadyPath, ""); status != http.StatusOK {
				t.Errorf("%s: %d %s", deploy.ReadyPath, status, body)
			}
			q := base + deploy.QueryPath + "?query=" + url.QueryEscape(k.query)
			if status, _ := get(t, q, ""); status != http.StatusUnauthorized {
				t.Errorf("a query without the token: status %d, want 401", status)
			}
			status, body := get(t, q, token)
			if status != http.StatusOK {
				t.Fatalf("a query with the token: %d %s", status, body)
			}
			var res struct {
				Results struct {
					Bindings []map[string]any `json:"bindings"`
				} `json:"results"`
			}
			if err := json.Unmarshal(body, &res); err != nil || len(res.Results.Bindings) == 0 {
				t.Errorf("the query's answer has no solutions (%v): %s", err, body)
			}
			checkScrape(t, base+deploy.MetricsPath)
			p.stop(t)
		})
	}
}

// mount replaces each container path of a config file with its place in the
// test, and fails if the file does not name one of them.
func mount(t *testing.T, data []byte, paths map[string]string) []byte {
	t.Helper()
	s := string(data)
	for from, to := range paths {
		if !strings.Contains(s, from) {
			t.Fatalf("the config file does not name %s", from)
		}
		s = strings.ReplaceAll(s, from, to)
	}
	return []byte(s)
}

func get(t *testing.T, u, token string) (int, []byte) {
	t.Helper()
	req, err := http.NewRequest(http.MethodGet, u, nil)
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Accept", "application/sparql-results+json")
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return resp.StatusCode, body
}

// checkScrape reads the binary's metrics as Prometheus would and checks them
// against the contract: every veneer_ family it shows is listed with its
// type and labels, every listed family without labels is there from the
// start, and the query just answered is counted under route RouteQuery.
func checkScrape(t *testing.T, u string) {
	t.Helper()
	resp, err := http.Get(u)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	parser := expfmt.NewTextParser(model.LegacyValidation)
	fams, err := parser.TextToMetricFamilies(resp.Body)
	if err != nil {
		t.Fatalf("%s: %v", u, err)
	}
	types := map[dto.MetricType]deploy.MetricType{
		dto.MetricType_COUNTER: deploy.Counter, dto.MetricType_GAUGE: deploy.Gauge, dto.MetricType_HISTOGRAM: deploy.Histogram,
	}
	for name, mf := range fams {
		if !strings.HasPrefix(name, "veneer_") {
			continue
		}
		m, ok := deploy.MetricByName(name)
		if !ok {
			t.Errorf("the binary shows %s, which deploy/contract.go does not list", name)
			continue
		}
		if types[mf.GetType()] != m.Type {
			t.Errorf("%s: the binary shows a %v, the contract says %s", name, mf.GetType(), m.Type)
		}
		for _, s := range mf.Metric {
			var labels []string
			for _, lp := range s.Label {
				labels = append(labels, lp.GetName())
			}
			want := slices.Clone(m.Labels)
			slices.Sort(labels)
			slices.Sort(want)
			if !slices.Equal(labels, want) {
				t.Errorf("%s: a series with labels %v, the contract says %v", name, labels, m.Labels)
			}
		}
	}
	for _, m := range deploy.Metrics {
		if len(m.Labels) == 0 && fams[m.Name] == nil {
			t.Errorf("the binary does not show %s", m.Name)
		}
	}
	counted := false
	for _, s := range fams["veneer_http_requests_total"].GetMetric() {
		for _, lp := range s.Label {
			counted = counted || lp.GetName() == "route" && lp.GetValue() == deploy.RouteQuery
		}
	}
	if !counted {
		t.Errorf("veneer_http_requests_total has no series with route=%q after a query", deploy.RouteQuery)
	}
}

// TestDefaultPort checks the port of the binary's default listen address,
// which the manifests, the image and the README share: run without --listen,
// it either serves there or, if something else holds the port, says so.
func TestDefaultPort(t *testing.T) {
	p := start(t, []string{"serve"}, []string{deploy.DSNEnv + "=sqlite:" + demoDatabase(t)})
	want := fmt.Sprintf("127.0.0.1:%d", deploy.Port)
	deadline := time.Now().Add(time.Minute)
	for time.Now().Before(deadline) {
		if strings.Contains(p.stderr.String(), want) {
			break
		}
		select {
		case <-p.done:
			if !strings.Contains(p.stderr.String(), want) {
				t.Fatalf("the binary exited without naming %s:\n%s", want, p.stderr)
			}
			return
		case <-time.After(100 * time.Millisecond):
		}
	}
	if !strings.Contains(p.stderr.String(), want) {
		t.Fatalf("the binary did not name %s within a minute:\n%s", want, p.stderr)
	}
	if strings.Contains(p.stderr.String(), "listening on "+want) {
		<-p.done // the port is taken: the binary said where it tried, and exits
		return
	}
	p.stop(t)
}
