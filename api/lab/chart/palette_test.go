package chart

import (
	"image/color"
	"math"
	"testing"
)

// TestContrastFormula checks the ratio against values WCAG 2.1 itself
// fixes: black on white is 21:1 and a colour on itself 1:1 (definition of
// contrast ratio, WCAG 2.1); #767676 on white is about 4.54:1, the
// lightest grey that passes AA for text (widely quoted, from memory).
func TestContrastFormula(t *testing.T) {
	for _, c := range []struct {
		a, b color.RGBA
		want float64
		tol  float64
	}{
		{rgb(0, 0, 0), rgb(0xff, 0xff, 0xff), 21, 1e-12},
		{Plain, Plain, 1, 1e-12},
		{rgb(0x76, 0x76, 0x76), rgb(0xff, 0xff, 0xff), 4.54, 0.01},
	} {
		if got := Contrast(c.a, c.b); math.Abs(got-c.want) > c.tol {
			t.Errorf("Contrast(%s, %s) = %.4f, want %.4f", hex(c.a), hex(c.b), got, c.want)
		}
	}
}

// TestPaletteContrast checks every pairing the charts draw against the
// WCAG 2.1 AA minimums: 4.5:1 for text (success criterion 1.4.3) and 3:1
// for marks and lines that carry meaning (success criterion 1.4.11).
func TestPaletteContrast(t *testing.T) {
	const text, graphic = 4.5, 3.0
	type pair struct {
		name     string
		fg, bg   color.RGBA
		minRatio float64
	}
	pairs := []pair{
		{"ink text on paper", Ink, Paper, text},
		{"ink text on the band", Ink, BandFill, text},
		{"ink text on an empty cell", Ink, NoWindow, text},
		{"marked label on paper", Marked, Paper, text},
		{"marked label on the band", Marked, BandFill, text},
		{"plain marker on paper", Plain, Paper, graphic},
		{"plain marker on the band", Plain, BandFill, graphic},
		{"band edge on paper", BandEdge, Paper, graphic},
		{"ink nominal mark on the widest span", Ink, Spans[len(Spans)-1], graphic},
	}
	for _, s := range Spans {
		pairs = append(pairs, pair{"ink text on span " + hex(s), Ink, s, text})
	}
	for _, p := range pairs {
		if got := Contrast(p.fg, p.bg); got < p.minRatio {
			t.Errorf("%s: %s on %s is %.2f:1, want at least %.1f:1 (WCAG 2.1 AA)", p.name, hex(p.fg), hex(p.bg), got, p.minRatio)
		}
	}
}
