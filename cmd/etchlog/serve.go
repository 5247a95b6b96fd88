package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"time"

	"etchlog/api"
	"etchlog/db"
)

// cmdServe is the production entry: configuration from flags and environment,
// JSON logs, graceful shutdown on SIGINT/SIGTERM.
func cmdServe(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	c, err := parseServer("serve", "Runs the API server until SIGINT or SIGTERM, then drains requests for up to 10 s.\n"+
		"Applies the embedded database migrations at start. Logs are JSON lines on stderr.", args, getenv, stdout, stderr)
	if err != nil {
		return err
	}
	log := c.logger(stderr)
	skey, err := c.logKey()
	if err != nil {
		return err
	}
	store, err := openStore(ctx, c, log)
	if err != nil {
		return err
	}
	defer store.Close()
	if err := startLog(ctx, store, skey, log); err != nil {
		return err
	}
	return serve(ctx, c, store, log, func(base string) {
		fmt.Fprintf(stdout, "etchlog listening on %s\n", base)
	})
}

// serve runs the HTTP server until ctx ends, then drains it for up to 10 s.
// ready is called with the base URL once the listener is open.
// statisticsEvery is how often serve looks for stale table statistics
// when the server's autovacuum is off: autovacuum's own default naptime.
const statisticsEvery = time.Minute

func serve(ctx context.Context, c config, store *db.Store, log *slog.Logger, ready func(base string)) error {
	srv, err := api.New(store, api.Options{Logger: log, BodyLimit: c.BodyLimit, PerUser: c.PerUser})
	if err != nil {
		return err
	}
	ln, err := net.Listen("tcp", c.Addr)
	if err != nil {
		return fmt.Errorf("listen on %s: %w", c.Addr, err)
	}
	hs := &http.Server{Handler: srv, ReadHeaderTimeout: 10 * time.Second, ReadTimeout: 60 * time.Second,
		WriteTimeout: 120 * time.Second, IdleTimeout: 120 * time.Second}
	errc := make(chan error, 1)
	go func() { errc <- hs.Serve(ln) }()
	ready("http://" + ln.Addr().String())
	log.Info("listening", "addr", ln.Addr().String())
	if kept, err := store.StatisticsKept(ctx); err == nil && !kept {
		log.Warn("the database server's autovacuum is off: etchlog analyses its own tables every minute when they have changed by more than autovacuum's default threshold; turn autovacuum on to leave it to the server")
		go store.KeepStatistics(ctx, statisticsEvery, func(tables []string, took time.Duration, err error) {
			if err != nil {
				log.Warn("refreshing table statistics", "err", err, "analysed", tables)
				return
			}
			log.Info("table statistics refreshed", "tables", tables, "took", took.Round(time.Millisecond).String())
		})
	}
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
	}
	log.Info("shutting down")
	sctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	if err := hs.Shutdown(sctx); err != nil {
		return err
	}
	if err := <-errc; !errors.Is(err, http.ErrServerClosed) {
		return err
	}
	return nil
}
