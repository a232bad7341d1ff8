package deploy

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"testing"
	"time"
)

// needTool returns the path of an external tool the tests run, or skips the
// test with a message starting "no tool:" when it is missing; where says how
// to get it. Under CI=true a missing tool fails the test: CI provides every
// tool these tests use.
func needTool(t *testing.T, name, where string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err == nil {
		return path
	}
	if os.Getenv("CI") == "true" {
		t.Fatalf("no tool: %s is not on PATH, and CI=true needs it (%s)", name, where)
	}
	t.Skipf("no tool: %s is not on PATH (%s)", name, where)
	return ""
}

// runTool runs a tool in dir with a time limit and returns its standard
// output; a failure reports the command's output.
func runTool(t *testing.T, dir, path string, args ...string) []byte {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, path, args...)
	cmd.Dir = dir
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s %v in %s: %v\nstdout:\n%s\nstderr:\n%s", path, args, dir, err, stdout.String(), stderr.String())
	}
	return stdout.Bytes()
}
