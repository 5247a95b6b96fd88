package predict

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// looReference computes the diagnostics by their definitions with brute-
// force leave-one-out refits in gonum (the outside reference): leverage
// xᵢᵀ(XᵀX)⁻¹xᵢ, external t = eᵢ/(σ̂₍ᵢ₎√(1−hᵢ)), Cook's D = Σⱼ(ŷⱼ − ŷⱼ₍ᵢ₎)²/(p·σ̂²)
// and whether yᵢ lies outside the prediction interval of the fit without i.
func looReference(t *testing.T, X *mat.Dense, y []float64, level float64) []SampleDiagnostic {
	t.Helper()
	n, p := X.Dims()
	full := fitGonum(t, X, y)
	out := make([]SampleDiagnostic, n)
	for i := 0; i < n; i++ {
		xi := X.RowView(i)
		var tmp mat.VecDense
		tmp.MulVec(full.xtxInv, xi)
		h := mat.Dot(xi, &tmp)
		e := y[i] - mat.Dot(xi, mat.NewVecDense(p, full.coef))
		Xd := mat.NewDense(n-1, p, nil)
		yd := make([]float64, 0, n-1)
		for k, r := 0, 0; k < n; k++ {
			if k != i {
				Xd.SetRow(r, mat.Row(nil, k, X))
				yd = append(yd, y[k])
				r++
			}
		}
		loo := fitGonum(t, Xd, yd)
		cook := 0.0
		for k := 0; k < n; k++ {
			d := mat.Dot(X.RowView(k), mat.NewVecDense(p, full.coef)) - mat.Dot(X.RowView(k), mat.NewVecDense(p, loo.coef))
			cook += d * d
		}
		tmp.MulVec(loo.xtxInv, xi)
		sp := loo.sigma * math.Sqrt(1+mat.Dot(xi, &tmp))
		tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(n - 1 - p)}.Quantile(1 - (1-level)/2)
		pred := mat.Dot(xi, mat.NewVecDense(p, loo.coef))
		out[i] = SampleDiagnostic{
			Residual: e, Leverage: h,
			StudentizedInternal: e / (full.sigma * math.Sqrt(1-h)),
			StudentizedExternal: e / (loo.sigma * math.Sqrt(1-h)),
			CooksDistance:       cook / (float64(p) * full.sigma * full.sigma),
			OutsidePrediction:   math.Abs(y[i]-pred) > tq*sp,
		}
	}
	return out
}

// TestDiagnosticsMatchLeaveOneOut compares DiagnosePenetration (free model,
// one planted outlier) and DiagnoseMeltingRate with looReference.
func TestDiagnosticsMatchLeaveOneOut(t *testing.T) {
	const level = 0.95
	pen := synthPenetration(t, 31, 30, publishedTruth)
	pen[7].PenetrationMM *= 1.4 // planted outlier, +0.34 in ln
	melt := synthMelting(t, 32, 25, 0.012, 3.2e-6, 0.08)
	melt[3].MeltingRateKgPerH += 1.5
	Xp, yp := mat.NewDense(len(pen), 4, nil), make([]float64, len(pen))
	for i, s := range pen {
		Xp.SetRow(i, []float64{1, math.Log(s.CurrentA), math.Log(s.TravelSpeedMMPerS), math.Log(s.VoltageV)})
		yp[i] = math.Log(s.PenetrationMM)
	}
	Xm, ym := mat.NewDense(len(melt), 2, nil), make([]float64, len(melt))
	for i, s := range melt {
		Xm.SetRow(i, []float64{s.CurrentA, s.ExtensionMM * s.CurrentA * s.CurrentA})
		ym[i] = s.MeltingRateKgPerH
	}
	dp, errP := DiagnosePenetration(pen, ModelJacksonFree, level)
	dm, errM := DiagnoseMeltingRate(melt, level)
	if errP != nil || errM != nil {
		t.Fatalf("Diagnose errors: %v, %v", errP, errM)
	}
	for _, tc := range []struct {
		name    string
		got     Diagnostics
		want    []SampleDiagnostic
		p       int
		outlier int
	}{{"PenetrationFree", dp, looReference(t, Xp, yp, level), 4, 7}, {"MeltingRate", dm, looReference(t, Xm, ym, level), 2, 3}} {
		t.Run(tc.name, func(t *testing.T) {
			// Screening cut-offs: leverage above twice its mean 2p/n (Hoaglin and
			// Welsch, "The hat matrix in regression and ANOVA", The American
			// Statistician 32(1), 1978, from memory); Cook's D above 4/n (common
			// practice, no source).
			n := float64(len(tc.want))
			levCut, cookCut := 2*float64(tc.p)/n, 4/n
			if !closeRel(tc.got.LeverageCutoff, levCut, 1e-15) || !closeRel(tc.got.CooksDistanceCutoff, cookCut, 1e-15) {
				t.Errorf("cut-offs = %g, %g; want 2p/n = %g, 4/n = %g", tc.got.LeverageCutoff, tc.got.CooksDistanceCutoff, levCut, cookCut)
			}
			marked := 0
			for i, w := range tc.want {
				g := tc.got.Samples[i]
				if g.HighLeverage != (w.Leverage > levCut) || g.HighCooksDistance != (w.CooksDistance > cookCut) {
					t.Errorf("sample %d marks high_leverage %v, high_cooks_distance %v; want %v (h %.4g vs %.4g), %v (D %.4g vs %.4g)",
						i, g.HighLeverage, g.HighCooksDistance, w.Leverage > levCut, w.Leverage, levCut, w.CooksDistance > cookCut, w.CooksDistance, cookCut)
				}
				if g.HighCooksDistance {
					marked++
				}
				for _, c := range []struct {
					name      string
					got, want float64
				}{{"Residual", g.Residual, w.Residual}, {"Leverage", g.Leverage, w.Leverage},
					{"StudentizedInternal", g.StudentizedInternal, w.StudentizedInternal},
					{"StudentizedExternal", g.StudentizedExternal, w.StudentizedExternal},
					{"CooksDistance", g.CooksDistance, w.CooksDistance}} {
					if !closeRel(c.got, c.want, 1e-7) {
						t.Errorf("sample %d %s = %.10g, want %.10g (leave-one-out, gonum)", i, c.name, c.got, c.want)
					}
				}
				if g.OutsidePrediction != w.OutsidePrediction {
					t.Errorf("sample %d OutsidePrediction = %v, want %v (leave-one-out PI, gonum)", i, g.OutsidePrediction, w.OutsidePrediction)
				}
			}
			if !tc.got.Samples[tc.outlier].OutsidePrediction {
				t.Errorf("planted outlier %d OutsidePrediction = false, want true", tc.outlier)
			}
			if !tc.got.Samples[tc.outlier].HighCooksDistance || marked == len(tc.want) {
				t.Errorf("planted outlier %d high_cooks_distance %v with %d of %d marked; want it marked, not all",
					tc.outlier, tc.got.Samples[tc.outlier].HighCooksDistance, marked, len(tc.want))
			}
		})
	}
}

// TestDiagnoseFixed checks the fixed-exponent diagnostics: every leverage
// is 1/n (a mean has equal leverage) and Cook's D = r²/(n−1) here.
func TestDiagnoseFixed(t *testing.T) {
	pen := synthPenetration(t, 41, 12, publishedTruth)
	d, err := DiagnosePenetration(pen, ModelJacksonFixed, 0.95)
	if err != nil {
		t.Fatalf("DiagnosePenetration error: %v", err)
	}
	if d.Response != ResponseLnPenetrationMM || len(d.Samples) != len(pen) {
		t.Fatalf("DiagnosePenetration = %s with %d samples, want %s with %d", d.Response, len(d.Samples), ResponseLnPenetrationMM, len(pen))
	}
	for i, s := range d.Samples {
		r := s.StudentizedInternal
		if !closeRel(s.Leverage, 1.0/12, 1e-15) || !closeRel(s.CooksDistance, r*r/11, 1e-12) {
			t.Errorf("sample %d leverage %.15g, Cook's D %.12g; want %.15g, %.12g", i, s.Leverage, s.CooksDistance, 1.0/12, r*r/11)
		}
		if s.HighLeverage { // equal leverage p/n is half the 2p/n cut-off
			t.Errorf("sample %d high_leverage with leverage 1/n", i)
		}
	}
	if _, err := DiagnosePenetration(pen, ModelLesnewich, 0.95); err == nil {
		t.Errorf("DiagnosePenetration(%s) error = nil, want an error", ModelLesnewich)
	}
}
