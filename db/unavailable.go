package db

import (
	"errors"
	"io"
	"net"
	"syscall"

	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5/pgconn"
)

// ErrUnavailable means the database could not be reached or dropped the
// connection; the request may succeed when retried later.
var ErrUnavailable = errors.New("database unavailable")

// Unavailable reports whether err means the database is out of reach (no
// connection could be made, the server shut the session, the network broke)
// rather than that it refused the request. Such a write may or may not have
// committed when the connection broke during COMMIT; a client retries it
// under the same Idempotency-Key.
func Unavailable(err error) bool {
	if err == nil {
		return false
	}
	if errors.Is(err, ErrUnavailable) {
		return true
	}
	var ce *pgconn.ConnectError
	if errors.As(err, &ce) {
		return true
	}
	var pg *pgconn.PgError
	if errors.As(err, &pg) {
		switch {
		case pgerrcode.IsConnectionException(pg.Code):
			return true
		case pg.Code == pgerrcode.AdminShutdown, pg.Code == pgerrcode.CrashShutdown, pg.Code == pgerrcode.CannotConnectNow:
			return true
		case pg.Code == pgerrcode.TooManyConnections:
			return true
		}
		return false
	}
	var ne net.Error
	switch {
	case pgconn.SafeToRetry(err):
		return true
	case errors.As(err, &ne):
		return true
	case errors.Is(err, io.ErrUnexpectedEOF), errors.Is(err, io.EOF),
		errors.Is(err, syscall.ECONNREFUSED), errors.Is(err, syscall.ECONNRESET), errors.Is(err, syscall.EPIPE):
		return true
	}
	return false
}
