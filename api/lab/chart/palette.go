package chart

import (
	"image/color"
	"math"
)

// The palette is our own. Every colour that carries meaning is paired with
// a shape or a word, and each one reaches the WCAG 2.1 AA contrast it needs:
// 4.5:1 for text against its background, 3:1 for marks and lines (the
// palette tests compute the ratios).
var (
	// Ink is the colour of text, axes and the reference line.
	Ink = rgb(0x1f, 0x23, 0x28)
	// Plain is the colour of an unremarkable coupon's marker.
	Plain = rgb(0x1d, 0x4e, 0x89)
	// Marked is the colour of a coupon with a diagnostic mark.
	Marked = rgb(0x9a, 0x3b, 0x06)
	// BandFill is the fill of the prediction band, light enough that every
	// marker and label keeps its contrast on it.
	BandFill = rgb(0xdc, 0xe9, 0xf5)
	// BandEdge outlines the prediction band.
	BandEdge = rgb(0x4f, 0x73, 0x9a)
	// Paper is the background.
	Paper = rgb(0xff, 0xff, 0xff)
	// NoWindow fills a grid cell where no current satisfies every limit.
	NoWindow = rgb(0xe4, 0xe4, 0xe4)
	// Spans fill the window's cells by feasible current span, narrowest
	// first: light enough for Ink text in every cell.
	Spans = []color.RGBA{
		rgb(0xfb, 0xe3, 0xb8),
		rgb(0xe6, 0xed, 0xa4),
		rgb(0xbf, 0xe3, 0xb0),
		rgb(0x9b, 0xd6, 0xc6),
		rgb(0x86, 0xc3, 0xe0),
	}
)

func rgb(r, g, b uint8) color.RGBA { return color.RGBA{R: r, G: g, B: b, A: 0xff} }

// hex writes c as #rrggbb for SVG attributes.
func hex(c color.RGBA) string {
	const digits = "0123456789abcdef"
	b := []byte{'#', 0, 0, 0, 0, 0, 0}
	for i, v := range []uint8{c.R, c.G, c.B} {
		b[1+2*i], b[2+2*i] = digits[v>>4], digits[v&0xf]
	}
	return string(b)
}

// luminance is the relative luminance of c as WCAG 2.1 defines it (sRGB
// channels linearised, weighted 0.2126, 0.7152, 0.0722).
func luminance(c color.RGBA) float64 {
	lin := func(v uint8) float64 {
		s := float64(v) / 255
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(c.R) + 0.7152*lin(c.G) + 0.0722*lin(c.B)
}

// Contrast is the WCAG 2.1 contrast ratio (L1 + 0.05)/(L2 + 0.05) of two
// colours, the lighter one's luminance L1 on top.
func Contrast(a, b color.RGBA) float64 {
	la, lb := luminance(a), luminance(b)
	if la < lb {
		la, lb = lb, la
	}
	return (la + 0.05) / (lb + 0.05)
}
