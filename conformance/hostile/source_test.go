package hostile

import (
	"context"
	"net/url"
	"sync"
	"testing"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// recorder is a source that keeps the SQL text and arguments of every
// statement veneer sends, so that the test sees what reaches the database,
// the statements planned while a query runs included.
type recorder struct {
	source.Source
	mu  sync.Mutex
	run statements
}

// statements are what one query sent.
type statements struct {
	sql  []string
	args [][]any
}

// Query implements source.Source.
func (r *recorder) Query(ctx context.Context, sql string, args ...any) (source.Rows, error) {
	r.mu.Lock()
	r.run.sql = append(r.run.sql, sql)
	r.run.args = append(r.run.args, args)
	r.mu.Unlock()
	return r.Source.Query(ctx, sql, args...)
}

// take returns the statements sent since the last take.
func (r *recorder) take() statements {
	r.mu.Lock()
	defer r.mu.Unlock()
	s := r.run
	r.run = statements{}
	return s
}

// openSource opens db as veneer does. On PostgreSQL its sessions carry the
// application name appName, by which the sentinel check finds them.
func openSource(t *testing.T, db *sourcetest.DB, appName string) *recorder {
	dsn := db.DSN
	if db.Dialect == source.Postgres {
		u, err := url.Parse(dsn)
		if err != nil {
			t.Fatal(err)
		}
		q := u.Query()
		q.Set("application_name", appName)
		u.RawQuery = q.Encode()
		dsn = u.String()
	}
	src, err := source.Open(context.Background(), dsn)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return &recorder{Source: src}
}
