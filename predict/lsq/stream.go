package lsq

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Stream fits y ≈ X·β from rows given one at a time, in memory that depends
// on the number of coefficients p and not on the number of rows, in one pass
// over the data:
//   - the triangular factor R of X is kept by blocked Householder QR
//     (tall-skinny QR: each block of rows is stacked under the R so far and
//     factored again with gonum's LAPACK), so R is as accurate as a QR of
//     the whole design;
//   - XᵀX, Xᵀy, Σy and Σy² are accumulated in twice the working precision
//     (error-free products and sums, xprec.go);
//   - the coefficients then solve the normal equations by iterative
//     refinement preconditioned with R: β ← β + R⁻¹R⁻ᵀ(Xᵀy − XᵀX·β), the
//     residual evaluated in twice the working precision, and (XᵀX)⁻¹ is
//     refined column by column the same way. R alone would lose digits in
//     proportion to the condition number; the doubled-precision residual
//     wins them back as long as cond(X)·ε < 1 (Björck, Numerical Methods
//     for Least Squares Problems, 1996, on refinement of the normal
//     equations with a QR preconditioner; from memory).
//
// The zero Stream is not usable; make one with NewStream.
type Stream struct {
	p     int
	block *mat.Dense // the R so far (p rows) above up to blockRows new rows
	rows  int        // rows filled in block below the R
	hasR  bool       // block's top p rows hold an R

	n      int
	gram   []acc2 // XᵀX, row-major p×p (upper triangle used)
	xty    []acc2 // Xᵀy
	sx     []acc2 // Σx, per column
	sy     acc2   // Σy
	syy    acc2   // Σy²
	first  []float64
	constC []bool // column j has been the same non-zero value in every row
}

// blockRows is how many rows are gathered before they are folded into R.
const blockRows = 512

// NewStream starts a fit with p coefficients (include a column of ones in
// each row for an intercept).
func NewStream(p int) (*Stream, error) {
	if p <= 0 {
		return nil, fmt.Errorf("%w: p = %d", ErrDimension, p)
	}
	s := &Stream{p: p, block: mat.NewDense(p+blockRows, p, nil),
		gram: make([]acc2, p*p), xty: make([]acc2, p), sx: make([]acc2, p), constC: make([]bool, p)}
	return s, nil
}

// Add takes one row x (length p) and its observation y. It does not keep x.
func (s *Stream) Add(x []float64, y float64) error {
	p := s.p
	if len(x) != p {
		return fmt.Errorf("%w: row has %d values, want %d", ErrDimension, len(x), p)
	}
	if math.IsNaN(y) || math.IsInf(y, 0) {
		return fmt.Errorf("%w: y[%d] = %g", ErrNonFinite, s.n, y)
	}
	for j, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%w: X[%d,%d] = %g", ErrNonFinite, s.n, j, v)
		}
	}
	if s.n == 0 {
		s.first = append([]float64(nil), x...)
		for j, v := range x {
			s.constC[j] = v != 0
		}
	}
	for j, v := range x {
		if v != s.first[j] {
			s.constC[j] = false
		}
		for k := j; k < p; k++ {
			s.gram[j*p+k].addProd(v, x[k])
		}
		s.xty[j].addProd(v, y)
		s.sx[j].add(v)
	}
	s.sy.add(y)
	s.syy.addProd(y, y)
	s.n++

	top := 0
	if s.hasR {
		top = p
	}
	copy(s.block.RawRowView(top+s.rows), x)
	s.rows++
	if s.rows == blockRows {
		s.fold()
	}
	return nil
}

// fold factors the R so far stacked over the gathered rows and keeps the
// new R in the top p rows of the block.
func (s *Stream) fold() {
	p := s.p
	m := s.rows
	if s.hasR {
		m += p
	}
	if m == 0 {
		return
	}
	if m < p { // too few rows for a p×p factor yet: pad with zero rows
		for i := m; i < p; i++ {
			clear(s.block.RawRowView(i))
		}
		m = p
	}
	a := s.block.Slice(0, m, 0, p).(*mat.Dense)
	var qr mat.QR
	qr.Factorize(a)
	var r mat.Dense
	qr.RTo(&r)
	for i := 0; i < p; i++ {
		row := s.block.RawRowView(i)
		for j := 0; j < p; j++ {
			row[j] = r.At(i, j)
		}
	}
	s.hasR, s.rows = true, 0
}

// Solve finishes the fit and returns the coefficients and their statistics.
// Residuals and Leverage are nil (they are one per row); Result.LeverageAt
// gives the leverage of any row from the covariance. Steps counts the
// refinement steps of β̂.
func (s *Stream) Solve() (*Result, error) {
	p, n := s.p, s.n
	if n <= p {
		return nil, fmt.Errorf("%w: n = %d, p = %d", ErrTooFewObservations, n, p)
	}
	s.fold()
	r := blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: p, Stride: p, Data: make([]float64, p*p)}
	for i := 0; i < p; i++ {
		copy(r.Data[i*p+i:i*p+p], s.block.RawRowView(i)[i:])
	}
	// Rank: the reciprocal condition of R with its columns scaled to unit
	// norm (the equilibrated design, as Fit checks it).
	scale := make([]float64, p)
	for j := 0; j < p; j++ {
		var ss float64
		for i := 0; i <= j; i++ {
			ss += r.Data[i*p+j] * r.Data[i*p+j]
		}
		if ss == 0 {
			return nil, fmt.Errorf("%w: a column is all zero", ErrRankDeficient)
		}
		scale[j] = 1 / math.Sqrt(ss)
	}
	eq := blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: p, Stride: p, Data: make([]float64, p*p)}
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			eq.Data[i*p+j] = r.Data[i*p+j] * scale[j]
		}
	}
	for i := 0; i < p; i++ {
		if eq.Data[i*p+i] == 0 {
			return nil, fmt.Errorf("%w: reciprocal condition 0", ErrRankDeficient)
		}
	}
	rc := lapack64.Trcon(lapack.MaxColumnSum, eq, make([]float64, 3*p), make([]int, p))
	if !(rc >= RankTolerance) {
		return nil, fmt.Errorf("%w: reciprocal condition %.3g < %g", ErrRankDeficient, rc, RankTolerance)
	}

	// precond returns R⁻¹R⁻ᵀv in place.
	precond := func(v []float64) {
		blas64.Trsv(blas.Trans, r, blas64.Vector{N: p, Inc: 1, Data: v})
		blas64.Trsv(blas.NoTrans, r, blas64.Vector{N: p, Inc: 1, Data: v})
	}
	// refine solves XᵀX·c = rhs, rhs in twice the working precision.
	refine := func(rhs []acc2) ([]float64, int) {
		c := make([]float64, p)
		d := make([]float64, p)
		for step := 1; step <= DefaultMaxSteps; step++ {
			for j := 0; j < p; j++ {
				a := rhs[j]
				for k := 0; k < p; k++ {
					g := s.gram[min(j, k)*p+max(j, k)]
					a.addProd(g.hi, -c[k])
					a.addProd(g.lo, -c[k])
				}
				d[j] = a.value()
			}
			precond(d)
			var dn, cn float64
			for j := range c {
				c[j] += d[j]
				dn = math.Max(dn, math.Abs(d[j]))
				cn = math.Max(cn, math.Abs(c[j]))
			}
			if dn <= 0x1p-53*cn || dn == 0 {
				return c, step
			}
		}
		return c, DefaultMaxSteps
	}

	res := &Result{N: n, P: p, DoF: n - p, RCond: rc}
	res.Coef, res.Steps = refine(s.xty)

	// RSS = yᵀy − 2βᵀXᵀy + βᵀXᵀXβ, each term in twice the working precision.
	rss := s.syy
	for j := 0; j < p; j++ {
		rss.addProd(-2*res.Coef[j], s.xty[j].hi)
		rss.addProd(-2*res.Coef[j], s.xty[j].lo)
		for k := 0; k < p; k++ {
			g := s.gram[min(j, k)*p+max(j, k)]
			bk := res.Coef[j] * res.Coef[k]
			e := math.FMA(res.Coef[j], res.Coef[k], -bk)
			rss.addProd(g.hi, bk)
			rss.addProd(g.hi, e)
			rss.addProd(g.lo, bk)
		}
	}
	res.RSS = math.Max(rss.value(), 0)
	res.ResidualSD = math.Sqrt(res.RSS / float64(res.DoF))
	for _, c := range s.constC {
		res.Centered = res.Centered || c
	}
	if res.Centered {
		res.TSS = s.YScatter()
	} else {
		res.TSS = math.Max(s.syy.value(), 0)
	}
	if res.TSS > 0 {
		res.R2 = 1 - res.RSS/res.TSS
	}

	// (XᵀX)⁻¹ column by column, refined like β̂.
	sigma2 := res.ResidualSD * res.ResidualSD
	res.XtXInv = mat.NewSymDense(p, nil)
	res.Cov = mat.NewSymDense(p, nil)
	res.StdErr = make([]float64, p)
	cols := mat.NewDense(p, p, nil)
	for j := 0; j < p; j++ {
		e := make([]acc2, p)
		e[j].hi = 1
		col, _ := refine(e)
		cols.SetCol(j, col)
	}
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			v := 0.5 * (cols.At(i, j) + cols.At(j, i))
			res.XtXInv.SetSym(i, j, v)
			res.Cov.SetSym(i, j, sigma2*v)
		}
		res.StdErr[i] = math.Sqrt(res.Cov.At(i, i))
	}
	return res, nil
}

// LeverageAt returns the leverage x·(XᵀX)⁻¹·x of a row x of the fitted
// design (the hat-matrix diagonal entry of that row).
func (res *Result) LeverageAt(x []float64) float64 {
	v := mat.NewVecDense(len(x), append([]float64(nil), x...))
	return mat.Inner(v, res.XtXInv, v)
}

// N is the number of rows added so far.
func (s *Stream) N() int { return s.n }

// Scatter returns the column means of the rows added so far and their
// centred cross-products Σ(xⱼ − x̄ⱼ)(xₖ − x̄ₖ), computed from the sums kept
// in twice the working precision (the input of a correlation matrix).
func (s *Stream) Scatter() (mean []float64, scatter *mat.SymDense) {
	p, n := s.p, float64(s.n)
	mean = make([]float64, p)
	scatter = mat.NewSymDense(p, nil)
	if s.n == 0 {
		return mean, scatter
	}
	for j := 0; j < p; j++ {
		mean[j] = s.sx[j].value() / n
	}
	for j := 0; j < p; j++ {
		for k := j; k < p; k++ {
			a := s.gram[j*p+k]
			a.addProd(-mean[j], s.sx[k].hi)
			a.addProd(-mean[j], s.sx[k].lo)
			scatter.SetSym(j, k, a.value())
		}
	}
	return mean, scatter
}

// YScatter is Σ(y − ȳ)² of the observations added so far, from the sums
// kept in twice the working precision: Σy² − (Σy)²/n.
func (s *Stream) YScatter() float64 {
	if s.n == 0 {
		return 0
	}
	tss := s.syy
	mean := s.sy.value() / float64(s.n)
	tss.addProd(-mean, s.sy.hi)
	tss.addProd(-mean, s.sy.lo)
	return math.Max(tss.value(), 0)
}
