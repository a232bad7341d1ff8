// Package w3cdir finds the checkout of the W3C test suites that veneer's
// tests and conformance runner read, which is never copied into this
// repository: the directory $VENEER_W3C names, or else shared/w3c beside the
// root of the module (../shared/w3c from the repository's root, as
// DEVELOPERS.md has it). It depends on nothing of veneer's, so that the tests
// of every package, even those conformance imports, can use it.
package w3cdir

import (
	"os"
	"path/filepath"
	"testing"
)

// Env is the environment variable that names the directory.
const Env = "VENEER_W3C"

// Dir returns the directory of the W3C suites: $VENEER_W3C, or else
// ../shared/w3c from the root of the module the working directory is in (so
// ../../../shared/w3c from a package two levels down), as a relative path.
// Outside the module it is ../shared/w3c from the working directory.
func Dir() string {
	if d := os.Getenv(Env); d != "" {
		return d
	}
	beside := filepath.Join("..", "shared", "w3c")
	abs, err := filepath.Abs(".")
	if err != nil {
		return beside
	}
	for up := "."; ; up = filepath.Join(up, "..") {
		if _, err := os.Stat(filepath.Join(up, "go.mod")); err == nil {
			return filepath.Join(up, beside)
		}
		parent := filepath.Dir(abs)
		if parent == abs {
			return beside
		}
		abs = parent
	}
}

// ForTest returns Dir for a test. When the directory is missing the test is
// skipped, except in CI (CI=true), where a skip would hide a missing suite and
// the test fails instead.
func ForTest(t testing.TB) string {
	t.Helper()
	dir := Dir()
	if _, err := os.Stat(dir); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("the W3C suites are not at %s (set %s): %v", dir, Env, err)
		}
		t.Skipf("the W3C suites are not at %s (set %s): %v", dir, Env, err)
	}
	return dir
}
