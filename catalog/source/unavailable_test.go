package source

import (
	"context"
	"database/sql/driver"
	"errors"
	"fmt"
	"io"
	"testing"

	"github.com/go-sql-driver/mysql"
	"github.com/jackc/pgx/v5/pgconn"
)

func TestIsUnavailable(t *testing.T) {
	cases := []struct {
		name string
		err  error
		want bool
	}{
		{"none", nil, false},
		// PostgreSQL, Appendix A "Error Codes": 57P01 admin_shutdown (what
		// pg_terminate_backend and a fast shutdown send), 57P03
		// cannot_connect_now, 08006 connection_failure, 53300
		// too_many_connections; 42P01 undefined_table is the statement's fault.
		{"pg terminated", &pgconn.PgError{Code: "57P01"}, true},
		{"pg starting up", &pgconn.PgError{Code: "57P03"}, true},
		{"pg connection failure", &pgconn.PgError{Code: "08006"}, true},
		{"pg too many connections", &pgconn.PgError{Code: "53300"}, true},
		{"pg undefined table", &pgconn.PgError{Code: "42P01"}, false},
		// A pooled connection found dead on its next use (seen in the fault
		// tests when a replica stopped under load).
		{"pgx conn closed", fmt.Errorf("postgres: begin read-only transaction: %w", pgconn.ErrConnClosed), true},
		{"mysql server shutdown", &mysql.MySQLError{Number: 1053}, true},
		{"mysql syntax", &mysql.MySQLError{Number: 1064}, false},
		{"bad connection", driver.ErrBadConn, true},
		{"invalid connection", mysql.ErrInvalidConn, true},
		{"cut short", fmt.Errorf("reading: %w", io.ErrUnexpectedEOF), true},
		{"joined", errors.Join(errors.New("member a: refused"), fmt.Errorf("member b: %w", io.EOF)), true},
		{"canceled", context.Canceled, false},
		{"plain", errors.New("column \"x\" does not exist"), false},
	}
	for _, c := range cases {
		if got := IsUnavailable(c.err); got != c.want {
			t.Errorf("%s: IsUnavailable(%v) = %v, want %v", c.name, c.err, got, c.want)
		}
	}
}
