package lsq

import "math"

// This file holds the error-free transformations used to evaluate residuals
// in twice the working precision: TwoSum (Knuth), TwoProd through a fused
// multiply-add, and the compensated dot product Dot2 of Ogita, Rump and
// Oishi. A Dot2 result is as accurate as if it had been computed in
// 106-bit arithmetic and then rounded to float64.

// twoSum returns s = fl(a+b) and the exact rounding error e, a+b = s+e.
func twoSum(a, b float64) (s, e float64) {
	s = a + b
	z := s - a
	e = (a - (s - z)) + (b - z)
	return s, e
}

// twoProd returns p = fl(a·b) and the exact rounding error e, a·b = p+e.
func twoProd(a, b float64) (p, e float64) {
	p = a * b
	e = math.FMA(a, b, -p)
	return p, e
}

// acc2 is a compensated accumulator: hi carries the running sum and lo the
// sum of all rounding errors made so far.
type acc2 struct{ hi, lo float64 }

// add adds x to the accumulator.
func (a *acc2) add(x float64) {
	s, e := twoSum(a.hi, x)
	a.hi = s
	a.lo += e
}

// addProd adds the exact product x·y to the accumulator.
func (a *acc2) addProd(x, y float64) {
	p, e := twoProd(x, y)
	a.add(p)
	a.lo += e
}

// value returns the accumulated sum rounded to float64.
func (a acc2) value() float64 { return a.hi + a.lo }

// dot2 returns the compensated dot product of x and y (equal lengths).
func dot2(x, y []float64) float64 {
	var a acc2
	for i, v := range x {
		a.addProd(v, y[i])
	}
	return a.value()
}

// sum2 returns the compensated sum of x.
func sum2(x []float64) float64 {
	var a acc2
	for _, v := range x {
		a.add(v)
	}
	return a.value()
}
