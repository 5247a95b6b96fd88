package predict

import (
	"encoding/json"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
	"pgregory.net/rapid"
)

// TestPenetrationPredictMatchesGonum checks the stored-fit intervals: after
// a JSON round trip (what a storage layer does), the confidence and
// prediction limits in ln(mm) must equal η̂ ± t·√(x₀ᵀσ̂²(XᵀX)⁻¹x₀) and
// η̂ ± t·√(σ̂² + …) computed with gonum (Cholesky inverse, distuv.StudentsT).
func TestPenetrationPredictMatchesGonum(t *testing.T) {
	samples := synthPenetration(t, 11, 50, publishedTruth)
	fit, err := FitPenetrationFree(samples)
	if err != nil {
		t.Fatalf("FitPenetrationFree error: %v", err)
	}
	raw, err := json.Marshal(fit)
	if err != nil {
		t.Fatalf("json.Marshal: %v", err)
	}
	var stored PenetrationFit
	if err := json.Unmarshal(raw, &stored); err != nil {
		t.Fatalf("json.Unmarshal: %v", err)
	}
	n := len(samples)
	X := mat.NewDense(n, 4, nil)
	y := make([]float64, n)
	for i, s := range samples {
		X.SetRow(i, []float64{1, math.Log(s.CurrentA), math.Log(s.TravelSpeedMMPerS), math.Log(s.VoltageV)})
		y[i] = math.Log(s.PenetrationMM)
	}
	g := fitGonum(t, X, y)
	for _, tc := range []struct {
		name         string
		I, V, S, lvl float64
	}{{"Centre95", 250, 24, 6, 0.95}, {"Edge90", 340, 29, 9.5, 0.90}, {"Outside99", 420, 32, 12, 0.99}} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := stored.Predict(tc.I, tc.V, tc.S, tc.lvl)
			if err != nil {
				t.Fatalf("Predict error: %v", err)
			}
			x0 := mat.NewVecDense(4, []float64{1, math.Log(tc.I), math.Log(tc.S), math.Log(tc.V)})
			var tmp mat.VecDense
			tmp.MulVec(g.xtxInv, x0)
			se := g.sigma * math.Sqrt(mat.Dot(x0, &tmp))
			tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(n - 4)}.Quantile(1 - (1-tc.lvl)/2)
			eta := mat.Dot(x0, mat.NewVecDense(4, g.coef))
			sp := math.Sqrt(g.sigma*g.sigma + se*se)
			for _, c := range []struct {
				name      string
				got, want float64
			}{
				{"MedianMM", got.MedianMM, math.Exp(eta)},
				{"MeanLowMM", got.MeanLowMM, math.Exp(eta - tq*se)},
				{"MeanHighMM", got.MeanHighMM, math.Exp(eta + tq*se)},
				{"PredLowMM", got.PredLowMM, math.Exp(eta - tq*sp)},
				{"PredHighMM", got.PredHighMM, math.Exp(eta + tq*sp)},
			} {
				if !closeRel(c.got, c.want, 1e-9) {
					t.Errorf("Predict(%g A, %g V, %g mm/s, %g).%s = %.12g, want %.12g (gonum)", tc.I, tc.V, tc.S, tc.lvl, c.name, c.got, c.want)
				}
			}
		})
	}
}

// TestPenetrationScaleProperty: multiplying every penetration by a
// constant c shifts only the intercept, by ln c; exponents, standard
// errors and residual SD stay the same (property of the log-linear model).
func TestPenetrationScaleProperty(t *testing.T) {
	rapid.Check(t, func(rt *rapid.T) {
		seed := rapid.Uint64().Draw(rt, "seed")
		c := rapid.Float64Range(0.2, 5).Draw(rt, "c")
		samples := synthPenetration(rt, seed, 15, publishedTruth)
		scaled := append([]PenetrationSample(nil), samples...)
		for i := range scaled {
			scaled[i].PenetrationMM *= c
		}
		a, errA := FitPenetrationFree(samples)
		b, errB := FitPenetrationFree(scaled)
		if errA != nil || errB != nil {
			rt.Skipf("refused (implausible scaled penetration): %v %v", errA, errB)
		}
		if d := b.Coef[0] - a.Coef[0] - math.Log(c); math.Abs(d) > 1e-9 {
			rt.Errorf("intercept shift = %.12g, want ln c = %.12g", b.Coef[0]-a.Coef[0], math.Log(c))
		}
		for j := 1; j < 4; j++ {
			if math.Abs(b.Coef[j]-a.Coef[j]) > 1e-9 || !closeRel(b.StdErr[j], a.StdErr[j], 1e-7) {
				rt.Errorf("%s = %.12g ± %.8g after scaling, want %.12g ± %.8g", a.Terms[j], b.Coef[j], b.StdErr[j], a.Coef[j], a.StdErr[j])
			}
		}
		if !closeRel(b.ResidualSDLn, a.ResidualSDLn, 1e-7) {
			rt.Errorf("ResidualSDLn = %.10g after scaling, want %.10g", b.ResidualSDLn, a.ResidualSDLn)
		}
	})
}
