package main

import (
	"context"
	"io"
	"log/slog"
	"strings"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestDBConns reads the main pool's size from -db-conns, else
// ETCHLOG_DB_CONNS, else db.DefaultConns; refuses a size that is not a
// whole number from 1 to 1000; and opens the service's pool with it.
func TestDBConns(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		env  string
		args []string
		want int
		bad  bool
	}{
		{"", nil, db.DefaultConns, false},
		{"7", nil, 7, false},
		{"7", []string{"-db-conns", "5"}, 5, false},
		{"", []string{"-db-conns", "0"}, 0, true},
		{"many", nil, 0, true},
		{"1001", nil, 0, true},
	} {
		getenv := func(k string) string {
			if k == "ETCHLOG_DB_CONNS" {
				return c.env
			}
			return ""
		}
		cfg, err := parseServer("serve", "", c.args, getenv, io.Discard, io.Discard)
		switch {
		case c.bad && (err == nil || !strings.Contains(err.Error(), "db-conns")):
			t.Errorf("env %q, args %q: err = %v, want a refusal naming db-conns", c.env, c.args, err)
		case !c.bad && (err != nil || cfg.DBConns != c.want):
			t.Errorf("env %q, args %q: DBConns = %d, %v; want %d", c.env, c.args, cfg.DBConns, err, c.want)
		}
	}

	cfg, err := parseServer("serve", "", []string{"-db-conns", "3", "-database-url", dbtest.URL(t)}, func(string) string { return "" }, io.Discard, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	store, err := openStore(context.Background(), cfg, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	defer store.Close()
	if got := store.Pool().Config().MaxConns; got != 3 {
		t.Errorf("the service's pool keeps at most %d connections, want 3 (-db-conns)", got)
	}
}
