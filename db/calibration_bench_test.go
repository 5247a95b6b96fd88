package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// BenchmarkCalibrationFit fits the free-exponent Jackson model over N stored
// coupons end to end (select the group's current coupons and sections, fit,
// store the result with its audit event, one transaction) against the
// predict fit alone on the same samples. The end-to-end run reports
// ratio_to_fit_alone: its time per fit over the fit alone's, timed in the
// same run.
func BenchmarkCalibrationFit(b *testing.B) {
	s, ctx := dbtest.Store(b), context.Background()
	for _, n := range []int{20, 200} {
		site := dbtest.Site(b) + fmt.Sprint(n)
		p, err := s.CreateProcedure(ctx, actor(site), procedureData("WPS-BENCH"))
		if err != nil {
			b.Fatal(err)
		}
		storeFitCoupons(b, s, site, p.ID, n)
		samples, err := s.PenetrationSamples(ctx, site, db.SampleFilter{Group: fitGroup})
		if err != nil || len(samples) != n {
			b.Fatalf("PenetrationSamples = %d (err %v), want %d", len(samples), err, n)
		}
		fitAlone := func() {
			if _, err := predict.FitPenetrationFree(samples); err != nil {
				b.Fatal(err)
			}
		}
		b.Run(fmt.Sprintf("N=%d/predict_only", n), func(b *testing.B) {
			for b.Loop() {
				fitAlone()
			}
		})
		b.Run(fmt.Sprintf("N=%d/end_to_end", n), func(b *testing.B) {
			start := time.Now()
			for b.Loop() {
				if _, err := s.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFree)); err != nil {
					b.Fatal(err)
				}
			}
			e2e := time.Since(start)
			start = time.Now()
			for range b.N {
				fitAlone()
			}
			b.ReportMetric(float64(e2e)/float64(time.Since(start)), "ratio_to_fit_alone")
		})
	}
}
