package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/url"
	"slices"
	"sync"
	"time"
)

// cmdLoad drives a running etchlog server with coupon writes and list reads,
// each side by side with a baseline (GET /healthz, which touches no database),
// and prints throughput and latency percentiles with the ratio to the
// baseline. The request count and the time are bounded, and only loopback
// targets are accepted.
func cmdLoad(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	fs := newFlagSet("load", "load [flags]", "Drives a running etchlog (loopback only) with coupon writes and list reads beside a\n"+
		"no-database baseline (GET /healthz) and prints req/s, p50/p95/p99 latency and the ratio.\n"+
		"With -mixed: technicians, auditors and weld monitors at once for -duration, each part's\n"+
		"rate and p95 beside the same mix run as raw PostgreSQL on -database-url.")
	target := fs.String("url", "http://127.0.0.1:8080", "base URL of a running etchlog (loopback only)")
	token := fs.String("token", "demo-technician-token", "technician or engineer token")
	n := fs.Int("n", 2000, "requests per scenario (at most 100000)")
	conc := fs.Int("c", 8, "concurrent clients")
	limit := fs.Duration("max-time", 60*time.Second, "stop each scenario after this long")
	mixed := fs.Bool("mixed", false, "run the mixed scenario instead: every part at once for -duration")
	duration := fs.Duration("duration", 30*time.Second, "mixed: how long each phase (etchlog, then raw) runs (at most 10m)")
	auditorToken := fs.String("auditor-token", "demo-auditor-token-00", "mixed: the auditors' token")
	monitorToken := fs.String("monitor-token", "demo-engineer-token-0", "mixed: the weld monitors' token (another user than -token's: the server admits up to -per-user requests a user at once, 8 by default)")
	dbURL := fs.String("database-url", getenv("DATABASE_URL"), "mixed: the server's database, for the raw baseline; a login that may create a schema (env DATABASE_URL; empty: no baseline)")
	var mc mixCounts
	fs.IntVar(&mc.writers, "writers", 8, "mixed: technicians writing coupons")
	fs.IntVar(&mc.pagers, "pagers", 4, "mixed: auditors paging the coupon list")
	fs.IntVar(&mc.exporters, "exporters", 1, "mixed: auditors exporting the site")
	fs.IntVar(&mc.producers, "producers", 1, "mixed: weld monitors sending production records (500 a request)")
	if err := parseFlags(fs, args, stdout, stderr); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("load: unexpected argument %q", fs.Arg(0))
	}
	u, err := url.Parse(*target)
	if err != nil || !isLoopback(u.Hostname()) {
		return fmt.Errorf("load: -url must be a loopback address (127.0.0.0/8, ::1, localhost), got %q", *target)
	}
	if *n < 1 || *n > 100000 || *conc < 1 || *conc > 256 {
		return fmt.Errorf("load: want 1 <= n <= 100000 and 1 <= c <= 256")
	}
	cl := &client{base: *target, token: *token, http: &http.Client{Timeout: 10 * time.Second}}
	procID, err := cl.firstProcedure(ctx)
	if err != nil {
		return err
	}
	if *mixed {
		if *duration <= 0 || *duration > 10*time.Minute || mc.writers < 0 || mc.pagers < 0 || mc.exporters < 0 || mc.producers < 0 ||
			mc.writers+mc.pagers+mc.exporters+mc.producers == 0 || mc.writers+mc.pagers+mc.exporters+mc.producers > 256 {
			return fmt.Errorf("load: want 0 < duration <= 10m and 1 to 256 workers in all")
		}
		auditor := &client{base: *target, token: *auditorToken, http: &http.Client{Timeout: *duration + time.Minute}}
		monitor := &client{base: *target, token: *monitorToken, http: cl.http}
		return loadMixed(ctx, mixClients{tech: cl, auditor: auditor, monitor: monitor}, procID, *dbURL, *duration, mc, stdout)
	}
	stamp := time.Now().UnixNano()
	scenarios := []struct {
		name string
		do   func(i int) error
	}{
		{"baseline GET /healthz", func(int) error { return cl.do(ctx, "GET", "/healthz", nil, 200) }},
		{"POST /v1/coupons", func(i int) error {
			return cl.do(ctx, "POST", "/v1/coupons", loadCoupon(procID, fmt.Sprintf("LOAD-%d-%d", stamp, i)), 201)
		}},
		{"GET /v1/coupons?limit=50", func(int) error { return cl.do(ctx, "GET", "/v1/coupons?limit=50", nil, 200) }},
	}
	var base float64
	fmt.Fprintf(stdout, "%-28s %8s %10s %9s %9s %9s %7s\n", "scenario", "requests", "req/s", "p50 ms", "p95 ms", "p99 ms", "ratio")
	for k, sc := range scenarios {
		res, err := hammer(ctx, *n, *conc, *limit, sc.do)
		if err != nil {
			return fmt.Errorf("load: %s: %w", sc.name, err)
		}
		if k == 0 {
			base = res.perSecond
		}
		fmt.Fprintf(stdout, "%-28s %8d %10.0f %9.2f %9.2f %9.2f %7.2f\n", sc.name, res.count, res.perSecond,
			ms(res.pct(50)), ms(res.pct(95)), ms(res.pct(99)), base/res.perSecond)
	}
	fmt.Fprintln(stdout, "ratio = baseline req/s ÷ scenario req/s (how many times slower than a request that touches no database)")
	return nil
}

func isLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

func ms(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }

type loadResult struct {
	count     int
	perSecond float64
	lat       []time.Duration
}

func (r loadResult) pct(p int) time.Duration {
	if len(r.lat) == 0 {
		return 0
	}
	return r.lat[min(len(r.lat)-1, len(r.lat)*p/100)]
}

// hammer runs do n times on c workers, stopping early at the time limit or the first error.
func hammer(ctx context.Context, n, c int, limit time.Duration, do func(i int) error) (loadResult, error) {
	ctx, cancel := context.WithTimeout(ctx, limit)
	defer cancel()
	next := make(chan int)
	var mu sync.Mutex
	var lat []time.Duration
	var firstErr error
	var wg sync.WaitGroup
	start := time.Now()
	for w := 0; w < c; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				t := time.Now()
				err := do(i)
				mu.Lock()
				if err != nil && firstErr == nil {
					firstErr = err
					cancel()
				}
				lat = append(lat, time.Since(t))
				mu.Unlock()
			}
		}()
	}
feed:
	for i := 0; i < n; i++ {
		select {
		case next <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(next)
	wg.Wait()
	elapsed := time.Since(start)
	slices.Sort(lat)
	return loadResult{count: len(lat), perSecond: float64(len(lat)) / elapsed.Seconds(), lat: lat}, firstErr
}

type client struct {
	base, token string
	http        *http.Client
}

func (c *client) do(ctx context.Context, method, path string, body any, want int) error {
	var rd io.Reader
	if body != nil {
		b, err := json.Marshal(body)
		if err != nil {
			return err
		}
		rd = bytes.NewReader(b)
	}
	req, err := http.NewRequestWithContext(ctx, method, c.base+path, rd)
	if err != nil {
		return err
	}
	req.Header.Set("Authorization", "Bearer "+c.token)
	req.Header.Set("Content-Type", "application/json")
	res, err := c.http.Do(req)
	if err != nil {
		return err
	}
	defer res.Body.Close()
	msg, _ := io.ReadAll(res.Body)
	if res.StatusCode != want {
		return fmt.Errorf("%s %s: status %d, want %d: %s", method, path, res.StatusCode, want, msg)
	}
	return nil
}

func (c *client) firstProcedure(ctx context.Context) (string, error) {
	req, _ := http.NewRequestWithContext(ctx, "GET", c.base+"/v1/procedures?limit=1", nil)
	req.Header.Set("Authorization", "Bearer "+c.token)
	res, err := c.http.Do(req)
	if err != nil {
		return "", fmt.Errorf("load: %w", err)
	}
	defer res.Body.Close()
	var page struct {
		Items []struct {
			ID string `json:"id"`
		} `json:"items"`
	}
	if err := json.NewDecoder(res.Body).Decode(&page); err != nil || len(page.Items) == 0 {
		return "", fmt.Errorf("load: no procedure to attach coupons to (status %d); run the demo first", res.StatusCode)
	}
	return page.Items[0].ID, nil
}

// loadCoupon is a plausible GMAW fillet coupon; load-test data only.
func loadCoupon(procID, mark string) map[string]any {
	return map[string]any{
		"procedure_id": procID, "coupon_mark": mark, "welder_id": "LOAD", "welded_on": "2026-11-30",
		"joint_type": "fillet", "thickness_mm": 9.5, "pass_number": 1, "current_a": 180, "voltage_v": 21,
		"travel_speed_mm_s": 5, "wire_feed_speed_m_min": 7.6, "ctwd_mm": 14, "wire_diameter_mm": 0.9,
		"polarity": "DCEP", "position": "2F",
	}
}
