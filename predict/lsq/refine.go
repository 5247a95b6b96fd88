package lsq

import (
	"math"

	"gonum.org/v1/gonum/blas/blas64"
)

// refine solves the augmented least-squares system
//
//	[ I   A ] [ r ]   [ b ]
//	[ Aᵀ  0 ] [ x ] = [ c ]
//
// for the equilibrated design A = X·D by Björck's iterative refinement:
// each step evaluates the residuals f = b − r − A·x and g = c − Aᵀ·r in
// twice the working precision (Dot2), then solves the correction system
// with the stored QR factors, at O(n·p) per step plus two triangular
// solves. With c = 0 it gives the least-squares solution x and residual r;
// with b = 0 and c = −e_j it gives column j of (AᵀA)⁻¹. The returned x is
// in equilibrated coordinates; steps is the number of corrections applied.
// When lo.Data is non-nil the design is the double-length X + lo: the
// residuals include lo, the factors (of X alone) only precondition.
func (f *qrFactor) refine(x, lo blas64.General, b, c []float64, maxSteps int) (xs, r []float64, steps int) {
	n, p := f.n, f.p
	xs, r = make([]float64, p), make([]float64, n)
	fv := make([]float64, n)
	g, h, dx, xu := make([]float64, p), make([]float64, p), make([]float64, p), make([]float64, p)
	accs := make([]acc2, p)
	prev := math.Inf(1)
	for steps < maxSteps {
		for j := range xu {
			xu[j] = xs[j] * f.scale[j] // exact: scale is a power of two
			accs[j] = acc2{hi: -c[j] / f.scale[j]}
		}
		for i := 0; i < n; i++ {
			row := x.Data[i*x.Stride : i*x.Stride+p]
			a := acc2{hi: b[i]}
			a.add(-r[i])
			for j, v := range row {
				a.addProd(v, -xu[j])
				accs[j].addProd(v, r[i])
			}
			if lo.Data != nil {
				for j, v := range lo.Data[i*lo.Stride : i*lo.Stride+p] {
					a.addProd(v, -xu[j])
					accs[j].addProd(v, r[i])
				}
			}
			fv[i] = a.value()
		}
		for j := range g {
			g[j] = -f.scale[j] * accs[j].value()
		}
		// Correction: w = Qᵀf, h = R⁻ᵀg, dx = R⁻¹(w₁ − h), dr = Q·[h; w₂].
		f.applyQVec(true, fv)
		copy(h, g)
		f.solveR(true, h)
		for j := range dx {
			dx[j] = fv[j] - h[j]
		}
		f.solveR(false, dx)
		copy(fv[:p], h)
		f.applyQVec(false, fv)
		worst := 0.0
		for j := range xs {
			xs[j] += dx[j]
			if d := math.Abs(dx[j]); d > 0 {
				worst = math.Max(worst, d/math.Max(math.Abs(xs[j]), math.SmallestNonzeroFloat64))
			}
		}
		for i := range r {
			r[i] += fv[i]
		}
		steps++
		// Stop at working precision, or when a step no longer halves the
		// largest relative correction (the iteration has stagnated).
		if worst <= 2*epsilon || (steps > 2 && worst > prev/2) {
			break
		}
		prev = worst
	}
	return xs, r, steps
}

// epsilon is the unit roundoff of float64, 2⁻⁵³.
const epsilon = 0x1p-53
