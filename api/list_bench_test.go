package api_test

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkCouponListAPI asks GET /v1/coupons?limit=50 from 8 clients at
// once, end to end (token check, the OpenAPI check of the request, the
// list, JSON with 12 significant digits), b.N pages in all, and side by side
// a raw SELECT of a 50-coupon page of the same site and columns from 8
// clients through the service's pool. x-of-raw is the endpoint's pages/s
// over the raw SELECT's. Run with -cpuprofile to see where the endpoint's
// time goes.
func BenchmarkCouponListAPI(b *testing.B) {
	e := newEnv(b)
	proc := e.procedure()
	for i := range 120 {
		e.create("/v1/coupons", "technician", couponBody(proc, "", fmt.Sprintf("LB-%d-%s", i, uniq("C"))))
	}
	if r := e.do(http.MethodGet, "/v1/coupons?limit=50", "auditor", nil); r.status != http.StatusOK {
		b.Fatalf("GET = %d %s", r.status, r.body)
	}
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: 16}}
	endpoint := func() error {
		req, err := http.NewRequest(http.MethodGet, e.url+"/v1/coupons?limit=50", nil)
		if err != nil {
			return err
		}
		req.Header.Set("Authorization", "Bearer "+e.tokens["auditor"])
		resp, err := client.Do(req)
		if err != nil {
			return err
		}
		defer resp.Body.Close()
		if _, err := io.Copy(io.Discard, resp.Body); err != nil {
			return err
		}
		if resp.StatusCode != http.StatusOK {
			return fmt.Errorf("GET = %d", resp.StatusCode)
		}
		return nil
	}
	ctx := context.Background()
	var cols string
	if err := e.store.Pool().QueryRow(ctx, `SELECT string_agg(column_name, ', ' ORDER BY ordinal_position)
		FROM information_schema.columns WHERE table_name = 'coupons'`).Scan(&cols); err != nil {
		b.Fatal(err)
	}
	rawPool := dbtest.RawPool(b, e.store) // the raw page planned with PostgreSQL's defaults
	raw := func() error {
		rows, _ := rawPool.Query(ctx, "SELECT "+cols+" FROM coupons WHERE site = $1 ORDER BY id LIMIT 50", e.site)
		page, err := pgx.CollectRows(rows, pgx.RowToStructByName[db.Coupon])
		if err == nil && len(page) != 50 {
			err = fmt.Errorf("raw page of %d", len(page))
		}
		return err
	}
	b.ResetTimer()
	de, err := dbtest.Clients(8, b.N, endpoint)
	if err != nil {
		b.Fatal(err)
	}
	dr, err := dbtest.Clients(8, b.N, raw)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(float64(b.N)/de.Seconds(), "endpoint-pages/s")
	b.ReportMetric(float64(b.N)/dr.Seconds(), "raw-pages/s")
	b.ReportMetric(dr.Seconds()/de.Seconds(), "x-of-raw")
}
