package differential

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"
)

// The reference engine is the npm package oxigraph, run by the Node script
// reference/answer.js over the materialised graph. It is installed with npm ci
// from the committed package-lock.json.

// referenceFiles are the files of the reference directory an installation needs.
var referenceFiles = []string{"package.json", "package-lock.json", "answer.js"}

// ErrNoNode is returned by InstallReference when node or npm is not on PATH.
var ErrNoNode = errors.New("node and npm are needed for the reference engine")

// InstallReference copies the reference script and its npm manifests from src
// (the reference directory) into dst and runs npm ci there, within timeout. The
// source tree is left alone, so that two runs never install into one directory
// at once.
func InstallReference(ctx context.Context, src, dst string, timeout time.Duration) error {
	for _, tool := range []string{"node", "npm"} {
		if _, err := exec.LookPath(tool); err != nil {
			return fmt.Errorf("%w: %s is not on PATH", ErrNoNode, tool)
		}
	}
	for _, name := range referenceFiles {
		b, err := os.ReadFile(filepath.Join(src, name))
		if err != nil {
			return fmt.Errorf("installing the reference engine: %w", err)
		}
		if err := os.WriteFile(filepath.Join(dst, name), b, 0o644); err != nil {
			return fmt.Errorf("installing the reference engine: %w", err)
		}
	}
	ctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	cmd := exec.CommandContext(ctx, "npm", "ci", "--no-audit", "--no-fund", "--ignore-scripts", "--prefer-offline")
	cmd.Dir = dst
	out, err := cmd.CombinedOutput()
	if ctx.Err() != nil {
		return fmt.Errorf("installing the reference engine: npm ci did not finish within %s", timeout)
	}
	if err != nil {
		return fmt.Errorf("installing the reference engine: npm ci: %w\n%s", err, clip(string(out), 2000))
	}
	return nil
}

// Reference is a running reference engine loaded with one graph.
type Reference struct {
	dir, graph string
	timeout    time.Duration
	proc       *process
	// Size is the number of triples the engine loaded.
	Size int
}

// process is one run of the Node script.
type process struct {
	cmd     *exec.Cmd
	stdin   io.WriteCloser
	answers chan []byte
	stderr  *bytes.Buffer
}

// StartReference starts the reference engine installed in dir over the
// N-Triples file graph. Each query gets at most timeout; one that takes longer
// is an error, and the engine is restarted for the next.
func StartReference(dir, graph string, timeout time.Duration) (*Reference, error) {
	r := &Reference{dir: dir, graph: graph, timeout: timeout}
	if err := r.start(); err != nil {
		return nil, err
	}
	return r, nil
}

func (r *Reference) start() error {
	cmd := exec.Command("node", filepath.Join(r.dir, "answer.js"), r.graph)
	cmd.Dir = r.dir
	stdin, err := cmd.StdinPipe()
	if err != nil {
		return fmt.Errorf("starting the reference engine: %w", err)
	}
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		return fmt.Errorf("starting the reference engine: %w", err)
	}
	p := &process{cmd: cmd, stdin: stdin, answers: make(chan []byte, 1), stderr: &bytes.Buffer{}}
	cmd.Stderr = p.stderr
	if err := cmd.Start(); err != nil {
		return fmt.Errorf("starting the reference engine: %w", err)
	}
	go func() {
		defer close(p.answers)
		rd := bufio.NewReaderSize(stdout, 1<<20)
		for {
			line, err := rd.ReadBytes('\n')
			if len(bytes.TrimSpace(line)) > 0 {
				p.answers <- line
			}
			if err != nil {
				return
			}
		}
	}()
	r.proc = p
	// Loading the graph takes a few seconds; allow more than for one query.
	line, err := r.receive(time.Minute + r.timeout)
	if err != nil {
		return fmt.Errorf("loading the graph into the reference engine: %w", err)
	}
	var ready struct {
		Ready *int `json:"ready"`
	}
	if err := json.Unmarshal(line, &ready); err != nil || ready.Ready == nil {
		r.stop(0)
		return fmt.Errorf("the reference engine did not report ready: %s", clip(string(line), 500))
	}
	r.Size = *ready.Ready
	return nil
}

// receive waits for the process's next line.
func (r *Reference) receive(timeout time.Duration) ([]byte, error) {
	select {
	case line, ok := <-r.proc.answers:
		if !ok {
			err := r.proc.cmd.Wait()
			msg := strings.TrimSpace(r.proc.stderr.String())
			r.proc = nil
			return nil, fmt.Errorf("the reference engine stopped (%v): %s", err, clip(msg, 2000))
		}
		return line, nil
	case <-time.After(timeout):
		r.stop(0)
		return nil, fmt.Errorf("the reference engine did not answer within %s", timeout)
	}
}

// Answer runs a query on the reference engine. graph asks for the N-Triples of a
// CONSTRUCT or DESCRIBE query; otherwise the answer is SPARQL 1.1 Query Results
// JSON. An error the engine reports for the query is returned as a *QueryError.
func (r *Reference) Answer(query string, graph bool) ([]byte, error) {
	if r.proc == nil {
		if err := r.start(); err != nil {
			return nil, err
		}
	}
	req, err := json.Marshal(struct {
		Query string `json:"query"`
		Graph bool   `json:"graph"`
	}{query, graph})
	if err != nil {
		return nil, err
	}
	if _, err := r.proc.stdin.Write(append(req, '\n')); err != nil {
		return nil, fmt.Errorf("sending a query to the reference engine: %w", err)
	}
	line, err := r.receive(r.timeout)
	if err != nil {
		return nil, err
	}
	var resp struct {
		Answer *string `json:"answer"`
		Error  *string `json:"error"`
	}
	if err := json.Unmarshal(line, &resp); err != nil {
		return nil, fmt.Errorf("reading the reference engine's answer: %w", err)
	}
	switch {
	case resp.Error != nil:
		return nil, &QueryError{Msg: *resp.Error}
	case resp.Answer == nil:
		return nil, fmt.Errorf("the reference engine's answer has neither an answer nor an error: %s", clip(string(line), 500))
	}
	return []byte(*resp.Answer), nil
}

// QueryError is a query an engine refused or could not answer.
type QueryError struct{ Msg string }

func (e *QueryError) Error() string { return e.Msg }

// Close stops the engine.
func (r *Reference) Close() error {
	r.stop(5 * time.Second)
	return nil
}

// stop ends the process: it closes its input and kills it if it has not ended
// within grace.
func (r *Reference) stop(grace time.Duration) {
	if r.proc == nil {
		return
	}
	p := r.proc
	r.proc = nil
	p.stdin.Close()
	done := make(chan error, 1)
	go func() { done <- p.cmd.Wait() }()
	select {
	case <-done:
	case <-time.After(grace):
		p.cmd.Process.Kill()
		<-done
	}
}

// clip shortens s to at most n bytes for a message.
func clip(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return s[:n] + "…"
}
