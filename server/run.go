package server

import (
	"context"
	"errors"
	"log/slog"
	"net"
	"net/http"
	"time"
)

// Serve serves the routes on ln until ctx ends, over HTTPS when Config.TLSCert
// and TLSKey are set. Then it drains: /readyz turns 503 so that load
// balancers stop sending, no new connection is accepted, and the requests in
// flight get up to Config.DrainTimeout to finish; the queries still running
// after that are cancelled (their SQL with them) and their connections
// closed. Serve returns nil after a shutdown, or the error that stopped it.
func (s *Server) Serve(ctx context.Context, ln net.Listener) error {
	base, cancelQueries := context.WithCancel(context.Background())
	defer cancelQueries()
	hs := &http.Server{
		Handler:           s.Handler(),
		ReadHeaderTimeout: 10 * time.Second,
		IdleTimeout:       2 * time.Minute,
		BaseContext:       func(net.Listener) context.Context { return base },
		ErrorLog:          slog.NewLogLogger(s.log.Handler(), slog.LevelWarn),
	}
	errc := make(chan error, 1)
	go func() {
		if s.cfg.TLSCert != "" && s.cfg.TLSKey != "" {
			errc <- hs.ServeTLS(ln, s.cfg.TLSCert, s.cfg.TLSKey)
		} else {
			errc <- hs.Serve(ln)
		}
	}()
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
	}
	s.draining.Store(true)
	s.log.Info("shutting down: draining the requests in flight", "grace", s.cfg.DrainTimeout.String())
	drainCtx, cancel := context.WithTimeout(context.Background(), s.cfg.DrainTimeout)
	defer cancel()
	err := hs.Shutdown(drainCtx)
	if errors.Is(err, context.DeadlineExceeded) {
		s.log.Warn("the grace period ended with requests in flight; cancelling them")
		cancelQueries()
		err = hs.Close()
	}
	if serr := <-errc; !errors.Is(serr, http.ErrServerClosed) && err == nil {
		err = serr
	}
	return err
}
