package main

import (
	"context"
	"fmt"
	"io"
	"slices"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"
)

// A mixed run puts a shop's users on the server at once for a fixed time:
// technicians writing coupons, auditors paging the coupon list and
// exporting the site, and weld monitors sending production records. Then,
// given the database, the same mix runs as raw PostgreSQL for the same time
// (INSERT of the same coupon columns, SELECT of the same page, COPY TO of
// the site's coupons and leaves, COPY of the same production rows), and each
// part's rate and p95 latency are printed side by side with the ratio.

// mixedPart is one kind of user: how many run at once and what one of them
// does once through the API and once raw. Each returns how many items
// (coupons, rows, records) the operation carried.
type mixedPart struct {
	name    string
	unit    string
	workers int
	api     func(ctx context.Context, worker, i int) (int, error)
	raw     func(ctx context.Context, conn *pgx.Conn, worker, i int) (int, error)
}

// partResult is what one part did in one phase.
type partResult struct {
	ops, items int
	lat        []time.Duration
	elapsed    time.Duration
}

func (r partResult) itemsPerSecond() float64 {
	if r.elapsed <= 0 {
		return 0
	}
	return float64(r.items) / r.elapsed.Seconds()
}

func (r partResult) p95() time.Duration { return loadResult{lat: r.lat}.pct(95) }

// runMixed runs every part's workers at once for d; op is the part's api or
// raw operation. It stops at d or at the first error.
func runMixed(ctx context.Context, d time.Duration, parts []mixedPart, op func(p mixedPart, worker, i int) (int, error)) ([]partResult, error) {
	ctx, cancel := context.WithTimeout(ctx, d)
	defer cancel()
	out := make([]partResult, len(parts))
	var mu sync.Mutex
	var firstErr error
	var wg sync.WaitGroup
	start := time.Now()
	for k, p := range parts {
		for w := range p.workers {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for i := 0; ctx.Err() == nil; i++ {
					t := time.Now()
					n, err := op(p, w, i)
					lat := time.Since(t)
					mu.Lock()
					switch {
					case err != nil && ctx.Err() == nil && firstErr == nil:
						firstErr = fmt.Errorf("%s: %w", p.name, err)
						cancel()
					case err == nil:
						out[k].ops++
						out[k].items += n
						out[k].lat = append(out[k].lat, lat)
					}
					mu.Unlock()
				}
			}()
		}
	}
	wg.Wait()
	for k := range out {
		out[k].elapsed = time.Since(start)
		slices.Sort(out[k].lat)
	}
	return out, firstErr
}

// printMixed prints each part's rate and p95, and the raw run's beside them
// when there is one.
func printMixed(w io.Writer, parts []mixedPart, api, raw []partResult) {
	fmt.Fprintf(w, "%-44s %12s %9s %12s %9s %7s\n", "part (workers)", "etchlog/s", "p95 ms", "raw/s", "p95 ms", "ratio")
	for k, p := range parts {
		line := fmt.Sprintf("%-44s %12.1f %9.2f", fmt.Sprintf("%s (%d)", p.name, p.workers), api[k].itemsPerSecond(), ms(api[k].p95()))
		if raw != nil {
			ratio := 0.0
			if r := raw[k].itemsPerSecond(); r > 0 {
				ratio = api[k].itemsPerSecond() / r
			}
			line += fmt.Sprintf(" %12.1f %9.2f %7.3f", raw[k].itemsPerSecond(), ms(raw[k].p95()), ratio)
		}
		fmt.Fprintf(w, "%s   [%s/s]\n", line, p.unit)
	}
	if raw != nil {
		fmt.Fprintln(w, "ratio = etchlog rate ÷ raw PostgreSQL rate for the same part, each run mixed with the others for the same time")
	} else {
		fmt.Fprintln(w, "no raw baseline: give -database-url (the server's database) to run the same mix as raw PostgreSQL")
	}
}

// loadMixed runs the mixed scenario: the API phase, then (with dbURL) the raw
// phase on connections of its own, and prints both.
func loadMixed(ctx context.Context, cls mixClients, procID, dbURL string, d time.Duration, m mixCounts, stdout io.Writer) error {
	var proc struct {
		Site string `json:"site"`
	}
	if err := cls.tech.getJSON(ctx, "/v1/procedures/"+procID, &proc); err != nil {
		return fmt.Errorf("load: %w", err)
	}
	schema := ""
	var conns []*pgx.Conn
	if dbURL != "" {
		admin, err := pgx.Connect(ctx, dbURL)
		if err != nil {
			return fmt.Errorf("load: raw baseline: %w", err)
		}
		defer admin.Close(ctx)
		var drop func()
		if schema, drop, err = rawSchema(ctx, admin); err != nil {
			return err
		}
		defer drop()
		for range m.writers + m.pagers + m.exporters + m.producers {
			c, err := pgx.Connect(ctx, dbURL)
			if err != nil {
				return fmt.Errorf("load: raw baseline: %w", err)
			}
			defer c.Close(ctx)
			conns = append(conns, c)
		}
	}
	parts := mixParts(cls, proc.Site, procID, schema, m)
	kept := parts[:0]
	for _, p := range parts {
		if p.workers > 0 {
			kept = append(kept, p)
		}
	}
	parts = kept
	fmt.Fprintf(stdout, "mixed run: %s with etchlog, then %s raw\n", d, d)
	api, err := runMixed(ctx, d, parts, func(p mixedPart, w, i int) (int, error) { return p.api(ctx, w, i) })
	if err != nil {
		return fmt.Errorf("load: %w", err)
	}
	var raw []partResult
	if conns != nil {
		first := map[string]int{}
		n := 0
		for _, p := range parts {
			first[p.name] = n
			n += p.workers
		}
		raw, err = runMixed(ctx, d, parts, func(p mixedPart, w, i int) (int, error) {
			return p.raw(ctx, conns[first[p.name]+w], w, i)
		})
		if err != nil {
			return fmt.Errorf("load: raw: %w", err)
		}
	}
	printMixed(stdout, parts, api, raw)
	return nil
}
