package chart

import (
	"fmt"
	"html"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Shape is a marker's form; every mark the charts make has its own, so
// colour is never the only signal.
type Shape int

// Marker shapes.
const (
	Circle Shape = iota
	Triangle
	Square
	Diamond
	Star
)

// markerR is a marker's half-size in SVG units.
const markerR = 4.5

// item is one element a layer draws: a marker at (X, Y), or, when Cell is
// set, the rectangle [X0, X1]×[Y0, Y1] with up to two lines of text.
type item struct {
	X, Y           float64
	Shape          Shape
	Cell           bool
	X0, X1, Y0, Y1 float64
	Fill           string
	Class          string
	Href           string // a link to the item's page; "" for none
	Tip            string // the tooltip (SVG title)
	Label          string // text beside a marker
	Lines          []string
	// placed canvas coordinates, y downwards, filled in by Plot
	px, py, px1, py1 float64
}

// layer is a plot.Plotter that draws nothing through gonum: it records
// where its items fall on the canvas and writes them afterwards as SVG
// elements of their own (see render).
type layer struct{ items []item }

// Plot implements plot.Plotter: it places the items on the canvas.
func (l *layer) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	flip := func(y vg.Length) float64 { return Height - y.Points() }
	for i := range l.items {
		it := &l.items[i]
		if it.Cell {
			it.px, it.px1 = trX(it.X0).Points(), trX(it.X1).Points()
			it.py, it.py1 = flip(trY(it.Y1)), flip(trY(it.Y0))
			continue
		}
		it.px, it.py = trX(it.X).Points(), flip(trY(it.Y))
	}
}

// DataRange implements plot.DataRanger over the items' extents.
func (l *layer) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, ymin = math.Inf(1), math.Inf(1)
	xmax, ymax = math.Inf(-1), math.Inf(-1)
	for _, it := range l.items {
		x0, x1, y0, y1 := it.X, it.X, it.Y, it.Y
		if it.Cell {
			x0, x1, y0, y1 = it.X0, it.X1, it.Y0, it.Y1
		}
		xmin, xmax = math.Min(xmin, x0), math.Max(xmax, x1)
		ymin, ymax = math.Min(ymin, y0), math.Max(ymax, y1)
	}
	return xmin, xmax, ymin, ymax
}

// GlyphBoxes implements plot.GlyphBoxer so markers at the edge of the data
// are not cut by the axes.
func (l *layer) GlyphBoxes(p *plot.Plot) []plot.GlyphBox {
	var boxes []plot.GlyphBox
	r := vg.Length(markerR + 1)
	for _, it := range l.items {
		if it.Cell {
			continue
		}
		// A label sits to the right of its marker and above it: keep room for it.
		right, top := r, r
		if it.Label != "" {
			right, top = r+vg.Length(6*len(it.Label)+4), r+10
		}
		boxes = append(boxes, plot.GlyphBox{X: p.X.Norm(it.X), Y: p.Y.Norm(it.Y),
			Rectangle: vg.Rectangle{Min: vg.Point{X: -r, Y: -r}, Max: vg.Point{X: right, Y: top}}})
	}
	return boxes
}

// write appends the items as SVG elements.
func (l *layer) write(w *strings.Builder) {
	for _, it := range l.items {
		if it.Href != "" {
			fmt.Fprintf(w, `<a href="%s">`, html.EscapeString(it.Href))
		}
		if it.Cell {
			writeCell(w, it)
		} else {
			fmt.Fprintf(w, `<g class="%s">`, html.EscapeString(it.Class))
			if it.Tip != "" {
				fmt.Fprintf(w, "<title>%s</title>", html.EscapeString(it.Tip))
			}
			writeShape(w, it.Shape, it.px, it.py, it.Fill, "")
			if it.Label != "" {
				fmt.Fprintf(w, `<text class="plot-tag" x="%.1f" y="%.1f" fill="%s" font-weight="bold" stroke="%s" stroke-width="3" paint-order="stroke">%s</text>`,
					it.px+markerR+2, it.py-markerR, it.Fill, hex(Paper), html.EscapeString(it.Label))
			}
			w.WriteString("</g>")
		}
		if it.Href != "" {
			w.WriteString("</a>")
		}
		w.WriteString("\n")
	}
}

// writeCell writes a filled grid cell with its centred lines of text.
func writeCell(w *strings.Builder, it item) {
	x, y, cw, ch := it.px, it.py, it.px1-it.px, it.py1-it.py
	fmt.Fprintf(w, `<g class="%s">`, html.EscapeString(it.Class))
	if it.Tip != "" {
		fmt.Fprintf(w, "<title>%s</title>", html.EscapeString(it.Tip))
	}
	fmt.Fprintf(w, `<rect x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="%s" stroke="%s" stroke-width="0.5"/>`,
		x, y, cw, ch, it.Fill, hex(Paper))
	size := math.Min(9, math.Max(5, cw/7))
	top := y + ch/2 - float64(len(it.Lines)-1)*size*0.6
	for i, line := range it.Lines {
		fmt.Fprintf(w, `<text x="%.1f" y="%.1f" font-size="%.1f" text-anchor="middle" dominant-baseline="middle">%s</text>`,
			x+cw/2, top+float64(i)*size*1.2, size, html.EscapeString(line))
	}
	w.WriteString("</g>")
}

// writeShape writes one marker centred on (x, y), y downwards.
func writeShape(w *strings.Builder, s Shape, x, y float64, fill, class string) {
	r := markerR
	cls := ""
	if class != "" {
		cls = fmt.Sprintf(` class="%s"`, class)
	}
	switch s {
	case Triangle:
		fmt.Fprintf(w, `<path%s d="M%.1f %.1fL%.1f %.1fL%.1f %.1fZ" fill="%s"/>`, cls, x, y-r*1.2, x+r*1.1, y+r*0.8, x-r*1.1, y+r*0.8, fill)
	case Square:
		fmt.Fprintf(w, `<rect%s x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="%s"/>`, cls, x-r*0.85, y-r*0.85, r*1.7, r*1.7, fill)
	case Diamond:
		fmt.Fprintf(w, `<path%s d="M%.1f %.1fL%.1f %.1fL%.1f %.1fL%.1f %.1fZ" fill="%s"/>`, cls, x, y-r*1.2, x+r*1.2, y, x, y+r*1.2, x-r*1.2, y, fill)
	case Star:
		var d strings.Builder
		for k := range 10 {
			rr := r * 1.6
			if k%2 == 1 {
				rr = r * 0.7
			}
			a := -math.Pi/2 + float64(k)*math.Pi/5
			op := "L"
			if k == 0 {
				op = "M"
			}
			fmt.Fprintf(&d, "%s%.1f %.1f", op, x+rr*math.Cos(a), y+rr*math.Sin(a))
		}
		fmt.Fprintf(w, `<path%s d="%sZ" fill="%s" stroke="%s" stroke-width="1"/>`, cls, d.String(), fill, hex(Paper))
	default:
		fmt.Fprintf(w, `<circle%s cx="%.1f" cy="%.1f" r="%.1f" fill="%s"/>`, cls, x, y, r, fill)
	}
}
