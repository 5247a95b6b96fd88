// Package chart draws the engineer's plots as self-contained SVG on the
// server with gonum/plot: axes, ticks and bands through gonum's SVG canvas,
// and each coupon or grid cell as an SVG element of its own (a layer), so
// it can carry a class, a link to its page, a tooltip and a text label.
// Nothing is fetched: no fonts, images or style sheets from anywhere.
package chart

import (
	"bytes"
	"fmt"
	"html"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Width and Height are a chart's size in SVG user units (points); the page
// scales it to the width it has.
const (
	Width  = 480
	Height = 340
	// legendRow is the height of one row of the legend strip at the top.
	legendRow = 16
)

// fontStack is what the browser uses for every label: gonum measures text
// with its built-in Liberation Sans, which these fall back close to.
const fontStack = "'Liberation Sans',Arial,Helvetica,sans-serif"

// sans is the typeface of every gonum label.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

// newPlot returns a plot with our typeface, colours and axis titles.
func newPlot(xTitle, yTitle string) *plot.Plot {
	p := plot.New()
	p.BackgroundColor = Paper
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = font.From(sans, 11)
		a.Label.TextStyle.Color = Ink
		a.Tick.Label.Font = font.From(sans, 10)
		a.Tick.Label.Color = Ink
		a.Color, a.Tick.Color = Ink, Ink
	}
	p.X.Label.Text, p.Y.Label.Text = xTitle, yTitle
	return p
}

// legendItem is one entry of the legend strip: a mark and its words.
type legendItem struct {
	shape Shape
	fill  string
	words string
}

// render draws p below a legend strip of the given rows and returns the
// SVG, ready to be placed inline in a page: no XML prolog, scaled to its
// container, with the layers' elements and the legend after gonum's.
func render(p *plot.Plot, title string, perRow int, legend []legendItem, layers ...*layer) ([]byte, error) {
	rows := (len(legend) + perRow - 1) / perRow
	cnv := vgsvg.New(Width, Height)
	dc := draw.Crop(draw.New(cnv), 0, 0, 0, -vg.Length(rows*legendRow+4))
	p.Draw(dc)
	var buf bytes.Buffer
	if _, err := cnv.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("chart: write svg: %w", err)
	}
	out := buf.String()
	if i := strings.Index(out, "<svg"); i >= 0 {
		out = out[i:]
	}
	// Scale with the page and name the chart for screen readers.
	out = strings.Replace(out, "<svg ", fmt.Sprintf(`<svg role="img" aria-label="%s" class="chart" style="max-width:100%%;height:auto" `, html.EscapeString(title)), 1)
	out = strings.Replace(out, fmt.Sprintf(`width="%dpt" height="%dpt"`, Width, Height), `width="100%"`, 1)
	out = strings.ReplaceAll(out, "font-family:Liberation Sans;", "font-family:"+fontStack+";")
	end := strings.LastIndex(out, "</svg>")
	var tail strings.Builder
	fmt.Fprintf(&tail, `<g font-family="%s" font-size="10" fill="%s">`+"\n", fontStack, hex(Ink))
	for _, l := range layers {
		l.write(&tail)
	}
	writeLegend(&tail, legend, perRow)
	tail.WriteString("</g>\n")
	return []byte(out[:end] + tail.String() + out[end:]), nil
}

// writeLegend draws the legend strip at the top, perRow entries a row.
func writeLegend(w *strings.Builder, items []legendItem, perRow int) {
	for i, it := range items {
		x, y := 12.0+float64(i%perRow)*Width/float64(perRow), 10.0+float64(i/perRow)*legendRow
		writeShape(w, it.shape, x, y, it.fill, "")
		fmt.Fprintf(w, `<text x="%.1f" y="%.1f" dominant-baseline="middle">%s</text>`+"\n", x+10, y, html.EscapeString(it.words))
	}
}
