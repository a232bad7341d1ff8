package conformance

import (
	"context"
	"testing"
	"time"

	"veneer/catalog/source"
)

func TestZZTime(t *testing.T) {
	srv := testServer(t, source.Postgres)
	ctx := context.Background()
	for i := 0; i < 3; i++ {
		t0 := time.Now()
		sc, err := srv.Create(ctx)
		if err != nil {
			t.Fatal(err)
		}
		t1 := time.Now()
		tables := newTripleTables()
		tables.ensureShape()
		if err := tables.store(ctx, sc); err != nil {
			t.Fatal(err)
		}
		t2 := time.Now()
		src, err := sc.Source(ctx)
		if err != nil {
			t.Fatal(err)
		}
		src.Ping(ctx)
		t3 := time.Now()
		sc.Close()
		t4 := time.Now()
		t.Log("create", t1.Sub(t0), "store", t2.Sub(t1), "source", t3.Sub(t2), "close", t4.Sub(t3))
	}
}
