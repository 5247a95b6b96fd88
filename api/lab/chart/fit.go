package chart

import (
	"fmt"
	"sort"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// FitPoint is one coupon of a calibration as the fit charts show it, every
// value already in the unit its axis title names.
type FitPoint struct {
	Name string // what the tooltip calls the coupon
	Href string // the coupon's page
	// Measured and Predicted are the coupon's value and the fit's median
	// (or mean) at its setting; PredLow and PredHigh the prediction
	// interval for one new coupon there.
	Measured, Predicted, PredLow, PredHigh float64
	Residual                               float64 // in the fit's response space
	Factors                                []float64
	HighLeverage, HighCooksDistance        bool
	OutsideInterval                        bool
}

// marked reports whether the point carries any diagnostic mark.
func (p FitPoint) marked() bool {
	return p.HighLeverage || p.HighCooksDistance || p.OutsideInterval
}

// Tags numbers the marked points "#1", "#2"… in order; unmarked points get
// "". The page lists the same tags with links under the charts.
func Tags(points []FitPoint) []string {
	tags := make([]string, len(points))
	k := 0
	for i, p := range points {
		if p.marked() {
			k++
			tags[i] = fmt.Sprintf("#%d", k)
		}
	}
	return tags
}

// shapeOf is a point's marker: Cook's distance first (it moves the fit),
// then leverage, then a point outside its prediction interval.
func shapeOf(p FitPoint) (Shape, string) {
	switch {
	case p.HighCooksDistance:
		return Square, hex(Marked)
	case p.HighLeverage:
		return Triangle, hex(Marked)
	case p.OutsideInterval:
		return Diamond, hex(Marked)
	}
	return Circle, hex(Plain)
}

// fitLegend names every marker shape.
var fitLegend = []legendItem{
	{Circle, hex(Plain), "coupon"},
	{Square, hex(Marked), "high Cook's distance"},
	{Triangle, hex(Marked), "high leverage"},
	{Diamond, hex(Marked), "outside its prediction interval"},
}

// pointLayer places the coupons at (x(p), y(p)).
func pointLayer(points []FitPoint, x, y func(FitPoint) float64, tip func(FitPoint) string) *layer {
	tags := Tags(points)
	l := &layer{}
	for i, p := range points {
		s, fill := shapeOf(p)
		l.items = append(l.items, item{X: x(p), Y: y(p), Shape: s, Fill: fill, Class: "plot-point", Href: p.Href,
			Tip: tip(p), Label: tags[i]})
	}
	return l
}

// MeasuredPredicted plots each coupon's measured value against the fit's
// prediction, the line of perfect agreement and the prediction band: the
// prediction intervals for one new coupon at the coupons' settings, joined
// in order of the prediction. unit names the values' unit ("mm").
func MeasuredPredicted(title, quantity, unit string, level float64, points []FitPoint) ([]byte, error) {
	p := newPlot(fmt.Sprintf("predicted %s, %s", quantity, unit), fmt.Sprintf("measured %s, %s", quantity, unit))
	order := make([]FitPoint, len(points))
	copy(order, points)
	sort.SliceStable(order, func(i, j int) bool { return order[i].Predicted < order[j].Predicted })
	if len(order) > 0 {
		band := make(plotter.XYs, 0, 2*len(order))
		for _, q := range order {
			band = append(band, plotter.XY{X: q.Predicted, Y: q.PredHigh})
		}
		for i := len(order) - 1; i >= 0; i-- {
			band = append(band, plotter.XY{X: order[i].Predicted, Y: order[i].PredLow})
		}
		poly, err := plotter.NewPolygon(band)
		if err != nil {
			return nil, fmt.Errorf("chart: band: %w", err)
		}
		poly.Color, poly.LineStyle.Color, poly.LineStyle.Width = BandFill, BandEdge, vg.Points(0.8)
		lo, hi := order[0].Predicted, order[len(order)-1].Predicted
		line, err := plotter.NewLine(plotter.XYs{{X: lo, Y: lo}, {X: hi, Y: hi}})
		if err != nil {
			return nil, fmt.Errorf("chart: agreement line: %w", err)
		}
		line.Color, line.Width, line.Dashes = Ink, vg.Points(1), []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(poly, line)
	}
	l := pointLayer(points, func(q FitPoint) float64 { return q.Predicted }, func(q FitPoint) float64 { return q.Measured },
		func(q FitPoint) string {
			return fmt.Sprintf("%s: measured %.3g %s, predicted %.3g %s (%.0f %% interval %.3g–%.3g)",
				q.Name, q.Measured, unit, q.Predicted, unit, level*100, q.PredLow, q.PredHigh)
		})
	p.Add(l)
	legend := append([]legendItem{}, fitLegend...)
	return render(p, title, 2, legend, l)
}

// Residuals plots each coupon's residual against its factor k (Factors[k]),
// with the zero line; factor names the axis ("current, A").
func Residuals(title, factor, response string, k int, points []FitPoint) ([]byte, error) {
	p := newPlot(factor, "residual, "+response)
	l := pointLayer(points, func(q FitPoint) float64 { return q.Factors[k] }, func(q FitPoint) float64 { return q.Residual },
		func(q FitPoint) string {
			return fmt.Sprintf("%s: %s %.4g, residual %.3g %s", q.Name, factor, q.Factors[k], q.Residual, response)
		})
	xmin, xmax, _, _ := l.DataRange()
	if len(points) > 0 {
		zero, err := plotter.NewLine(plotter.XYs{{X: xmin, Y: 0}, {X: xmax, Y: 0}})
		if err != nil {
			return nil, fmt.Errorf("chart: zero line: %w", err)
		}
		zero.Color, zero.Width, zero.Dashes = Ink, vg.Points(1), []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(zero)
	}
	p.Add(l)
	return render(p, title, 2, fitLegend, l)
}
