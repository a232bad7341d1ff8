package differential

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"testing"

	_ "github.com/go-sql-driver/mysql"
	_ "github.com/jackc/pgx/v5/stdlib"
	_ "modernc.org/sqlite"

	"veneer/cmd/veneer/demo"
)

func dump(t *testing.T, db *sql.DB, q string) {
	rows, err := db.Query(q)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	cts, _ := rows.ColumnTypes()
	vals := make([]any, len(cts))
	ptrs := make([]any, len(cts))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	rows.Next()
	rows.Scan(ptrs...)
	for i, c := range cts {
		fmt.Printf("%s %q %T %v\n", c.Name(), c.DatabaseTypeName(), vals[i], vals[i])
	}
}

func TestScratch(t *testing.T) {
	path := filepath.Join(t.TempDir(), "w.db")
	if err := demo.BuildSQLite(context.Background(), path); err != nil {
		t.Fatal(err)
	}
	db, _ := sql.Open("sqlite", "file:"+path+"?mode=ro")
	for _, tb := range demo.Tables() {
		dump(t, db, "SELECT * FROM "+tb)
	}
	dump(t, db, "SELECT * FROM (SELECT order_number, opened_at FROM work_order WHERE closed_at IS NULL) AS v")
	if os.Getenv("X_PG") != "" {
		pg, err := sql.Open("pgx", os.Getenv("X_PG"))
		if err != nil {
			t.Fatal(err)
		}
		pg.Exec("CREATE SCHEMA x_scr")
		pg.Exec("SET search_path TO x_scr")
		pg.SetMaxOpenConns(1)
		if err := demo.Build(context.Background(), func(ctx context.Context, q string, args ...any) error { _, err := pg.ExecContext(ctx, q, args...); return err }, "postgres"); err != nil {
			t.Fatal(err)
		}
		for _, tb := range demo.Tables() {
			dump(t, pg, "SELECT * FROM "+tb)
		}
		pg.Exec("DROP SCHEMA x_scr CASCADE")
	}
	if os.Getenv("X_MY") != "" {
		my, _ := sql.Open("mysql", "root@tcp(127.0.0.1:3306)/")
		my.SetMaxOpenConns(1)
		my.Exec("CREATE DATABASE veneer_x_scr")
		my.Exec("USE veneer_x_scr")
		if err := demo.Build(context.Background(), func(ctx context.Context, q string, args ...any) error { _, err := my.ExecContext(ctx, q, args...); return err }, "mysql"); err != nil {
			t.Fatal(err)
		}
		for _, tb := range demo.Tables() {
			dump(t, my, "SELECT * FROM "+tb)
		}
		my.Exec("DROP DATABASE veneer_x_scr")
	}
}
