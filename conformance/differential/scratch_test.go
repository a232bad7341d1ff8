package differential

import (
	"context"
	"fmt"
	"os"
	"testing"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
	"veneer/rewrite/exec"
)

func TestScratchProbe(t *testing.T) {
	q, _ := os.ReadFile("/tmp/probe.rq")
	for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
		db := sourcetest.New(t, d)
		ctx := context.Background()
		if err := demo.Build(ctx, func(ctx context.Context, q string, args ...any) error { _, err := db.Admin.ExecContext(ctx, q, args...); return err }, d.String()); err != nil {
			t.Fatal(err)
		}
		cat := demoCatalog(t)
		src := db.Open(t)
		cols, _ := catalog.ProbeColumns(ctx, src, cat)
		e := &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}
		p, err := e.Planner.Compile(string(q))
		if err != nil {
			fmt.Println(d, "compile:", err)
			continue
		}
		fmt.Println(d, rewrite.Explain(p))
		c, err := e.Query(ctx, string(q))
		if err != nil {
			fmt.Printf("%s query: %v (%#v)\n", d, err, err)
			continue
		}
		n := 0
		for c.Next() {
			n++
		}
		fmt.Println(d, "rows", n, "err", c.Err())
		c.Close()
	}
}
