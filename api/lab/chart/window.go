package chart

import (
	"fmt"
	"math"
	"sort"
)

// WindowCell is one grid point of a parameter window, in display units:
// X the voltage, Y the travel speed, the feasible current span there (0
// when none fits) and the limits that set its lower and upper end.
type WindowCell struct {
	X, Y                float64
	Feasible            bool
	LowA, HighA         float64
	LowLimit, HighLimit string
}

// WindowNominal is the nominal point to mark, in display units.
type WindowNominal struct {
	X, Y     float64
	CurrentA float64
}

// LimitCodes are the short names the grid prints for each window limit,
// with the words the page gives them in its key.
var LimitCodes = map[string]struct{ Code, Words string }{
	"current_min":         {"Imin", "the qualified current minimum"},
	"current_max":         {"Imax", "the qualified current maximum"},
	"voltage_min":         {"Vmin", "the qualified voltage minimum"},
	"voltage_max":         {"Vmax", "the qualified voltage maximum"},
	"travel_speed_min":    {"Smin", "the qualified travel speed minimum"},
	"travel_speed_max":    {"Smax", "the qualified travel speed maximum"},
	"extension_min":       {"Emin", "the electrode extension minimum"},
	"extension_max":       {"Emax", "the electrode extension maximum"},
	"wire_feed_speed_min": {"Fmin", "the qualified wire feed speed minimum"},
	"wire_feed_speed_max": {"Fmax", "the qualified wire feed speed maximum"},
	"penetration_min":     {"pen", "the required minimum penetration"},
	"deposition_min":      {"Dmin", "the deposition rate minimum"},
	"deposition_max":      {"Dmax", "the deposition rate maximum"},
	"heat_input_max":      {"heat", "the heat input maximum"},
}

// code is the short name of limit (the limit itself when unknown).
func code(limit string) string {
	if c, ok := LimitCodes[limit]; ok {
		return c.Code
	}
	return limit
}

// spanBin is the palette index of span on a scale up to widest.
func spanBin(span, widest float64) int {
	if widest <= 0 {
		return len(Spans) - 1
	}
	return min(int(span/widest*float64(len(Spans))), len(Spans)-1)
}

// halfSteps returns, for each sorted grid value, the distance to the cell
// edge on each side: half the gap to its neighbours (a lone value gets 1 %).
func halfSteps(vals []float64) (lo, hi map[float64]float64) {
	lo, hi = map[float64]float64{}, map[float64]float64{}
	for i, v := range vals {
		switch {
		case len(vals) == 1:
			lo[v], hi[v] = math.Abs(v)*0.01+1e-9, math.Abs(v)*0.01+1e-9
		case i == 0:
			hi[v] = (vals[1] - v) / 2
			lo[v] = hi[v]
		case i == len(vals)-1:
			lo[v] = (v - vals[i-1]) / 2
			hi[v] = lo[v]
		default:
			lo[v], hi[v] = (v-vals[i-1])/2, (vals[i+1]-v)/2
		}
	}
	return lo, hi
}

// uniq returns the sorted distinct values.
func uniq(vals []float64) []float64 {
	seen := map[float64]bool{}
	var out []float64
	for _, v := range vals {
		if !seen[v] {
			seen[v] = true
			out = append(out, v)
		}
	}
	sort.Float64s(out)
	return out
}

// Window draws the voltage × travel speed grid: each cell filled by its
// feasible current span and labelled with the span in A and the limits
// that set its ends ("pen–Imax"), cells where no current fits filled grey
// and labelled "none", and the nominal point (nil: none) as a star.
func Window(title, xTitle, yTitle string, cells []WindowCell, nominal *WindowNominal) ([]byte, error) {
	p := newPlot(xTitle, yTitle)
	var xs, ys []float64
	widest := 0.0
	for _, c := range cells {
		xs, ys = append(xs, c.X), append(ys, c.Y)
		if c.Feasible {
			widest = math.Max(widest, c.HighA-c.LowA)
		}
	}
	xlo, xhi := halfSteps(uniq(xs))
	ylo, yhi := halfSteps(uniq(ys))
	l := &layer{}
	for _, c := range cells {
		it := item{Cell: true, X0: c.X - xlo[c.X], X1: c.X + xhi[c.X], Y0: c.Y - ylo[c.Y], Y1: c.Y + yhi[c.Y],
			Class: "plot-cell", Fill: hex(NoWindow), Lines: []string{"none", code(c.LowLimit) + "–" + code(c.HighLimit)}}
		it.Tip = fmt.Sprintf("%s %.4g, %s %.4g: no current meets every limit (%s above %s)",
			xTitle, c.X, yTitle, c.Y, LimitCodes[c.LowLimit].Words, LimitCodes[c.HighLimit].Words)
		if c.Feasible {
			span := c.HighA - c.LowA
			it.Class, it.Fill = "plot-cell plot-feasible", hex(Spans[spanBin(span, widest)])
			it.Lines[0] = fmt.Sprintf("%.0f A", span)
			it.Tip = fmt.Sprintf("%s %.4g, %s %.4g: current %.0f–%.0f A (span %.0f A), from %s to %s",
				xTitle, c.X, yTitle, c.Y, c.LowA, c.HighA, span, LimitCodes[c.LowLimit].Words, LimitCodes[c.HighLimit].Words)
		}
		l.items = append(l.items, it)
	}
	layers := []*layer{l}
	var legend []legendItem
	if widest > 0 {
		step := widest / float64(len(Spans))
		for i, s := range Spans {
			legend = append(legend, legendItem{Square, hex(s), fmt.Sprintf("%.0f–%.0f A", float64(i)*step, float64(i+1)*step)})
		}
	}
	legend = append(legend, legendItem{Square, hex(NoWindow), "none fits"})
	if nominal != nil {
		nl := &layer{items: []item{{X: nominal.X, Y: nominal.Y, Shape: Star, Fill: hex(Ink), Class: "plot-nominal",
			Label: fmt.Sprintf("nominal %.0f A", nominal.CurrentA),
			Tip:   fmt.Sprintf("nominal point: %.0f A, %s %.4g, %s %.4g", nominal.CurrentA, xTitle, nominal.X, yTitle, nominal.Y)}}}
		layers = append(layers, nl)
		legend = append(legend, legendItem{Star, hex(Ink), "nominal point"})
	}
	p.Add(l)
	for _, extra := range layers[1:] {
		p.Add(extra)
	}
	return render(p, title, 4, legend, layers...)
}
