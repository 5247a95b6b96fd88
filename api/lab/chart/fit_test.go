package chart

import (
	"strings"
	"testing"
)

// fitPoints are five coupons: one of high leverage, one of high Cook's
// distance, one outside its interval and two plain ones.
func fitPoints() []FitPoint {
	p := func(name string, meas, pred float64) FitPoint {
		return FitPoint{Name: name, Href: "/lab/coupons/" + name, Measured: meas, Predicted: pred,
			PredLow: pred * 0.7, PredHigh: pred * 1.4, Residual: meas/pred - 1, Factors: []float64{150 + 10*pred, 20 + pred, 5}}
	}
	pts := []FitPoint{p("c1", 2.0, 2.1), p("c2", 2.6, 2.4), p("c3", 3.4, 2.9), p("c4", 1.2, 2.2), p("c5", 3.1, 3.0)}
	pts[1].HighLeverage = true
	pts[2].HighCooksDistance, pts[2].HighLeverage = true, true
	pts[3].OutsideInterval = true
	return pts
}

// TestFitChartsMarkAndLink checks both fit charts: one marker per coupon
// (class plot-point), each linked to its coupon's page; the marked coupons carry
// the tags #1… beside a shape of their own, and the legend names every shape.
func TestFitChartsMarkAndLink(t *testing.T) {
	pts := fitPoints()
	mp, err := MeasuredPredicted("measured against predicted", "penetration", "mm", 0.95, pts)
	if err != nil {
		t.Fatalf("MeasuredPredicted: %v", err)
	}
	res, err := Residuals("residuals against current", "current, A", "ln(mm)", 0, pts)
	if err != nil {
		t.Fatalf("Residuals: %v", err)
	}
	for name, svg := range map[string][]byte{"MeasuredPredicted": mp, "Residuals": res} {
		t.Run(name, func(t *testing.T) {
			selfContained(t, svg)
			els := parseSVG(t, svg)
			marks := byClass(els, "plot-point")
			if len(marks) != len(pts) {
				t.Fatalf("%d markers (class plot-point), want %d", len(marks), len(pts))
			}
			for i, m := range marks {
				if want := "/lab/coupons/" + pts[i].Name; m.inA != want {
					t.Errorf("marker %d links to %q, want %q", i, m.inA, want)
				}
			}
			var tags []string
			for _, e := range byClass(els, "plot-tag") {
				tags = append(tags, strings.TrimSpace(e.text))
			}
			if got, want := strings.Join(tags, " "), "#1 #2 #3"; got != want {
				t.Errorf("tags %q, want %q (coupons c2, c3, c4)", got, want)
			}
			shapes := map[string]int{}
			for _, e := range els {
				if e.inA != "" && (e.name == "circle" || e.name == "rect" || e.name == "path") {
					shapes[e.name]++
				}
			}
			// c1, c5 circles; c3 (Cook's) a square; c2 (leverage) a triangle and c4 (outside) a diamond, both paths.
			if shapes["circle"] != 2 || shapes["rect"] != 1 || shapes["path"] != 2 {
				t.Errorf("marker shapes %v, want 2 circles, 1 rect, 2 paths", shapes)
			}
			all := strings.Join(texts(els), "|")
			for _, w := range []string{"high Cook's distance", "high leverage", "outside its prediction interval"} {
				if !strings.Contains(all, w) {
					t.Errorf("legend lacks %q in %q", w, all)
				}
			}
		})
	}
	if !strings.Contains(string(mp), "measured penetration, mm") || !strings.Contains(string(res), "residual, ln(mm)") {
		t.Errorf("axis titles missing")
	}
}

// TestTags numbers only the marked coupons, in order.
func TestTags(t *testing.T) {
	got := strings.Join(Tags(fitPoints()), ",")
	if want := ",#1,#2,#3,"; got != want {
		t.Errorf("Tags = %q, want %q", got, want)
	}
}
