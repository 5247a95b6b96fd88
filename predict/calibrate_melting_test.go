package predict

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestFitMeltingRate checks the Lesnewich fit: recovery of α and β from
// synthetic data within 4 SE (self-consistency), and coefficients, SEs,
// uncentred R² and prediction limits against gonum (QR solve, Cholesky
// inverse), the outside reference.
func TestFitMeltingRate(t *testing.T) {
	const alpha, beta = 0.012, 3.2e-6 // invented demo values, kg/(h·A), kg/(h·A²·mm)
	samples := synthMelting(t, 21, 80, alpha, beta, 0.08)
	fit, err := FitMeltingRate(samples)
	if err != nil {
		t.Fatalf("FitMeltingRate error: %v", err)
	}
	if math.Abs(fit.AlphaKgPerHA-alpha) > 4*fit.AlphaStdErrKgPerHA || math.Abs(fit.BetaKgPerHA2MM-beta) > 4*fit.BetaStdErrKgPerHA2MM {
		t.Errorf("FitMeltingRate = α %.5g ± %.2g, β %.5g ± %.2g; want α %g, β %g", fit.AlphaKgPerHA, fit.AlphaStdErrKgPerHA, fit.BetaKgPerHA2MM, fit.BetaStdErrKgPerHA2MM, alpha, beta)
	}
	n := len(samples)
	X := mat.NewDense(n, 2, nil)
	y := make([]float64, n)
	ssy := 0.0
	for i, s := range samples {
		X.SetRow(i, []float64{s.CurrentA, s.ExtensionMM * s.CurrentA * s.CurrentA})
		y[i] = s.MeltingRateKgPerH
		ssy += y[i] * y[i]
	}
	g := fitGonum(t, X, y)
	got := []float64{fit.AlphaKgPerHA, fit.BetaKgPerHA2MM, fit.AlphaStdErrKgPerHA, fit.BetaStdErrKgPerHA2MM, fit.ResidualSDKgPerH, fit.R2Uncentered}
	want := []float64{g.coef[0], g.coef[1], g.se[0], g.se[1], g.sigma, 1 - g.rss/ssy}
	names := []string{"AlphaKgPerHA", "BetaKgPerHA2MM", "AlphaStdErrKgPerHA", "BetaStdErrKgPerHA2MM", "ResidualSDKgPerH", "R2Uncentered"}
	for i := range got {
		if !closeRel(got[i], want[i], 1e-9) {
			t.Errorf("FitMeltingRate.%s = %.12g, want %.12g (gonum)", names[i], got[i], want[i])
		}
	}
	iv, err := fit.Predict(280, 18, 0.95)
	if err != nil {
		t.Fatalf("Predict error: %v", err)
	}
	x0 := mat.NewVecDense(2, []float64{280, 18 * 280 * 280})
	var tmp mat.VecDense
	tmp.MulVec(g.xtxInv, x0)
	se := g.sigma * math.Sqrt(mat.Dot(x0, &tmp))
	mean := mat.Dot(x0, mat.NewVecDense(2, g.coef))
	tq := tQuantile(0.95, n-2)
	if !closeRel(iv.MeanKgPerH, mean, 1e-9) || !closeRel(iv.MeanHighKgPerH-mean, tq*se, 1e-7) ||
		!closeRel(iv.PredHighKgPerH-mean, tq*math.Hypot(g.sigma, se), 1e-7) {
		t.Errorf("Predict(280 A, 18 mm) = %+v, want mean %.10g ± %.6g (CI), ± %.6g (PI) (gonum)", iv, mean, tq*se, tq*math.Hypot(g.sigma, se))
	}
	if l := fit.Lesnewich(); l.AlphaKgPerHA != fit.AlphaKgPerHA || l.BetaKgPerHA2MM != fit.BetaKgPerHA2MM {
		t.Errorf("Lesnewich() = %+v, want the fitted α, β", l)
	}
}
