package db_test

import (
	"context"
	"math"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestFitGroupMatchesCalibration fits each model to the fixture group by
// streaming (Store.FitGroup) and compares with the calibration stored over
// the same coupons (held to predict's whole-group fits, themselves checked
// against gonum): coefficients and standard errors to 1e-10 relative.
func TestFitGroupMatchesCalibration(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	storeFitCoupons(t, s, site, p.ID, 12)
	arc := 3.5
	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-10*math.Abs(want) {
			t.Errorf("%s = %.15g streamed, %.15g stored", what, got, want)
		}
	}
	for _, model := range []db.CalibrationModel{db.CalibrationJacksonFixed, db.CalibrationJacksonFree, db.CalibrationLesnewich} {
		sp := spec(model)
		if model == db.CalibrationLesnewich {
			sp.ArcLengthMM = &arc
		}
		c, err := s.CreateCalibration(ctx, actor(site), sp)
		if err != nil {
			t.Fatalf("%s: CreateCalibration: %v", model, err)
		}
		got, err := s.FitGroup(ctx, site, sp.Filter(), model, arc)
		if err != nil {
			t.Fatalf("%s: FitGroup: %v", model, err)
		}
		if want := c.Fit.Penetration; want != nil {
			for j := range want.Coef {
				near(string(model)+" coef", got.Penetration.Coef[j], want.Coef[j])
				near(string(model)+" std_err", got.Penetration.StdErr[j], want.StdErr[j])
			}
			near(string(model)+" r2", got.Penetration.R2, want.R2)
			if got.Penetration.N != want.N {
				t.Errorf("%s n = %d, want %d", model, got.Penetration.N, want.N)
			}
		} else {
			want := c.Fit.Melting
			near("alpha", got.Melting.AlphaKgPerHA, want.AlphaKgPerHA)
			near("beta", got.Melting.BetaKgPerHA2MM, want.BetaKgPerHA2MM)
			near("beta se", got.Melting.BetaStdErrKgPerHA2MM, want.BetaStdErrKgPerHA2MM)
		}
	}
}
