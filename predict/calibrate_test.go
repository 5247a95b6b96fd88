package predict

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// TestFitPenetrationRecovers is a self-consistency check: coupons drawn
// from known coefficients must give estimates within 4 standard errors.
func TestFitPenetrationRecovers(t *testing.T) {
	tr := jacksonTruth{kMM: 0.05, a: 1.2, b: -0.4, c: -0.5, noiseLn: 0.05}
	fit, err := FitPenetrationFree(synthPenetration(t, 1, 200, tr))
	if err != nil {
		t.Fatalf("FitPenetrationFree error: %v", err)
	}
	for j, want := range []float64{math.Log(tr.kMM), tr.a, tr.b, tr.c} {
		if math.Abs(fit.Coef[j]-want) > 4*fit.StdErr[j] {
			t.Errorf("FitPenetrationFree.Coef[%s] = %.4g ± %.2g, want %.4g", fit.Terms[j], fit.Coef[j], fit.StdErr[j], want)
		}
	}
	if !closeRel(fit.ResidualSDLn, tr.noiseLn, 0.15) {
		t.Errorf("FitPenetrationFree.ResidualSDLn = %.4g, want %.4g ± 15%%", fit.ResidualSDLn, tr.noiseLn)
	}
	fixed, err := FitPenetrationFixed(synthPenetration(t, 2, 200, publishedTruth))
	if err != nil {
		t.Fatalf("FitPenetrationFixed error: %v", err)
	}
	if math.Abs(fixed.KMM-publishedTruth.kMM) > 4*fixed.KStdErrMM {
		t.Errorf("FitPenetrationFixed.KMM = %.5g ± %.2g, want %.5g", fixed.KMM, fixed.KStdErrMM, publishedTruth.kMM)
	}
	if k, err := fixed.JacksonK(); err != nil || k.Value != fixed.KMM || k.Units != JacksonUnitsMetric {
		t.Errorf("JacksonK() = %+v, %v; want metric %.5g", k, err, fixed.KMM)
	}
}

// TestFitPenetrationMatchesGonum cross-checks coefficients, standard
// errors, t statistics, R² and the F-test p-value with gonum (mat QR
// solve, Cholesky inverse, stat.RSquaredFrom, stat.MeanStdDev, distuv.F),
// the outside reference.
func TestFitPenetrationMatchesGonum(t *testing.T) {
	const rel = 1e-9
	samples := synthPenetration(t, 3, 60, jacksonTruth{kMM: 0.05, a: 1.25, b: -0.3, c: -0.7, noiseLn: 0.08})
	fit, err := FitPenetrationFree(samples)
	if err != nil {
		t.Fatalf("FitPenetrationFree error: %v", err)
	}
	n := len(samples)
	X := mat.NewDense(n, 4, nil)
	y, yFixed := make([]float64, n), make([]float64, n)
	for i, s := range samples {
		li, ls, lv := math.Log(s.CurrentA), math.Log(s.TravelSpeedMMPerS), math.Log(s.VoltageV)
		X.SetRow(i, []float64{1, li, ls, lv})
		y[i] = math.Log(s.PenetrationMM)
		yFixed[i] = y[i] - (4*li-ls-2*lv)/3
	}
	g := fitGonum(t, X, y)
	fitted := make([]float64, n)
	for i := range fitted {
		fitted[i] = y[i] - (y[i] - mat.Dot(X.RowView(i), mat.NewVecDense(4, g.coef)))
	}
	for j := range g.coef {
		if !closeRel(fit.Coef[j], g.coef[j], rel) || !closeRel(fit.StdErr[j], g.se[j], rel) {
			t.Errorf("FitPenetrationFree %s = %.12g ± %.12g, want %.12g ± %.12g (gonum)", fit.Terms[j], fit.Coef[j], fit.StdErr[j], g.coef[j], g.se[j])
		}
		if got, want := fit.Coef[j]/fit.StdErr[j], g.coef[j]/g.se[j]; !closeRel(got, want, rel) {
			t.Errorf("FitPenetrationFree t[%s] = %.12g, want %.12g (gonum)", fit.Terms[j], got, want)
		}
	}
	if want := stat.RSquaredFrom(fitted, y, nil); !closeRel(fit.R2, want, rel) {
		t.Errorf("FitPenetrationFree.R2 = %.12g, want %.12g (gonum stat.RSquaredFrom)", fit.R2, want)
	}
	mean, sd := stat.MeanStdDev(yFixed, nil)
	rssFixed := sd * sd * float64(n-1)
	fStat := ((rssFixed - g.rss) / 3) / (g.rss / float64(n-4))
	wantP := 1 - distuv.F{D1: 3, D2: float64(n - 4)}.CDF(fStat)
	ft := fit.FTest
	if !closeRel(ft.F, fStat, 1e-8) || !closeRel(ft.PValue, wantP, 1e-6) || ft.DF1 != 3 || ft.DF2 != n-4 {
		t.Errorf("FTest = F %.10g (%d, %d) p %.6g, want F %.10g (3, %d) p %.6g (gonum)", ft.F, ft.DF1, ft.DF2, ft.PValue, fStat, n-4, wantP)
	}
	fixed, err := FitPenetrationFixed(samples)
	if err != nil {
		t.Fatalf("FitPenetrationFixed error: %v", err)
	}
	if !closeRel(fixed.Coef[0], mean, 1e-12) || !closeRel(fixed.StdErr[0], sd/math.Sqrt(float64(n)), 1e-12) {
		t.Errorf("FitPenetrationFixed ln K = %.12g ± %.12g, want %.12g ± %.12g (gonum stat.MeanStdDev)", fixed.Coef[0], fixed.StdErr[0], mean, sd/math.Sqrt(float64(n)))
	}
}

// TestExponentFTest checks the F test's behaviour: with coupons drawn from
// the published exponents the p-value is roughly uniform (at most 4 of 20
// seeds below 0.05; binomial tail probability ≈ 0.016), and with clearly
// different exponents it is tiny.
func TestExponentFTest(t *testing.T) {
	rejected := 0
	for seed := uint64(0); seed < 20; seed++ {
		fit, err := FitPenetrationFree(synthPenetration(t, 100+seed, 40, publishedTruth))
		if err != nil {
			t.Fatalf("FitPenetrationFree(seed %d) error: %v", seed, err)
		}
		if fit.FTest.PValue < 0.05 {
			rejected++
		}
	}
	if rejected > 4 {
		t.Errorf("FTest rejected the published exponents in %d of 20 seeds at 5%%, want at most 4", rejected)
	}
	other := jacksonTruth{kMM: 0.2, a: 1.0, b: -0.5, c: -0.3, noiseLn: 0.05}
	fit, err := FitPenetrationFree(synthPenetration(t, 9, 40, other))
	if err != nil {
		t.Fatalf("FitPenetrationFree error: %v", err)
	}
	if fit.FTest.PValue > 1e-6 {
		t.Errorf("FTest.PValue = %.3g for exponents (1, −0.5, −0.3), want < 1e-6", fit.FTest.PValue)
	}
}

// BenchmarkPenetrationFitFree1e6 fits the free-exponent Jackson model
// (with its F test) to 1,000,000 synthetic coupons.
func BenchmarkPenetrationFitFree1e6(b *testing.B) {
	samples := synthPenetration(b, 1, 1_000_000, publishedTruth)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := FitPenetrationFree(samples); err != nil {
			b.Fatal(err)
		}
	}
}
