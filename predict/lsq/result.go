package lsq

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Result is a fitted linear least-squares model.
type Result struct {
	Coef   []float64     // β̂, one per column of X
	StdErr []float64     // standard error of each coefficient, √Cov[j,j]
	Cov    *mat.SymDense // σ̂²·(XᵀX)⁻¹, the coefficient covariance
	// XtXInv is (XᵀX)⁻¹, the unscaled covariance (defined also when σ̂ = 0).
	XtXInv *mat.SymDense

	ResidualSD float64 // σ̂ = √(RSS/DoF)
	RSS        float64 // residual sum of squares Σ rᵢ²
	TSS        float64 // Σ(yᵢ − ȳ)² when Centered, Σ yᵢ² otherwise
	R2         float64 // 1 − RSS/TSS; 0 when TSS is 0
	Centered   bool    // the design has an intercept column

	N, P, DoF int // observations, coefficients, N − P

	Residuals []float64 // rᵢ = yᵢ − xᵢᵀβ̂, evaluated in twice the working precision
	Leverage  []float64 // hat-matrix diagonal hᵢ = ‖Q₁ᵀeᵢ‖²

	RCond float64 // estimated reciprocal condition number of the equilibrated X
	Steps int     // refinement steps taken for β̂
}

// fillResiduals evaluates the residuals, RSS, TSS and R² from the final β̂.
func (res *Result) fillResiduals(x, lo blas64.General, y []float64) {
	n, p := res.N, res.P
	res.Residuals = make([]float64, n)
	constCol := make([]bool, p)
	for j := range constCol {
		constCol[j] = x.Data[j] != 0
	}
	for i := 0; i < n; i++ {
		row := x.Data[i*x.Stride : i*x.Stride+p]
		a := acc2{hi: y[i]}
		for j, v := range row {
			a.addProd(v, -res.Coef[j])
			if v != x.Data[j] {
				constCol[j] = false
			}
		}
		if lo.Data != nil {
			for j, v := range lo.Data[i*lo.Stride : i*lo.Stride+p] {
				a.addProd(v, -res.Coef[j])
			}
		}
		res.Residuals[i] = a.value()
	}
	res.RSS = dot2(res.Residuals, res.Residuals)
	res.ResidualSD = math.Sqrt(res.RSS / float64(res.DoF))
	for _, c := range constCol {
		res.Centered = res.Centered || c
	}
	if res.Centered {
		mean := sum2(y) / float64(n)
		d := make([]float64, n)
		for i, v := range y {
			d[i] = v - mean
		}
		res.TSS = dot2(d, d)
	} else {
		res.TSS = dot2(y, y)
	}
	if res.TSS > 0 {
		res.R2 = 1 - res.RSS/res.TSS
	}
}

// fillCovariance computes (XᵀX)⁻¹ = D·(RᵀR)⁻¹·D, column by column through
// the refined augmented solve when refine is set, else from R directly.
func (res *Result) fillCovariance(f *qrFactor, x, lo blas64.General, refine bool, steps int) {
	p := res.P
	cs := mat.NewDense(p, p, nil)
	if refine {
		zero := make([]float64, f.n)
		c := make([]float64, p)
		for j := 0; j < p; j++ {
			clear(c)
			c[j] = -1
			col, _, _ := f.refine(x, lo, zero, c, steps)
			cs.SetCol(j, col)
		}
	} else {
		// (RᵀR)⁻¹ = R⁻¹·R⁻ᵀ, one column at a time.
		col := make([]float64, p)
		for j := 0; j < p; j++ {
			clear(col)
			col[j] = 1
			f.solveR(true, col)
			f.solveR(false, col)
			cs.SetCol(j, col)
		}
	}
	sigma2 := res.ResidualSD * res.ResidualSD
	res.XtXInv = mat.NewSymDense(p, nil)
	res.Cov = mat.NewSymDense(p, nil)
	res.StdErr = make([]float64, p)
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			v := 0.5 * (cs.At(i, j) + cs.At(j, i)) * f.scale[i] * f.scale[j]
			res.XtXInv.SetSym(i, j, v)
			res.Cov.SetSym(i, j, sigma2*v)
		}
		res.StdErr[i] = math.Sqrt(res.Cov.At(i, i))
	}
}

// leverage returns the hat diagonal from the thin factor Q₁ = Q·[I; 0].
func (f *qrFactor) leverage() []float64 {
	q1 := blas64.General{Rows: f.n, Cols: f.p, Stride: f.p, Data: make([]float64, f.n*f.p)}
	for j := 0; j < f.p; j++ {
		q1.Data[j*f.p+j] = 1
	}
	f.applyQ(false, q1)
	h := make([]float64, f.n)
	for i := range h {
		row := q1.Data[i*f.p : i*f.p+f.p]
		h[i] = dot2(row, row)
	}
	return h
}
