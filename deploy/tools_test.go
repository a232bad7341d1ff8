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
// test with a message starting "no tool:" when it is missing. Under CI=true a
// missing tool fails the test: .ci/run installs every tool these tests use
// (Debian's prometheus package for promtool; kubectl comes with the machine).
func needTool(t *testing.T, name, pkg string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err == nil {
		return path
	}
	if os.Getenv("CI") == "true" {
		t.Fatalf("no tool: %s is not on PATH, and CI=true needs it (Debian package %s)", name, pkg)
	}
	t.Skipf("no tool: %s is not on PATH (install Debian package %s to run this test)", name, pkg)
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
