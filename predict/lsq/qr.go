package lsq

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// qrFactor is the Householder QR factorization A·D = Q·[R; 0] of the
// column-equilibrated design, computed by LAPACK's Geqrf (gonum). D is
// diagonal with powers of two, so scaling and unscaling are exact.
type qrFactor struct {
	n, p  int
	a     blas64.General // reflectors below the diagonal, R on and above
	tau   []float64
	scale []float64 // D: column j of the design is multiplied by scale[j]
	work  []float64
}

// newQRFactor copies X, scales each column to unit 2-norm (rounded to a
// power of two) and factorizes. It reports false when a column is zero.
func newQRFactor(x blas64.General) (*qrFactor, bool) {
	n, p := x.Rows, x.Cols
	f := &qrFactor{n: n, p: p, tau: make([]float64, p), scale: make([]float64, p)}
	f.a = blas64.General{Rows: n, Cols: p, Stride: p, Data: make([]float64, n*p)}
	norms := make([]float64, p)
	for i := 0; i < n; i++ {
		row := x.Data[i*x.Stride : i*x.Stride+p]
		for j, v := range row {
			norms[j] = math.Hypot(norms[j], v)
		}
	}
	for j, nrm := range norms {
		if nrm == 0 {
			return nil, false
		}
		// Equilibration by an exact power of two (Frexp): no rounding.
		_, e := math.Frexp(nrm)
		f.scale[j] = math.Ldexp(1, -e)
	}
	for i := 0; i < n; i++ {
		src := x.Data[i*x.Stride : i*x.Stride+p]
		dst := f.a.Data[i*p : i*p+p]
		for j, v := range src {
			dst[j] = v * f.scale[j]
		}
	}
	query := make([]float64, 1)
	lapack64.Geqrf(f.a, f.tau, query, -1)
	lwork := max(int(query[0]), n, p)
	f.work = make([]float64, lwork)
	lapack64.Geqrf(f.a, f.tau, f.work, lwork)
	return f, true
}

// r returns the p×p upper triangular factor R (a view into the factor).
func (f *qrFactor) r() blas64.Triangular {
	return blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: f.p, Stride: f.a.Stride, Data: f.a.Data}
}

// applyQ overwrites the n×k matrix c with Q·c (trans false) or Qᵀ·c.
func (f *qrFactor) applyQ(trans bool, c blas64.General) {
	t := blas.NoTrans
	if trans {
		t = blas.Trans
	}
	var query [1]float64
	lapack64.Ormqr(blas.Left, t, f.a, f.tau, c, query[:], -1)
	if need := int(query[0]); len(f.work) < need {
		f.work = make([]float64, need)
	}
	lapack64.Ormqr(blas.Left, t, f.a, f.tau, c, f.work, len(f.work))
}

// applyQVec overwrites the n-vector v with Q·v or Qᵀ·v.
func (f *qrFactor) applyQVec(trans bool, v []float64) {
	f.applyQ(trans, blas64.General{Rows: f.n, Cols: 1, Stride: 1, Data: v})
}

// solveR overwrites the p-vector v with R⁻¹·v (trans false) or R⁻ᵀ·v.
func (f *qrFactor) solveR(trans bool, v []float64) {
	t := blas.NoTrans
	if trans {
		t = blas.Trans
	}
	blas64.Trsv(t, f.r(), blas64.Vector{N: f.p, Inc: 1, Data: v})
}

// rcond estimates the reciprocal 1-norm condition number of R, which is
// that of the equilibrated design.
func (f *qrFactor) rcond() float64 {
	for j := 0; j < f.p; j++ {
		if f.a.Data[j*f.a.Stride+j] == 0 {
			return 0
		}
	}
	return lapack64.Trcon(lapack.MaxColumnSum, f.r(), make([]float64, 3*f.p), make([]int, f.p))
}
