package predict

import (
	"errors"
	"testing"
)

// TestStreamFitsMatchWholeGroupFits feeds synthetic coupons (invented from
// the model itself) one at a time and compares each streamed fit with the
// whole-group fit of the same coupons, which TestFitPenetrationMatchesGonum
// and TestFitMeltingRate hold to gonum's least squares: coefficients, standard
// errors, residual SD, R², the exponent F test and the identifiability
// diagnostics agree to 1e-10 relative.
func TestStreamFitsMatchWholeGroupFits(t *testing.T) {
	const rel = 1e-10
	near := func(what string, got, want float64) {
		t.Helper()
		if !closeRel(got, want, rel) {
			t.Errorf("%s = %.15g streamed, %.15g whole group", what, got, want)
		}
	}
	for _, n := range []int{5, 40, 3000} {
		samples := synthPenetration(t, uint64(n), n, publishedTruth)
		ps := NewPenetrationStream()
		for _, s := range samples {
			if err := ps.Add(s); err != nil {
				t.Fatal(err)
			}
		}
		for _, model := range []ModelKind{ModelJacksonFixed, ModelJacksonFree} {
			got, err := ps.Fit(model)
			if err != nil {
				t.Fatalf("n=%d %s: %v", n, model, err)
			}
			var want PenetrationFit
			if model == ModelJacksonFree {
				want, err = FitPenetrationFree(samples)
			} else {
				want, err = FitPenetrationFixed(samples)
			}
			if err != nil {
				t.Fatal(err)
			}
			for j := range want.Coef {
				near(string(model)+" coef", got.Coef[j], want.Coef[j])
				near(string(model)+" std_err", got.StdErr[j], want.StdErr[j])
			}
			near(string(model)+" residual_sd_ln", got.ResidualSDLn, want.ResidualSDLn)
			near(string(model)+" r2", got.R2, want.R2)
			near(string(model)+" k_mm", got.KMM, want.KMM)
			if got.N != want.N || got.DoF != want.DoF {
				t.Errorf("%s n/dof = %d/%d, want %d/%d", model, got.N, got.DoF, want.N, want.DoF)
			}
			if model == ModelJacksonFree {
				near("F", got.FTest.F, want.FTest.F)
				near("F p-value", got.FTest.PValue, want.FTest.PValue)
				near("VIF ln I", got.Identifiability.VIFLnCurrent, want.Identifiability.VIFLnCurrent)
				near("corr ln I ln V", got.Identifiability.CorrCurrentVoltage, want.Identifiability.CorrCurrentVoltage)
			}
		}
		ms := NewMeltingStream()
		melt := synthMelting(t, uint64(n), n, 0.0075, 2.0e-6, 0.02)
		for _, s := range melt {
			if err := ms.Add(s); err != nil {
				t.Fatal(err)
			}
		}
		got, err := ms.Fit()
		if err != nil {
			t.Fatal(err)
		}
		want, err := FitMeltingRate(melt)
		if err != nil {
			t.Fatal(err)
		}
		near("alpha", got.AlphaKgPerHA, want.AlphaKgPerHA)
		near("beta", got.BetaKgPerHA2MM, want.BetaKgPerHA2MM)
		near("alpha se", got.AlphaStdErrKgPerHA, want.AlphaStdErrKgPerHA)
		near("beta se", got.BetaStdErrKgPerHA2MM, want.BetaStdErrKgPerHA2MM)
		near("r2 uncentered", got.R2Uncentered, want.R2Uncentered)
	}
}

// TestStreamFitRefusals: a streamed group is refused for the same reasons
// as a whole one (too few coupons, one current only, out-of-bounds values).
func TestStreamFitRefusals(t *testing.T) {
	ps := NewPenetrationStream()
	s := PenetrationSample{ID: "C1", CurrentA: 200, VoltageV: 24, TravelSpeedMMPerS: 5, PenetrationMM: 3}
	if err := ps.Add(s); err != nil {
		t.Fatal(err)
	}
	if _, err := ps.Fit(ModelJacksonFixed); !errors.Is(err, ErrTooFewSamples) {
		t.Errorf("one coupon: %v, want ErrTooFewSamples", err)
	}
	for i := range 6 {
		s.VoltageV, s.TravelSpeedMMPerS = 20+float64(i), 4+float64(i)/2
		if err := ps.Add(s); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := ps.Fit(ModelJacksonFree); !errors.Is(err, ErrDegenerate) {
		t.Errorf("one current: %v, want ErrDegenerate", err)
	}
	bad := s
	bad.CurrentA = 5000
	if err := ps.Add(bad); err == nil {
		t.Error("5000 A accepted")
	}
}

// TestStreamFixedFitOneCurrent: coupons all at one current cannot fit the
// free exponents, but the fixed-exponent fit and its R² still stand, equal
// to the whole-group fit's (R² from the spread of ln P alone).
func TestStreamFixedFitOneCurrent(t *testing.T) {
	samples := synthPenetration(t, 11, 12, publishedTruth)
	for i := range samples {
		samples[i].CurrentA = 200
	}
	ps := NewPenetrationStream()
	for _, s := range samples {
		if err := ps.Add(s); err != nil {
			t.Fatal(err)
		}
	}
	got, err := ps.Fit(ModelJacksonFixed)
	if err != nil {
		t.Fatal(err)
	}
	want, err := FitPenetrationFixed(samples)
	if err != nil {
		t.Fatal(err)
	}
	if !closeRel(got.R2, want.R2, 1e-10) || want.R2 == 0 {
		t.Errorf("fixed fit R² = %.15g streamed, %.15g whole group", got.R2, want.R2)
	}
}
