package source_test

import (
	"context"
	"database/sql"
	"testing"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// TestPoolStats checks that every dialect reports its pool for the server's
// connection metrics: the configured size, and a connection in use while a
// statement's rows are open.
func TestPoolStats(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		ctx := context.Background()
		src, err := source.Open(ctx, db.DSN, source.MaxConns(3))
		if err != nil {
			t.Fatal(err)
		}
		defer src.Close()
		st, ok := src.(interface{ Stats() sql.DBStats })
		if !ok {
			t.Fatalf("%T reports no pool statistics", src)
		}
		rows, err := src.Query(ctx, "SELECT 1")
		if err != nil {
			t.Fatal(err)
		}
		s := st.Stats()
		rows.Close()
		if s.MaxOpenConnections != 3 || s.InUse < 1 {
			t.Errorf("with one statement open: %+v; want MaxOpenConnections 3 and one connection in use", s)
		}
	})
}
