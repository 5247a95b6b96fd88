package predict

import "math"

// Drift watches whether new coupons keep agreeing with a calibration. Each
// coupon's residual against the calibration (ln measured − ln predicted
// penetration, or measured − predicted melting rate) is standardised by its
// prediction SD √(σ̂² + gᵀ·Cov·g), which is N(0, 1) while the shop is in
// control, and fed, in welding order, to a two-sided tabular CUSUM:
//
//	C⁺ᵢ = max(0, zᵢ − k + C⁺ᵢ₋₁),  C⁻ᵢ = max(0, −zᵢ − k + C⁻ᵢ₋₁),  C₀ = 0,
//
// which signals when either exceeds h. With the textbook parameters k = ½
// (tuned to a shift of 1σ) and h = 5, the in-control average run length
// ARL₀ is about 465 coupons and a sustained 1σ shift is detected after
// about 10.4 coupons on average (Montgomery, Introduction to Statistical
// Quality Control, the table of ARL performance of the tabular CUSUM with
// k = ½ and h = 4 or 5; from memory: h = 5 gives 465 at no shift, 38.0 at
// ½σ, 10.4 at 1σ, 4.01 at 2σ). Siegmund's approximation gives 469 and 10.3
// for the same chart (see TestCUSUMSiegmund).
//
// When the chart signals, the coupon after the last time the signalling sum
// was zero estimates when the shift began, and the shift itself is
// estimated as k + Cᵢ/N in σ units, N the number of coupons since then
// (Montgomery, the same section; from memory).
const (
	// CUSUMK is the reference value k in σ units.
	CUSUMK = 0.5
	// CUSUMH is the decision interval h in σ units.
	CUSUMH = 5.0
	// CUSUMARL0 is the in-control average run length of the two-sided chart
	// with CUSUMK and CUSUMH (Montgomery's table, from memory).
	CUSUMARL0 = 465.0
	// CUSUMARL1 is its average run length after a sustained 1σ shift.
	CUSUMARL1 = 10.4
)

// CUSUMPoint is one coupon on the chart: its standardised residual and
// both cumulative sums after it, in σ units.
type CUSUMPoint struct {
	Z     float64 `json:"z"`
	Upper float64 `json:"upper"`
	Lower float64 `json:"lower"`
}

// CUSUMSignal describes the chart's current excursion past h: the index of
// the point where it first crossed h (Signal), the index where the
// excursion began (Since: the point after the sum was last zero), its
// direction ("above": the coupons come out above the calibration), and the
// estimated shift of the mean in σ units at the last point.
type CUSUMSignal struct {
	Signal    int     `json:"signal"`
	Since     int     `json:"since"`
	Direction string  `json:"direction"`
	ShiftSD   float64 `json:"shift_sd"`
}

// CUSUMChart is a run of the tabular CUSUM over standardised residuals.
// First is the first index where the chart crossed h (−1: never); Current
// is set when the chart is above h at its last point (a shift that has not
// ended). The sums are not reset after a signal: the chart stays out while
// the shift lasts and comes back by itself about k per coupon after it ends.
type CUSUMChart struct {
	K, H    float64
	Points  []CUSUMPoint
	First   int
	Current *CUSUMSignal
}

// RunCUSUM runs the two-sided tabular CUSUM with k and h (σ units) over z.
func RunCUSUM(z []float64, k, h float64) CUSUMChart {
	c := CUSUMChart{K: k, H: h, Points: make([]CUSUMPoint, len(z)), First: -1}
	up, lo := 0.0, 0.0
	upStart, loStart := 0, 0 // first index of the current nonzero stretch of each sum
	upCross, loCross := -1, -1
	for i, v := range z {
		if up == 0 {
			upStart = i
		}
		if lo == 0 {
			loStart = i
		}
		up, lo = math.Max(0, v-k+up), math.Max(0, -v-k+lo)
		switch {
		case up <= h:
			upCross = -1
		case upCross < 0:
			upCross = i
		}
		switch {
		case lo <= h:
			loCross = -1
		case loCross < 0:
			loCross = i
		}
		if (up > h || lo > h) && c.First < 0 {
			c.First = i
		}
		c.Points[i] = CUSUMPoint{Z: v, Upper: up, Lower: lo}
	}
	last := len(z) - 1
	switch {
	case last < 0:
	case up > h && up >= lo:
		c.Current = &CUSUMSignal{Signal: upCross, Since: upStart, Direction: "above", ShiftSD: k + up/float64(last-upStart+1)}
	case lo > h:
		c.Current = &CUSUMSignal{Signal: loCross, Since: loStart, Direction: "below", ShiftSD: -(k + lo/float64(last-loStart+1))}
	}
	return c
}

// SiegmundARL is Siegmund's approximation to the average run length of a
// one-sided tabular CUSUM with reference value k and decision interval h
// (σ units) when the mean is shifted by delta σ:
// ARL = (exp(−2Δb) + 2Δb − 1)/(2Δ²), Δ = δ − k, b = h + 1.166, and b² at
// Δ = 0 (Montgomery, the CUSUM chapter; from memory). The two-sided chart's
// ARL follows from 1/ARL = 1/ARL⁺ + 1/ARL⁻.
func SiegmundARL(delta, k, h float64) float64 {
	d, b := delta-k, h+1.166
	if d == 0 {
		return b * b
	}
	return (math.Exp(-2*d*b) + 2*d*b - 1) / (2 * d * d)
}
