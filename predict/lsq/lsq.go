// Package lsq fits general linear least-squares models y ≈ X·β accurately
// enough to reproduce the NIST StRD certified values: Householder QR of
// the column-equilibrated design (gonum LAPACK), Björck's iterative
// refinement of the augmented system with residuals accumulated in twice
// the working precision, and a covariance refined the same way.
package lsq

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Errors returned by Fit.
var (
	// ErrTooFewObservations means n ≤ p: no degrees of freedom remain.
	ErrTooFewObservations = errors.New("lsq: too few observations")
	// ErrRankDeficient means the design columns are (numerically) linearly
	// dependent, so the coefficients are not determined by the data.
	ErrRankDeficient = errors.New("lsq: rank-deficient design")
	// ErrNonFinite means X or y holds a NaN or an infinity.
	ErrNonFinite = errors.New("lsq: non-finite input")
	// ErrDimension means X and y do not match or X has no columns.
	ErrDimension = errors.New("lsq: dimension mismatch")
)

// DefaultMaxSteps is the refinement step limit used when Options.MaxSteps is 0.
const DefaultMaxSteps = 30

// RankTolerance is the smallest accepted reciprocal condition number of
// the equilibrated design; below it the design counts as rank-deficient.
const RankTolerance = 1e-14

// covRefineCond is the condition number above which the covariance is
// refined: below it (RᵀR)⁻¹ from the float64 factor already has ~13 digits.
const covRefineCond = 1e3

// Options tunes Fit. The zero value is the accurate default.
type Options struct {
	// MaxSteps caps the refinement steps per solve; 0 means DefaultMaxSteps.
	MaxSteps int
	// NoRefinement returns the plain Householder QR solution and the
	// unrefined covariance (for comparisons and diagnostics of the method).
	NoRefinement bool
	// XLo, if not nil, is the low-order part of a double-length design
	// X + XLo (same shape as X). Use it when the design entries are computed
	// values (powers, logarithms) whose float64 rounding would otherwise
	// perturb an ill-conditioned problem: the residuals, and so the refined
	// coefficients and covariance, then honour both parts, while the QR
	// factors, rank check and leverages use X alone.
	XLo *mat.Dense
}

// Fit solves min‖y − X·β‖₂ for the n×p design X (include a column of ones
// for an intercept) and returns the coefficients with their statistics.
// R² is centred when X has a constant non-zero column (an intercept,
// detected automatically) and uncentred otherwise; Result.Centered says
// which. Fit does not modify X or y.
func Fit(x *mat.Dense, y []float64, opt Options) (*Result, error) {
	n, p := x.Dims()
	if p == 0 || len(y) != n {
		return nil, fmt.Errorf("%w: X is %d×%d, y has %d", ErrDimension, n, p, len(y))
	}
	if n <= p {
		return nil, fmt.Errorf("%w: n = %d, p = %d", ErrTooFewObservations, n, p)
	}
	raw := x.RawMatrix()
	if err := checkFinite(raw.Data, raw.Stride, n, p, y); err != nil {
		return nil, err
	}
	var lo blas64.General
	if opt.XLo != nil {
		if r, c := opt.XLo.Dims(); r != n || c != p {
			return nil, fmt.Errorf("%w: XLo is %d×%d, X is %d×%d", ErrDimension, r, c, n, p)
		}
		lo = opt.XLo.RawMatrix()
		if err := checkFinite(lo.Data, lo.Stride, n, p, y); err != nil {
			return nil, err
		}
	}
	f, ok := newQRFactor(raw)
	if !ok {
		return nil, fmt.Errorf("%w: a column is all zero", ErrRankDeficient)
	}
	rc := f.rcond()
	if !(rc >= RankTolerance) {
		return nil, fmt.Errorf("%w: reciprocal condition %.3g < %g", ErrRankDeficient, rc, RankTolerance)
	}
	steps := opt.MaxSteps
	if steps <= 0 {
		steps = DefaultMaxSteps
	}
	if opt.NoRefinement {
		steps = 1
	}
	res := &Result{N: n, P: p, DoF: n - p, RCond: rc}
	xs, _, used := f.refine(raw, lo, y, make([]float64, p), steps)
	res.Steps = used
	res.Coef = make([]float64, p)
	for j := range xs {
		res.Coef[j] = xs[j] * f.scale[j]
	}
	res.fillResiduals(raw, lo, y)
	refineCov := !opt.NoRefinement && 1/rc > covRefineCond
	res.fillCovariance(f, raw, lo, refineCov, steps)
	res.Leverage = f.leverage()
	return res, nil
}

// checkFinite reports ErrNonFinite for the first NaN or infinity.
func checkFinite(data []float64, stride, n, p int, y []float64) error {
	for i := 0; i < n; i++ {
		for j, v := range data[i*stride : i*stride+p] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%w: X[%d,%d] = %v", ErrNonFinite, i, j, v)
			}
		}
		if math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
			return fmt.Errorf("%w: y[%d] = %v", ErrNonFinite, i, y[i])
		}
	}
	return nil
}
