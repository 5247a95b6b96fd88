package chart

import (
	"strings"
	"testing"
)

// A drift chart is well-formed SVG with two markers per coupon, each linked
// to its coupon; a sum beyond the limit gets the marked square, and the
// chart fetches and runs nothing.
func TestDriftChart(t *testing.T) {
	pts := []DriftPoint{{Name: "C-1", Href: "/lab/coupons/1", Upper: 0.4}, {Name: "C-2", Href: "/lab/coupons/2", Upper: 6.1, Out: true},
		{Name: "C-3", Href: "/lab/coupons/3", Lower: 1.2}}
	svg, err := Drift("Drift of power source PS-3", "ln(mm)", 5, pts)
	if err != nil {
		t.Fatal(err)
	}
	if s := string(svg); strings.Contains(s, "<script") || strings.Contains(s, "http://") && strings.Contains(s, "href=\"http") {
		t.Errorf("the chart runs or fetches something")
	}
	var markers, linked, squares int
	for _, el := range parseSVG(t, svg) {
		if strings.Contains(el.attrs["class"], "drift-point") {
			markers++
			if strings.HasPrefix(el.inA, "/lab/coupons/") {
				linked++
			}
		}
	}
	squares = strings.Count(string(svg), "beyond the limit")
	if markers != 6 || linked != 6 || squares < 1 {
		t.Errorf("%d markers, %d linked, %d limit words; want 6, 6 and the legend's", markers, linked, squares)
	}
}
