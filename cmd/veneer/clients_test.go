package main

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
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
	"testing"
	"time"

	"veneer/catalog/rdf"
)

// The checks with real SPARQL clients from the npm registry. They need node
// and npm: without them they skip with a message starting "no node:", and
// under CI=true that is a failure. The packages are pinned by the
// package-lock.json files under testdata and installed with `npm ci` into the
// user's cache directory, once per lock file.

// needNode skips the test when node or npm is missing, except in CI.
func needNode(t *testing.T) {
	t.Helper()
	for _, tool := range []string{"node", "npm"} {
		if _, err := exec.LookPath(tool); err != nil {
			if os.Getenv("CI") == "true" {
				t.Fatalf("%s is not installed; CI must run the client checks", tool)
			}
			t.Skipf("no node: %s is not installed", tool)
		}
	}
}

// npmInstall installs the packages of testdata/NAME into a cache directory
// keyed by the lock file, and copies the directory's scripts there; it
// returns the directory to run node in.
func npmInstall(t *testing.T, name string) string {
	t.Helper()
	src := filepath.Join("testdata", name)
	lock, err := os.ReadFile(filepath.Join(src, "package-lock.json"))
	if err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256(lock)
	cache, err := os.UserCacheDir()
	if err != nil {
		cache = os.TempDir()
	}
	dir := filepath.Join(cache, "veneer", "npm", name+"-"+hex.EncodeToString(sum[:6]))
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	entries, err := os.ReadDir(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		b, err := os.ReadFile(filepath.Join(src, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, e.Name()), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "node_modules", ".package-lock.json")); err == nil {
		return dir
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, "npm", "ci", "--no-audit", "--no-fund", "--loglevel=error")
	cmd.Dir = dir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("npm ci in %s: %v\n%s", dir, err, out)
	}
	return dir
}

// node runs a script of dir with stdin (which may be nil) and returns its
// standard output.
func node(t *testing.T, dir string, stdin io.Reader, args ...string) ([]byte, error) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, "node", args...)
	cmd.Dir, cmd.Stdin = dir, stdin
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		// The first lines say what failed; the rest is the script's stack.
		lines := strings.SplitN(stderr.String(), "\n", 4)
		return nil, &nodeError{err, strings.Join(lines[:min(3, len(lines))], " ")}
	}
	return out, nil
}

type nodeError struct {
	err    error
	stderr string
}

func (e *nodeError) Error() string { return e.err.Error() + ": " + e.stderr }

// jsTerm is a term as check.mjs prints it: [kind, value, tag].
type jsTerm []string

// termOf gives an RDF term the form check.mjs prints.
func termOf(t rdf.Term) jsTerm {
	switch t := t.(type) {
	case rdf.IRI:
		return jsTerm{"iri", string(t)}
	case rdf.BlankNode:
		return jsTerm{"bnode"}
	case rdf.Literal:
		tag := string(t.Datatype)
		if t.Lang != "" {
			tag = "@" + t.Lang
		} else if tag == "" {
			tag = string(rdf.XSDString)
		}
		return jsTerm{"literal", t.Lexical, tag}
	}
	return nil
}

// bindingTerm gives a SPARQL JSON results term the form check.mjs prints.
func bindingTerm(b binding) jsTerm {
	switch b.Type {
	case "uri":
		return termOf(rdf.IRI(b.Value))
	case "bnode":
		return termOf(rdf.BlankNode(b.Value))
	}
	if b.Lang != "" {
		return termOf(rdf.NewLangString(b.Value, b.Lang))
	}
	return termOf(rdf.NewTyped(b.Value, rdf.IRI(b.Datatype)))
}

// canonical sorts the JSON text of each item, so that answers compare as
// multisets.
func canonical[T any](items []T) []string {
	var out []string
	for _, it := range items {
		b, _ := json.Marshal(it)
		out = append(out, string(b))
	}
	slices.Sort(out)
	return out
}

// expected answers a query with veneer's own formats, read in Go: the
// answer the client must have parsed.
func expected(t *testing.T, endpoint, form, query string) (any, error) {
	t.Helper()
	switch form {
	case "select":
		_, rows := sparqlJSON(t, endpoint, query)
		return canonicalBindings(rows), nil
	}
	accept := map[string]string{"ask": "application/sparql-results+json", "construct": "application/n-triples"}[form]
	req, _ := http.NewRequest("GET", endpoint+"?query="+url.QueryEscape(query), nil)
	req.Header.Set("Accept", accept)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != 200 {
		return nil, &nodeError{err: errStatus(resp.StatusCode), stderr: firstLine(string(body))}
	}
	if form == "ask" {
		return readBoolean(body)
	}
	doc, err := rdf.ParseNTriples("answer", body)
	if err != nil {
		t.Fatal(err)
	}
	var ts [][]jsTerm
	for _, st := range doc.Statements {
		ts = append(ts, []jsTerm{termOf(st.S), termOf(st.P), termOf(st.O)})
	}
	return canonical(ts), nil
}

type errStatus int

func (e errStatus) Error() string { return "status " + http.StatusText(int(e)) }

// TestRealClients has fetch-sparql-endpoint and sparql-http-client read
// SELECT, ASK and CONSTRUCT answers from a live demo; each must parse the
// answer veneer's own formats hold. testdata/clients-known-failures.txt lists
// the cases the engine cannot answer yet.
func TestRealClients(t *testing.T) {
	needNode(t)
	dir := npmInstall(t, "clients")
	known := readList(t, "clients-known-failures.txt")
	endpoint := startDemo(t, nil)
	queries := map[string]string{
		"select":    prefixes + `SELECT ?t ?serial ?kw WHERE { ?t wf:serialNumber ?serial ; wf:ratedPowerKW ?kw . FILTER(?kw >= 3000) }`,
		"ask":       prefixes + `ASK { ?t wf:ratedPowerKW ?kw . FILTER(?kw > 3000) }`,
		"construct": prefixes + `CONSTRUCT { ?t rdfs:label ?serial } WHERE { ?t wf:serialNumber ?serial }`,
	}
	type job struct {
		Client string `json:"client"`
		Form   string `json:"form"`
		Query  string `json:"query"`
	}
	var jobs []job
	for _, client := range []string{"fetch-sparql-endpoint", "sparql-http-client"} {
		for _, form := range []string{"select", "ask", "construct"} {
			jobs = append(jobs, job{client, form, queries[form]})
		}
	}
	in, _ := json.Marshal(jobs)
	out, err := node(t, dir, bytes.NewReader(in), "check.mjs", endpoint)
	if err != nil {
		t.Fatal(err)
	}
	var results []struct {
		Result json.RawMessage `json:"result"`
		Error  string          `json:"error"`
	}
	if err := json.Unmarshal(out, &results); err != nil || len(results) != len(jobs) {
		t.Fatalf("the script's output: %v\n%s", err, out)
	}
	for i, j := range jobs {
		id := j.Client + "/" + j.Form
		t.Run(id, func(t *testing.T) {
			err := compareAnswer(t, endpoint, j.Form, j.Query, results[i].Result, results[i].Error)
			reason, isKnown := known.Reason(id, "sqlite")
			switch {
			case err == nil && isKnown:
				t.Errorf("passes now: remove it from testdata/clients-known-failures.txt (%s)", reason)
			case err != nil && isKnown:
				t.Logf("known failure (%s): %v", reason, err)
			case err != nil:
				t.Error(err)
			}
		})
	}
}

// compareAnswer compares what a client parsed (or the error it met) with the
// expected answer.
func compareAnswer(t *testing.T, endpoint, form, query string, out json.RawMessage, clientErr string) error {
	want, err := expected(t, endpoint, form, query)
	if err != nil {
		return err
	}
	if clientErr != "" {
		return errors.New(clientErr)
	}
	var got any
	switch form {
	case "select":
		var rows []map[string]jsTerm
		if err := json.Unmarshal(out, &rows); err != nil {
			t.Fatalf("%v: %s", err, out)
		}
		if len(rows) == 0 {
			t.Fatal("the query has no answer; the check would compare nothing")
		}
		got = canonical(rows)
	case "ask":
		var b bool
		if err := json.Unmarshal(out, &b); err != nil {
			t.Fatalf("%v: %s", err, out)
		}
		got = b
	case "construct":
		var ts [][]jsTerm
		if err := json.Unmarshal(out, &ts); err != nil {
			t.Fatalf("%v: %s", err, out)
		}
		if len(ts) == 0 {
			t.Fatal("the query has no answer; the check would compare nothing")
		}
		got = canonical(ts)
	}
	gb, _ := json.Marshal(got)
	wb, _ := json.Marshal(want)
	if !bytes.Equal(gb, wb) {
		return fmt.Errorf("the client parsed\n%.500s\nveneer's answer is\n%.500s", gb, wb)
	}
	return nil
}

// TestFederatedQuery has the query engine from the npm registry join two
// veneer instances, one over PostgreSQL and one over MariaDB (each with the
// demo), with SERVICE, and checks that it gets the same solutions as the
// same join asked of one instance.
func TestFederatedQuery(t *testing.T) {
	needNode(t)
	pgDSN, _ := demoOnPostgres(t)
	myDSN, _ := demoOnMySQL(t)
	federate(t, pgDSN, myDSN)
}

// TestFederatedQuerySQLite is the federation check over two copies of the
// demo database in SQLite, for machines without the two servers.
func TestFederatedQuerySQLite(t *testing.T) {
	needNode(t)
	a, _ := demoSource(t)
	b, _ := demoSource(t)
	federate(t, a, b)
}

// freeAddr returns a loopback address with a port free at the moment.
func freeAddr(t *testing.T) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

// federate runs the federation check over two sources given by DSN.
func federate(t *testing.T, dsnA, dsnB string) {
	t.Helper()
	known := readList(t, "clients-known-failures.txt")
	dir := npmInstall(t, "federation")
	// The engine hands the whole query to the first endpoint, which calls
	// both with SERVICE: each instance allows both, so their addresses are
	// chosen before they start.
	addrs := []string{freeAddr(t), freeAddr(t)}
	var endpoints []string
	for _, a := range addrs {
		endpoints = append(endpoints, "http://"+a+"/sparql")
	}
	for i, dsn := range []string{dsnA, dsnB} {
		src, err := openSource(context.Background(), &sourceConf{DB: dsn})
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { src.Close() })
		startServer(t, src, demoCatalog, func(c *config) { c.Listen = addrs[i]; c.Service.Allow = endpoints })
	}
	single := prefixes + `SELECT ?serial ?kw WHERE { ?t wf:serialNumber ?serial ; wf:ratedPowerKW ?kw }`
	federated := prefixes + `SELECT ?serial ?kw WHERE {
		SERVICE <` + endpoints[0] + `> { ?t wf:serialNumber ?serial }
		SERVICE <` + endpoints[1] + `> { ?t wf:ratedPowerKW ?kw } }`
	want, err := expected(t, endpoints[0], "select", single)
	if err != nil {
		t.Fatal(err)
	}
	if len(want.([]string)) == 0 {
		t.Fatal("the single-instance query has no answer; the check would compare nothing")
	}
	const id = "comunica/federated-join"
	reason, isKnown := known.Reason(id, "none")
	out, err := node(t, dir, nil, "federate.mjs", endpoints[0], federated)
	var got []string
	if err == nil {
		var rows []map[string]jsTerm
		if jerr := json.Unmarshal(out, &rows); jerr != nil {
			t.Fatalf("%v: %s", jerr, out)
		}
		got = canonical(rows)
		if !slices.Equal(got, want.([]string)) {
			err = errors.New("the federated answer differs from the single-instance answer")
		}
	}
	switch {
	case err == nil && isKnown:
		t.Errorf("passes now: remove %s from testdata/clients-known-failures.txt (%s)", id, reason)
	case err != nil && isKnown:
		t.Logf("known failure (%s): %v", reason, err)
	case err != nil:
		t.Errorf("%v: %d solutions, want %d", err, len(got), len(want.([]string)))
	}
}
