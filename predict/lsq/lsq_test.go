package lsq

import (
	"errors"
	"math"
	"math/big"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// randomDesign returns an n×p design with an intercept column and uniform
// regressors, and a response from known coefficients plus normal noise.
func randomDesign(tb testing.TB, seed uint64, n, p int) (*mat.Dense, []float64) {
	tb.Helper()
	rng := rand.New(rand.NewPCG(seed, 1))
	X := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		X.Set(i, 0, 1)
		y[i] = 0.5 + rng.NormFloat64()*0.1
		for j := 1; j < p; j++ {
			v := rng.Float64()*4 - 2
			X.Set(i, j, v)
			y[i] += float64(j) * v
		}
	}
	return X, y
}

// relDiff is |a−b|/|b| (or |a−b| when b = 0).
func relDiff(a, b float64) float64 {
	if b == 0 {
		return math.Abs(a)
	}
	return math.Abs(a-b) / math.Abs(b)
}

// TestFitMatchesGonum compares Fit with gonum on well-conditioned random
// data: coefficients with mat.Dense.Solve (QR least squares), covariance
// and leverages with σ̂²(XᵀX)⁻¹ and X(XᵀX)⁻¹Xᵀ formed by gonum, and R²
// with stat.RSquaredFrom (reference: gonum v0.17.0).
func TestFitMatchesGonum(t *testing.T) {
	const tol = 1e-11
	for _, tc := range []struct {
		name string
		n, p int
	}{{"n50p2", 50, 2}, {"n200p4", 200, 4}, {"n1000p6", 1000, 6}} {
		t.Run(tc.name, func(t *testing.T) {
			X, y := randomDesign(t, uint64(tc.n), tc.n, tc.p)
			res, err := Fit(X, y, Options{})
			if err != nil {
				t.Fatalf("Fit error: %v", err)
			}
			var want mat.Dense
			if err := want.Solve(X, mat.NewVecDense(tc.n, y)); err != nil {
				t.Fatalf("gonum Solve: %v", err)
			}
			var xtx mat.SymDense
			xtx.SymOuterK(1, X.T())
			var chol mat.Cholesky
			if !chol.Factorize(&xtx) {
				t.Fatal("gonum Cholesky failed")
			}
			var inv mat.SymDense
			if err := chol.InverseTo(&inv); err != nil {
				t.Fatalf("gonum InverseTo: %v", err)
			}
			s2 := res.ResidualSD * res.ResidualSD
			for j := 0; j < tc.p; j++ {
				if d := relDiff(res.Coef[j], want.At(j, 0)); d > tol {
					t.Errorf("Fit.Coef[%d] = %.15g, want %.15g (gonum Solve), rel diff %.2g", j, res.Coef[j], want.At(j, 0), d)
				}
				for k := 0; k < tc.p; k++ {
					if d := relDiff(res.Cov.At(j, k), s2*inv.At(j, k)); d > 1e-9 {
						t.Errorf("Fit.Cov[%d,%d] = %.15g, want %.15g (gonum Cholesky inverse)", j, k, res.Cov.At(j, k), s2*inv.At(j, k))
					}
				}
			}
			fitted := make([]float64, tc.n)
			for i := range fitted {
				fitted[i] = y[i] - res.Residuals[i]
				row := X.RawRowView(i)
				var h mat.VecDense
				h.MulVec(&inv, mat.NewVecDense(tc.p, row))
				if want := mat.Dot(&h, mat.NewVecDense(tc.p, row)); relDiff(res.Leverage[i], want) > 1e-9 {
					t.Errorf("Fit.Leverage[%d] = %.15g, want %.15g (gonum x·(XᵀX)⁻¹·x)", i, res.Leverage[i], want)
				}
			}
			if want := stat.RSquaredFrom(fitted, y, nil); relDiff(res.R2, want) > tol {
				t.Errorf("Fit.R2 = %.15g, want %.15g (gonum stat.RSquaredFrom)", res.R2, want)
			}
		})
	}
}

// TestFitSimpleRegressionGonum checks the straight-line case against
// stat.LinearRegression and stat.RSquared (reference: gonum v0.17.0).
func TestFitSimpleRegressionGonum(t *testing.T) {
	X, y := randomDesign(t, 7, 120, 2)
	x := mat.Col(nil, 1, X)
	alpha, beta := stat.LinearRegression(x, y, nil, false)
	res, err := Fit(X, y, Options{})
	if err != nil {
		t.Fatalf("Fit error: %v", err)
	}
	if d := relDiff(res.Coef[0], alpha); d > 1e-12 {
		t.Errorf("Fit.Coef[0] = %.15g, want %.15g (stat.LinearRegression alpha)", res.Coef[0], alpha)
	}
	if d := relDiff(res.Coef[1], beta); d > 1e-12 {
		t.Errorf("Fit.Coef[1] = %.15g, want %.15g (stat.LinearRegression beta)", res.Coef[1], beta)
	}
	if want := stat.RSquared(x, y, nil, alpha, beta); relDiff(res.R2, want) > 1e-12 {
		t.Errorf("Fit.R2 = %.15g, want %.15g (stat.RSquared)", res.R2, want)
	}
	if !res.Centered {
		t.Errorf("Fit.Centered = false, want true for a design with an intercept column")
	}
}

// TestFitErrors checks that bad designs are refused with the right sentinel.
func TestFitErrors(t *testing.T) {
	collinear := mat.NewDense(5, 3, []float64{1, 1, 3, 1, 2, 3, 1, 3, 3, 1, 4, 3, 1, 5, 3})
	zeroCol := mat.NewDense(4, 2, []float64{1, 0, 2, 0, 3, 0, 4, 0})
	nanX := mat.NewDense(3, 1, []float64{1, math.NaN(), 2})
	ok := mat.NewDense(3, 2, []float64{1, 1, 1, 2, 1, 4})
	tests := []struct {
		name string
		x    *mat.Dense
		y    []float64
		opt  Options
		want error
	}{
		{"ErrTooFewObservations", mat.NewDense(2, 2, []float64{1, 1, 1, 2}), []float64{1, 2}, Options{}, ErrTooFewObservations},
		{"ErrRankDeficientCollinear", collinear, []float64{1, 2, 3, 4, 6}, Options{}, ErrRankDeficient},
		{"ErrRankDeficientZeroColumn", zeroCol, []float64{1, 2, 3, 4}, Options{}, ErrRankDeficient},
		{"ErrNonFiniteX", nanX, []float64{1, 2, 3}, Options{}, ErrNonFinite},
		{"ErrNonFiniteY", ok, []float64{1, math.Inf(1), 3}, Options{}, ErrNonFinite},
		{"ErrDimensionY", ok, []float64{1, 2}, Options{}, ErrDimension},
		{"ErrDimensionXLo", ok, []float64{1, 2, 3}, Options{XLo: mat.NewDense(3, 1, nil)}, ErrDimension},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, err := Fit(tt.x, tt.y, tt.opt)
			if !errors.Is(err, tt.want) {
				t.Errorf("Fit() = %v, %v; want error %v", res, err, tt.want)
			}
		})
	}
}

// TestDot2 checks the compensated dot product on sums with heavy
// cancellation against exact math/big arithmetic (reference: Go math/big)
// within the published Dot2 error bound |res − xᵀy| ≤ u·|xᵀy| + γₙ²·Σ|xᵢyᵢ|,
// γₙ = n·u/(1 − n·u) (Ogita, Rump and Oishi, accurate sum and dot product).
func TestDot2(t *testing.T) {
	tests := []struct {
		name string
		x, y []float64
	}{
		{"Cancel", []float64{1e16, 1, -1e16}, []float64{1, 1, 1}},
		{"ProductError", []float64{1 + 0x1p-30, -1}, []float64{1 - 0x1p-30, 1}},
		{"Mixed", []float64{3.1, 1e20, -2.7, -1e20, 0.1}, []float64{1.7, 3, 4.4, 3, 1}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			exact := new(big.Float).SetPrec(4096)
			for i := range tt.x {
				p := new(big.Float).SetPrec(4096).SetFloat64(tt.x[i])
				exact.Add(exact, p.Mul(p, new(big.Float).SetFloat64(tt.y[i])))
			}
			want, _ := exact.Float64()
			n := float64(len(tt.x))
			gamma := n * epsilon / (1 - n*epsilon)
			abs := 0.0
			for i := range tt.x {
				abs += math.Abs(tt.x[i] * tt.y[i])
			}
			bound := epsilon*math.Abs(want) + gamma*gamma*abs
			if got := dot2(tt.x, tt.y); math.Abs(got-want) > bound {
				t.Errorf("dot2(%v, %v) = %.17g, want %.17g ± %.3g (exact)", tt.x, tt.y, got, want, bound)
			}
		})
	}
}

// BenchmarkFit1e6 fits 1,000,000 rows × 4 columns: an intercept and three
// log regressors (ln current, ln travel speed, ln voltage) in shop ranges.
func BenchmarkFit1e6(b *testing.B) {
	const n = 1_000_000
	rng := rand.New(rand.NewPCG(1, 2))
	X := mat.NewDense(n, 4, nil)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		li := math.Log(100 + 300*rng.Float64())
		ls := math.Log(3 + 9*rng.Float64())
		lv := math.Log(16 + 16*rng.Float64())
		X.SetRow(i, []float64{1, li, ls, lv})
		y[i] = -2 + 4.0/3*li - ls/3 - 2*lv/3 + 0.05*rng.NormFloat64()
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := Fit(X, y, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
