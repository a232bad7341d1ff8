package verify

import (
	"bytes"
	"context"
	"debug/buildinfo"
	"debug/elf"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"veneer/deploy"
)

// moduleRoot is the repository root, seen from this package's directory.
const moduleRoot = "../.."

// instruction is one Dockerfile instruction, its continuation lines joined.
type instruction struct {
	line    int
	keyword string // upper case
	args    string
}

// readDockerfile splits a Dockerfile into instructions, by stage (each FROM
// starts one).
func readDockerfile(name string) ([][]instruction, error) {
	data, err := os.ReadFile(name)
	if err != nil {
		return nil, err
	}
	var stages [][]instruction
	var cur strings.Builder
	start := 0
	flush := func() error {
		text := strings.TrimSpace(cur.String())
		cur.Reset()
		if text == "" {
			return nil
		}
		kw, args, _ := strings.Cut(text, " ")
		in := instruction{line: start, keyword: strings.ToUpper(kw), args: strings.TrimSpace(args)}
		if in.keyword == "FROM" {
			stages = append(stages, nil)
		}
		if len(stages) == 0 {
			return fmt.Errorf("%s:%d: %s before the first FROM", name, in.line, in.keyword)
		}
		stages[len(stages)-1] = append(stages[len(stages)-1], in)
		return nil
	}
	for i, line := range strings.Split(string(data), "\n") {
		trimmed := strings.TrimSpace(line)
		if strings.HasPrefix(trimmed, "#") {
			continue
		}
		if cur.Len() == 0 {
			start = i + 1
		}
		if body, cont := strings.CutSuffix(trimmed, `\`); cont {
			cur.WriteString(body + " ")
			continue
		}
		cur.WriteString(trimmed)
		if err := flush(); err != nil {
			return nil, err
		}
	}
	return stages, flush()
}

// shellWords splits a shell command line into words, honouring single and
// double quotes (enough for a RUN line; no expansions).
func shellWords(s string) ([]string, error) {
	var words []string
	var w strings.Builder
	inWord := false
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case c == '\'' || c == '"':
			j := strings.IndexByte(s[i+1:], c)
			if j < 0 {
				return nil, fmt.Errorf("unclosed %c in %q", c, s)
			}
			w.WriteString(s[i+1 : i+1+j])
			i += j + 1
			inWord = true
		case c == ' ' || c == '\t':
			if inWord {
				words = append(words, w.String())
				w.Reset()
				inWord = false
			}
		case strings.IndexByte("|&;<>()$`\\", c) >= 0:
			return nil, fmt.Errorf("%q: shell syntax %c is beyond this reader", s, c)
		default:
			w.WriteByte(c)
			inWord = true
		}
	}
	if inWord {
		words = append(words, w.String())
	}
	return words, nil
}

// goBuild is the go build command of the Dockerfile's build stage.
type goBuild struct {
	env    []string // NAME=value assignments before the command
	args   []string // after "go"
	output string   // the -o argument
}

// imageSpec is what the Dockerfile says, read off its instructions.
type imageSpec struct {
	buildImage string
	build      goBuild
	copied     string // where the final stage puts the binary
	user       string
	expose     []string
	entrypoint []string
	cmd        []string
}

func readImageSpec(t *testing.T) *imageSpec {
	t.Helper()
	name := filepath.Join(moduleRoot, "Dockerfile")
	stages, err := readDockerfile(name)
	if err != nil {
		t.Fatal(err)
	}
	if len(stages) != 2 {
		t.Fatalf("%s: %d stages, want 2 (build, run)", name, len(stages))
	}
	spec := &imageSpec{}
	var order []string
	for _, in := range stages[0] {
		switch in.keyword {
		case "FROM":
			spec.buildImage, _, _ = strings.Cut(in.args, " ")
		case "COPY":
			order = append(order, "COPY "+in.args)
		case "RUN":
			order = append(order, "RUN")
			words, err := shellWords(in.args)
			if err != nil {
				t.Fatalf("%s:%d: %v", name, in.line, err)
			}
			var env []string
			for len(words) > 0 && strings.Contains(words[0], "=") {
				env, words = append(env, words[0]), words[1:]
			}
			if len(words) >= 2 && words[0] == "go" && words[1] == "build" {
				spec.build = goBuild{env: env, args: words[1:]}
				for i, w := range words {
					if w == "-o" && i+1 < len(words) {
						spec.build.output = words[i+1]
					}
				}
				order[len(order)-1] = "RUN go build"
			} else if strings.Join(words, " ") == "go mod download" {
				order[len(order)-1] = "RUN go mod download"
			}
		}
	}
	// Module downloads in their own layer before the sources, so that a
	// change of code does not download them again; then the build.
	if want := []string{"COPY go.mod go.sum ./", "RUN go mod download", "COPY . .", "RUN go build"}; !slices.Equal(order, want) {
		t.Errorf("%s: build stage does %q, want %q", name, order, want)
	}
	for _, in := range stages[1] {
		switch in.keyword {
		case "COPY":
			f := strings.Fields(in.args)
			if len(f) == 3 && f[0] == "--from=build" && f[1] == spec.build.output {
				spec.copied = f[2]
			}
		case "USER":
			spec.user = in.args
		case "EXPOSE":
			spec.expose = strings.Fields(in.args)
		case "ENTRYPOINT", "CMD":
			var v []string
			if err := json.Unmarshal([]byte(in.args), &v); err != nil {
				t.Errorf("%s:%d: %s is not in exec form (a JSON array); the image has no shell: %v", name, in.line, in.keyword, err)
			}
			if in.keyword == "CMD" {
				spec.cmd = v
			} else {
				spec.entrypoint = v
			}
		}
	}
	return spec
}

// TestDockerfile checks the Dockerfile against the module and the contract:
// the build image's Go release is go.mod's, the build is static, and the
// image runs `veneer serve` as the numeric non-root user on the port the
// manifests use, listening on every interface.
func TestDockerfile(t *testing.T) {
	spec := readImageSpec(t)
	gomod, err := os.ReadFile(filepath.Join(moduleRoot, "go.mod"))
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`(?m)^go (\d+\.\d+)`).FindSubmatch(gomod)
	if m == nil {
		t.Fatal("go.mod has no go directive")
	}
	if want := "golang:" + string(m[1]) + "-"; !strings.HasPrefix(spec.buildImage, want) {
		t.Errorf("build image %s, want %s… for go.mod's go %s", spec.buildImage, want, m[1])
	}
	if !slices.Contains(spec.build.env, "CGO_ENABLED=0") {
		t.Errorf("go build runs with %q, want CGO_ENABLED=0: the run image has no C library", spec.build.env)
	}
	if spec.build.output == "" || spec.copied == "" {
		t.Errorf("the run stage does not copy the build's output %q", spec.build.output)
	}
	if want := strconv.Itoa(deploy.UID) + ":" + strconv.Itoa(deploy.UID); spec.user != want {
		t.Errorf("USER %q, want %q: numeric, so that runAsNonRoot can be checked", spec.user, want)
	}
	if want := []string{strconv.Itoa(deploy.Port)}; !slices.Equal(spec.expose, want) {
		t.Errorf("EXPOSE %v, want %v", spec.expose, want)
	}
	if want := []string{spec.copied, "serve"}; !slices.Equal(spec.entrypoint, want) {
		t.Errorf("ENTRYPOINT %q, want %q", spec.entrypoint, want)
	}
	if want := []string{"--listen", deploy.ContainerListen}; !slices.Equal(spec.cmd, want) {
		t.Errorf("CMD %q, want %q", spec.cmd, want)
	}
}

var built struct {
	once sync.Once
	dir  string
	path string
	err  error
}

// binary builds veneer the way the Dockerfile does, once for all tests, and
// returns the binary's path.
func binary(t *testing.T) string {
	t.Helper()
	built.once.Do(func() {
		spec := readImageSpec(t)
		built.dir, built.err = os.MkdirTemp("", "veneer-verify-")
		if built.err != nil {
			return
		}
		built.path = filepath.Join(built.dir, "veneer")
		args := slices.Clone(spec.build.args)
		for i := range args {
			if i > 0 && args[i-1] == "-o" {
				args[i] = built.path
			}
		}
		goTool, err := exec.LookPath("go")
		if err != nil {
			built.err = err
			return
		}
		ctx, cancel := context.WithTimeout(context.Background(), 8*time.Minute)
		defer cancel()
		cmd := exec.CommandContext(ctx, goTool, args...)
		cmd.Dir = moduleRoot
		cmd.Env = append(os.Environ(), spec.build.env...)
		if out, err := cmd.CombinedOutput(); err != nil {
			built.err = fmt.Errorf("go %s (as the Dockerfile builds): %v\n%s", strings.Join(args, " "), err, out)
		}
	})
	if built.err != nil {
		t.Fatal(built.err)
	}
	return built.path
}

func TestMain(m *testing.M) {
	code := m.Run()
	if built.dir != "" {
		os.RemoveAll(built.dir)
	}
	if demoDB.path != "" {
		os.RemoveAll(filepath.Dir(demoDB.path))
	}
	os.Exit(code)
}

// TestImageBuild builds the binary with the Dockerfile's go build command and
// checks what its flags promise: no dynamic loader or libraries
// (CGO_ENABLED=0), no symbol table or DWARF (-ldflags '-s -w'), no path of
// the build machine (-trimpath), and the build settings recorded in the
// binary.
func TestImageBuild(t *testing.T) {
	path := binary(t)
	f, err := elf.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	for _, p := range f.Progs {
		if p.Type == elf.PT_INTERP {
			t.Error("the binary names a dynamic loader; the run image has none")
		}
	}
	if libs, err := f.ImportedLibraries(); err != nil || len(libs) > 0 {
		t.Errorf("the binary needs shared libraries %v (%v)", libs, err)
	}
	for _, s := range []string{".symtab", ".debug_info", ".zdebug_info"} {
		if f.Section(s) != nil {
			t.Errorf("the binary has a %s section; -ldflags '-s -w' should leave none", s)
		}
	}
	root, err := filepath.Abs(moduleRoot)
	if err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if bytes.Contains(data, []byte(root+"/")) {
		t.Errorf("the binary holds the build path %s; -trimpath should remove it", root)
	}
	bi, err := buildinfo.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	settings := map[string]string{}
	for _, s := range bi.Settings {
		settings[s.Key] = s.Value
	}
	// (With -trimpath the go command leaves -ldflags out of the settings; the
	// sections above show its effect.)
	for k, want := range map[string]string{"CGO_ENABLED": "0", "-trimpath": "true"} {
		if settings[k] != want {
			t.Errorf("build setting %s = %q, want %q", k, settings[k], want)
		}
	}
}

// TestShellWords covers the RUN-line reader on the forms it meets.
func TestShellWords(t *testing.T) {
	tests := []struct {
		in   string
		want []string
		err  bool
	}{
		{`CGO_ENABLED=0 go build -trimpath -ldflags='-s -w' -o /out/veneer ./cmd/veneer`,
			[]string{"CGO_ENABLED=0", "go", "build", "-trimpath", "-ldflags=-s -w", "-o", "/out/veneer", "./cmd/veneer"}, false},
		{`go build -ldflags "-X main.v=1"`, []string{"go", "build", "-ldflags", "-X main.v=1"}, false},
		{`go build -ldflags '-s`, nil, true},
		{`go build $FLAGS`, nil, true},
		{`go mod download && go build`, nil, true},
	}
	for _, tt := range tests {
		got, err := shellWords(tt.in)
		if (err != nil) != tt.err || !slices.Equal(got, tt.want) {
			t.Errorf("shellWords(%q) = %q, %v; want %q, error %v", tt.in, got, err, tt.want, tt.err)
		}
	}
}
