package chart

import (
	"fmt"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// DriftPoint is one coupon on a drift chart, in welding order: its two
// cumulative sums (σ units) and whether the chart is beyond its limit there.
type DriftPoint struct {
	Name         string // what the tooltip calls the coupon
	Href         string // the coupon's page
	Upper, Lower float64
	Residual     float64 // in the unit the tooltip names
	Out          bool
}

// driftLegend names the two sums' markers.
var driftLegend = []legendItem{
	{Circle, hex(Plain), "upper sum (coupons above the calibration)"},
	{Triangle, hex(Plain), "lower sum, drawn below 0"},
	{Square, hex(Marked), "beyond the limit"},
}

// Drift plots a tabular CUSUM: for each coupon (x: its number in welding
// order) the upper sum above the centre line 0 and the lower sum below it,
// the limits ±h as lines, and the points beyond a limit in a shape of their
// own. unit names the residuals' unit for the tooltips.
func Drift(title, unit string, h float64, points []DriftPoint) ([]byte, error) {
	p := newPlot("coupon, in welding order", "cumulative sum, σ")
	n := float64(len(points))
	if n < 2 {
		n = 2
	}
	for _, y := range []float64{h, 0, -h} {
		line, err := plotter.NewLine(plotter.XYs{{X: 1, Y: y}, {X: n, Y: y}})
		if err != nil {
			return nil, fmt.Errorf("chart: drift line: %w", err)
		}
		line.Color, line.Width = Ink, vg.Points(1)
		if y == 0 {
			line.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		} else {
			line.Color = Marked
		}
		p.Add(line)
	}
	l := &layer{}
	for i, q := range points {
		x := float64(i + 1)
		for _, side := range []struct {
			y     float64
			shape Shape
			words string
		}{{q.Upper, Circle, "upper sum"}, {-q.Lower, Triangle, "lower sum"}} {
			s, fill := side.shape, hex(Plain)
			if q.Out && (side.y > h || side.y < -h) {
				s, fill = Square, hex(Marked)
			}
			l.items = append(l.items, item{X: x, Y: side.y, Shape: s, Fill: fill, Class: "plot-point drift-point", Href: q.Href,
				Tip: fmt.Sprintf("%s: residual %+.3g %s, %s %.2f σ (limit %g σ)", q.Name, q.Residual, unit, side.words, side.y, h)})
		}
	}
	p.Add(l)
	p.Y.Min, p.Y.Max = math.Min(p.Y.Min, -h-1), math.Max(p.Y.Max, h+1)
	return render(p, title, 2, driftLegend, l)
}
