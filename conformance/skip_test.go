package conformance

import (
	"strings"
	"testing"
)

// The skip list format is veneer's own; these checks are common practice.
func TestParseSkipList(t *testing.T) {
	src := "# comment\n\nR2RMLTC0018a  padding is lost\nR2RMLTC0018a@postgres\tpostgres reason\nDirectGraphTC0005 blank nodes\n"
	l, err := ParseSkipList("skip.txt", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		id, db     string
		wantReason string
		wantSkip   bool
	}{
		{"R2RMLTC0018a", "sqlite", "padding is lost", true},
		{"R2RMLTC0018a", "postgres", "postgres reason", true},
		{"DirectGraphTC0005", "mysql", "blank nodes", true},
		{"R2RMLTC0000", "sqlite", "", false},
	}
	for _, tt := range tests {
		reason, skip := l.Reason(tt.id, tt.db)
		if reason != tt.wantReason || skip != tt.wantSkip {
			t.Errorf("Reason(%s, %s) = %q, %v; want %q, %v", tt.id, tt.db, reason, skip, tt.wantReason, tt.wantSkip)
		}
	}
	unknown := l.unknown(map[string]bool{"R2RMLTC0018a": true})
	if len(unknown) != 1 || !strings.Contains(unknown[0], "line 5 names DirectGraphTC0005") {
		t.Errorf("unknown entries: %q", unknown)
	}
}

func TestParseSkipListErrors(t *testing.T) {
	tests := []struct{ src, want string }{
		{"R2RMLTC0000\n", "skip.txt:1: entry \"R2RMLTC0000\" has no reason"},
		{"\nR2RMLTC0000@oracle why\n", "skip.txt:2: unknown database \"oracle\" after @ (want sqlite, postgres, mysql or none)"},
		{"@mysql why\n", "skip.txt:1: entry without a test identifier"},
		{"A one\nA two\n", "skip.txt:2: A is already listed on line 1"},
	}
	for _, tt := range tests {
		_, err := ParseSkipList("skip.txt", []byte(tt.src))
		if err == nil || err.Error() != tt.want {
			t.Errorf("ParseSkipList(%q): error %v, want %q", tt.src, err, tt.want)
		}
	}
}

// The skip lists built into the program parse.
func TestSkipListFor(t *testing.T) {
	if _, err := SkipListFor("rdb2rdf"); err != nil {
		t.Fatal(err)
	}
	l, err := SkipListFor("no-such-suite")
	if err != nil {
		t.Fatal(err)
	}
	if _, skip := l.Reason("anything", "sqlite"); skip {
		t.Error("a suite without a skip list skips a test")
	}
}
