package w3cdir

import (
	"os"
	"path/filepath"
	"testing"
)

func TestDir(t *testing.T) {
	t.Run("environment", func(t *testing.T) {
		t.Setenv(Env, "/elsewhere/w3c")
		if got := Dir(); got != "/elsewhere/w3c" {
			t.Errorf("Dir() = %q, want $%s", got, Env)
		}
	})
	t.Run("beside the module", func(t *testing.T) {
		t.Setenv(Env, "")
		// This package is two levels below the module's root (conformance/w3cdir).
		want := filepath.Join("..", "..", "..", "shared", "w3c")
		if got := Dir(); got != want {
			t.Errorf("Dir() = %q, want %q", got, want)
		}
	})
	t.Run("outside a module", func(t *testing.T) {
		t.Setenv(Env, "")
		tmp := t.TempDir()
		t.Chdir(tmp)
		for d := tmp; filepath.Dir(d) != d; d = filepath.Dir(d) {
			if _, err := os.Stat(filepath.Join(d, "go.mod")); err == nil {
				t.Skipf("the temporary directory is inside the module at %s", d)
			}
		}
		if got, want := Dir(), filepath.Join("..", "shared", "w3c"); got != want {
			t.Errorf("Dir() = %q, want %q", got, want)
		}
	})
}
