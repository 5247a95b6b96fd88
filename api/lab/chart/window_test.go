package chart

import (
	"strings"
	"testing"
)

// TestWindowGrid draws a 3 × 2 grid with one empty cell: six cells, each
// labelled with its span and the limits at its ends, the empty one "none",
// and the nominal point as a star labelled with its current.
func TestWindowGrid(t *testing.T) {
	var cells []WindowCell
	for _, v := range []float64{19, 20.5, 22} {
		for _, s := range []float64{4, 6} {
			c := WindowCell{X: v, Y: s, Feasible: true, LowA: 150, HighA: 150 + 10*v - 5*s,
				LowLimit: "penetration_min", HighLimit: "current_max"}
			cells = append(cells, c)
		}
	}
	cells[5].Feasible, cells[5].LowLimit, cells[5].HighLimit = false, "penetration_min", "heat_input_max"
	svg, err := Window("parameter window", "voltage, V", "travel speed, mm/s", cells, &WindowNominal{X: 20.5, Y: 4, CurrentA: 172})
	if err != nil {
		t.Fatalf("Window: %v", err)
	}
	selfContained(t, svg)
	els := parseSVG(t, svg)
	got := byClass(els, "plot-cell")
	if len(got) != len(cells) {
		t.Fatalf("%d cells, want %d", len(got), len(cells))
	}
	if ok := byClass(els, "plot-feasible"); len(ok) != 5 {
		t.Errorf("%d feasible cells, want 5", len(ok))
	}
	all := strings.Join(texts(els), "|")
	for _, w := range []string{"170 A", "none", "pen–Imax", "pen–heat", "nominal 172 A", "none fits"} {
		if !strings.Contains(all, w) {
			t.Errorf("grid lacks the text %q in %q", w, all)
		}
	}
	if n := len(byClass(els, "plot-nominal")); n != 1 {
		t.Errorf("%d nominal marks, want 1", n)
	}
}

// TestSpanBin puts the widest span in the last colour and none below zero.
func TestSpanBin(t *testing.T) {
	for _, c := range []struct {
		span, widest float64
		want         int
	}{
		{0, 50, 0}, {9.9, 50, 0}, {10, 50, 1}, {50, 50, len(Spans) - 1}, {5, 0, len(Spans) - 1},
	} {
		if got := spanBin(c.span, c.widest); got != c.want {
			t.Errorf("spanBin(%g, %g) = %d, want %d", c.span, c.widest, got, c.want)
		}
	}
}
