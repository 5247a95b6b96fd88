package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"sync/atomic"
	"testing"

	"etchlog/api"
	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkCouponCreateAPI posts coupons to POST /v1/coupons from 8 and from
// 32 clients at once, end to end (the client's JSON, HTTP on a loopback
// listener, token check, the OpenAPI check of the request, the field
// checks, Store.CreateCoupon, the JSON answer), and side by side a raw pgx
// INSERT of the same columns in one transaction (dbtest.RawCoupon) from as
// many clients through the service's pool, alternating in rounds of
// createRound, after both sides are warmed alike (dbtest.Warm: a new pool
// connection's first statements and a new HTTP connection's first request
// pay for caches and first plans, which a service whose connections live
// long does not) and the warm-up's leaves are logged. x-of-raw is the raw
// INSERT's time over the endpoint's.
// "fresh" writes to a new procedure of a site without any calibration;
// "calibrated" to one whose group (couponBody's) has an active penetration
// calibration, so each create also checks the coupon against it. The
// per-user limit is raised to 64 so that no request is refused with 429. Run
// with -cpuprofile to see where a create's time goes.
func BenchmarkCouponCreateAPI(b *testing.B) {
	e := newEnvWith(b, api.Options{PerUser: 64})
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: 64}}
	var n atomic.Int64 // marks stay unique across the sub-benchmarks' repeated runs
	run := func(name string) {
		for _, clients := range []int{8, 32} {
			proc := e.mustProcedure()
			tmpl, err := json.Marshal(couponBody(proc, "", ""))
			if err != nil {
				b.Fatal(err)
			}
			var raw db.CouponData // the same columns as the posted coupon
			if err := json.Unmarshal(tmpl, &raw); err != nil {
				b.Fatal(err)
			}
			rest := bytes.TrimPrefix(tmpl, []byte(`{"coupon_mark":"",`))
			if len(rest) == len(tmpl) {
				b.Fatalf("coupon body %s does not start with its mark", tmpl)
			}
			b.Run(fmt.Sprintf("%s/c=%d", name, clients), func(b *testing.B) {
				endpoint := func() error {
					body := append(fmt.Appendf(nil, `{"coupon_mark":"E-%d",`, n.Add(1)), rest...)
					req, err := http.NewRequest(http.MethodPost, e.url+"/v1/coupons", bytes.NewReader(body))
					if err != nil {
						return err
					}
					req.Header.Set("Authorization", "Bearer "+e.tokens["technician"])
					req.Header.Set("Content-Type", "application/json")
					resp, err := client.Do(req)
					if err != nil {
						return err
					}
					defer resp.Body.Close()
					answer, err := io.ReadAll(resp.Body)
					if err == nil && resp.StatusCode != http.StatusCreated {
						err = fmt.Errorf("POST /v1/coupons = %d %s", resp.StatusCode, answer)
					}
					return err
				}
				ctx := context.Background()
				insert := func() error {
					return dbtest.RawCoupon(ctx, e.store.Pool(), e.site+"-raw", fmt.Sprintf("R-%d", n.Add(1)), raw)
				}
				if err := dbtest.Warm(clients, endpoint, insert); err != nil {
					b.Fatal(err)
				}
				if err := e.store.AwaitLogged(ctx, e.site); err != nil {
					b.Fatal(err)
				}
				b.ResetTimer()
				inAPI, inRaw := dbtest.TimeRounds(b, clients, b.N, createRound, endpoint, insert)
				b.StopTimer()
				if err := e.store.AwaitLogged(ctx, e.site); err != nil {
					b.Fatal(err)
				}
				b.ReportMetric(float64(inAPI.Nanoseconds())/float64(b.N), "ns/op")
				b.ReportMetric(float64(inRaw.Nanoseconds())/float64(b.N), "raw-ns/op")
				b.ReportMetric(float64(b.N)/inAPI.Seconds(), "creates/s")
				b.ReportMetric(float64(b.N)/inRaw.Seconds(), "raw-inserts/s")
				b.ReportMetric(inRaw.Seconds()/inAPI.Seconds(), "x-of-raw")
			})
		}
	}
	run("fresh")
	e.storeFitCoupons(8, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	decode[map[string]any](b, "activate", e.do(http.MethodPost, "/v1/calibrations/"+cal.ID+"/activate", "engineer",
		map[string]any{"reason": "calibrated group for the create benchmark"}), http.StatusCreated)
	run("calibrated")
}

// createRound is how many creates of one kind run before the other kind's turn.
const createRound = 250
