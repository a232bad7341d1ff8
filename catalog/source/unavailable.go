package source

import (
	"database/sql/driver"
	"errors"
	"io"
	"net"
	"strings"

	"github.com/go-sql-driver/mysql"
	"github.com/jackc/pgx/v5/pgconn"
)

// IsUnavailable reports whether err says that the database could not be reached
// or went away (a refused or broken connection, a server shutting down, too
// many connections), as opposed to the database refusing the statement itself.
// The first calls for "try again later"; the second is a fault to report.
func IsUnavailable(err error) bool {
	if err == nil {
		return false
	}
	var pgErr *pgconn.PgError
	if errors.As(err, &pgErr) {
		// Class 08 is connection exceptions; 57P01–57P03 the server shutting
		// down or not yet accepting; 53300 too many connections (PostgreSQL,
		// Appendix A "Error Codes").
		return strings.HasPrefix(pgErr.Code, "08") || strings.HasPrefix(pgErr.Code, "57P") || pgErr.Code == "53300"
	}
	var myErr *mysql.MySQLError
	if errors.As(err, &myErr) {
		// 1040 too many connections, 1053 server shutdown, 1927 connection
		// killed (MySQL/MariaDB server error codes, from memory).
		return myErr.Number == 1040 || myErr.Number == 1053 || myErr.Number == 1927
	}
	var connErr *pgconn.ConnectError
	var netErr net.Error
	// pgx reports a pooled connection that broke while it sat idle as
	// ErrConnClosed when it is next used.
	return errors.As(err, &connErr) || errors.As(err, &netErr) || errors.Is(err, pgconn.ErrConnClosed) ||
		errors.Is(err, driver.ErrBadConn) || errors.Is(err, mysql.ErrInvalidConn) ||
		errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF)
}
