package lsq

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// streamFit feeds the rows of a dataset to a Stream and solves it.
func streamFit(tb testing.TB, rows [][]float64, y []float64) *Result {
	tb.Helper()
	s, err := NewStream(len(rows[0]))
	if err != nil {
		tb.Fatal(err)
	}
	for i, r := range rows {
		if err := s.Add(r, y[i]); err != nil {
			tb.Fatal(err)
		}
	}
	res, err := s.Solve()
	if err != nil {
		tb.Fatal(err)
	}
	return res
}

// TestStreamNIST holds the one-pass Stream to the same certified digits as
// Fit with the float64 design (TestFitNIST): coefficients ≥ 12 digits (Filip
// ≥ 7), SDs, residual SD and R² ≥ 8 (Filip's SDs excepted, as there: the
// float64 rounding of its powers alone leaves 7.7 digits).
func TestStreamNIST(t *testing.T) {
	const sdNeed = 8
	tests := nistFitCases // the datasets and digits of TestFitNIST
	var table []string
	for _, tt := range tests {
		c := loadNIST(t, tt.name)
		c.degree = tt.degree
		hi, _ := c.design()
		n, _ := hi.Dims()
		rows := make([][]float64, n)
		for i := range rows {
			rows[i] = hi.RawRowView(i)
		}
		res := streamFit(t, rows, c.y)
		var checks []digitCheck
		for j := range c.beta {
			checks = append(checks, digitCheck{fmt.Sprintf("Stream(%s).B%d", tt.name, j), res.Coef[j], c.beta[j], tt.coefNeed})
			if tt.name != "Filip" {
				checks = append(checks, digitCheck{fmt.Sprintf("Stream(%s).SD(B%d)", tt.name, j), res.StdErr[j], c.sd[j], sdNeed})
			}
		}
		checks = append(checks,
			digitCheck{fmt.Sprintf("Stream(%s).ResidualSD", tt.name), res.ResidualSD, c.resSD, sdNeed},
			digitCheck{fmt.Sprintf("Stream(%s).R2", tt.name), res.R2, c.r2, sdNeed})
		for _, d := range checks {
			if lre(d.est, d.cert) < d.need {
				t.Error(d)
			}
		}
		minCoef, minSD := 15.0, 15.0
		for j := range c.beta {
			minCoef = math.Min(minCoef, lre(res.Coef[j], c.beta[j]))
			minSD = math.Min(minSD, lre(res.StdErr[j], c.sd[j]))
		}
		table = append(table, fmt.Sprintf("%-9s %6.1f %6.1f %6.1f %6.1f %6d", tt.name, minCoef, minSD,
			lre(res.ResidualSD, c.resSD), lre(res.R2, c.r2), res.Steps))
	}
	t.Logf("minimum correct digits (LRE, capped at 15):\n%-9s %6s %6s %6s %6s %6s\n%s",
		"dataset", "coef", "SD", "resSD", "R2", "steps", strings.Join(table, "\n"))
}

// TestStreamMatchesGonum folds many blocks of rows (n far above blockRows)
// and compares with gonum's QR least squares (mat.Dense.Solve, gonum
// v0.17.0) and σ̂²(XᵀX)⁻¹ formed by gonum; the leverage of a row with
// x(XᵀX)⁻¹xᵀ.
func TestStreamMatchesGonum(t *testing.T) {
	const tol = 1e-11
	for _, tc := range []struct {
		name string
		n, p int
	}{{"n50p2", 50, 2}, {"n5000p4", 5000, 4}, {"n20011p6", 20011, 6}} {
		t.Run(tc.name, func(t *testing.T) {
			X, y := randomDesign(t, uint64(tc.n), tc.n, tc.p)
			rows := make([][]float64, tc.n)
			for i := range rows {
				rows[i] = X.RawRowView(i)
			}
			res := streamFit(t, rows, y)
			var want mat.Dense
			if err := want.Solve(X, mat.NewVecDense(tc.n, y)); err != nil {
				t.Fatalf("gonum Solve: %v", err)
			}
			for j := 0; j < tc.p; j++ {
				if d := relDiff(res.Coef[j], want.At(j, 0)); d > tol {
					t.Errorf("Stream.Coef[%d] = %.15g, gonum %.15g (rel %.2g)", j, res.Coef[j], want.At(j, 0), d)
				}
			}
			var xtx, inv mat.Dense
			xtx.Mul(X.T(), X)
			if err := inv.Inverse(&xtx); err != nil {
				t.Fatal(err)
			}
			for j := 0; j < tc.p; j++ {
				sd := math.Sqrt(res.ResidualSD * res.ResidualSD * inv.At(j, j))
				if d := relDiff(res.StdErr[j], sd); d > 1e-9 {
					t.Errorf("Stream.StdErr[%d] = %.15g, gonum %.15g (rel %.2g)", j, res.StdErr[j], sd, d)
				}
			}
			batch, err := Fit(X, y, Options{})
			if err != nil {
				t.Fatal(err)
			}
			for _, i := range []int{0, tc.n / 2, tc.n - 1} {
				if d := relDiff(res.LeverageAt(rows[i]), batch.Leverage[i]); d > 1e-9 {
					t.Errorf("Stream LeverageAt(row %d) = %.15g, Fit %.15g", i, res.LeverageAt(rows[i]), batch.Leverage[i])
				}
			}
			if d := relDiff(res.RSS, batch.RSS); d > 1e-12 {
				t.Errorf("Stream RSS %.15g, Fit %.15g", res.RSS, batch.RSS)
			}
		})
	}
}

// TestStreamMemoryFlat checks that adding rows allocates nothing that grows
// with them: on average well under one allocation per row (a fold every
// blockRows rows allocates a few small p×p factors, which are dropped).
func TestStreamMemoryFlat(t *testing.T) {
	s, err := NewStream(4)
	if err != nil {
		t.Fatal(err)
	}
	row := []float64{1, 5.3, 1.9, 3.2}
	i := 0
	allocs := testing.AllocsPerRun(20000, func() {
		i++
		row[1] = 5 + float64(i%97)/100
		if err := s.Add(row, 1+row[1]); err != nil {
			t.Fatal(err)
		}
	})
	if allocs > 0.1 {
		t.Fatalf("Add allocates %.3f times per row, want O(1) memory (< 0.1 per row)", allocs)
	}
}

// BenchmarkStream1e6 streams the rows of BenchmarkFit1e6 through a Stream:
// the same fit in O(p²) memory.
func BenchmarkStream1e6(b *testing.B) {
	const n = 1_000_000
	rng := rand.New(rand.NewPCG(1, 2))
	rows := make([][]float64, n)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		li := math.Log(100 + 300*rng.Float64())
		ls := math.Log(3 + 9*rng.Float64())
		lv := math.Log(16 + 16*rng.Float64())
		rows[i] = []float64{1, li, ls, lv}
		y[i] = -2 + 4.0/3*li - ls/3 - 2*lv/3 + 0.05*rng.NormFloat64()
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		s, _ := NewStream(4)
		for i, r := range rows {
			if err := s.Add(r, y[i]); err != nil {
				b.Fatal(err)
			}
		}
		if _, err := s.Solve(); err != nil {
			b.Fatal(err)
		}
	}
}
