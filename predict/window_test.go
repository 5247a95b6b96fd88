package predict_test

import (
	"errors"
	"math"
	"slices"
	"testing"

	"etchlog/predict"
)

// demoWindow is a GMAW 1.2 mm steel window. The Lesnewich coefficients and
// targets are illustrative (invented, not a reference); the assertions check
// the window against the forward models, which are checked elsewhere.
func demoWindow() predict.WindowInput {
	return predict.WindowInput{
		CurrentA:             predict.Range{Min: 180, Max: 300},
		VoltageV:             predict.Range{Min: 24, Max: 30},
		TravelSpeedMMPerS:    predict.Range{Min: 5, Max: 9},
		WireFeedSpeedMPerMin: &predict.Range{Min: 6, Max: 12},
		ExtensionMM:          &predict.Range{Min: 12, Max: 20},
		VoltageSteps:         7, TravelSpeedSteps: 5, ExtensionSteps: 3,
		Penetration: &predict.PenetrationTarget{MinMM: 3, K: predict.JacksonK{Value: 0.0019, Units: predict.JacksonUnitsInch}},
		Deposition: &predict.DepositionTarget{
			MinKgPerH: 3.5, MaxKgPerH: 5.5, Efficiency: 0.95,
			Lesnewich:      &predict.Lesnewich{AlphaKgPerHA: 0.008, BetaKgPerHA2MM: 3e-6},
			WireDiameterMM: 1.2, DensityKgPerMM3: predict.CarbonSteelDensityKgPerMM3,
		},
		HeatInput: &predict.HeatInputTarget{MaxJPerMM: 1000,
			Rule: predict.HeatInputRule{Form: predict.HeatInputThermalEfficiency, Efficiency: 0.8}},
	}
}

// limitValue evaluates, with the forward models, the quantity a limit bounds
// at current i in cell c, and the bound itself.
func limitValue(tb testing.TB, in predict.WindowInput, c predict.WindowCell, lim predict.Limit, i float64) (got, bound float64) {
	tb.Helper()
	d := in.Deposition
	var err error
	switch lim {
	case predict.LimitCurrentMin:
		return i, in.CurrentA.Min
	case predict.LimitCurrentMax:
		return i, in.CurrentA.Max
	case predict.LimitPenetrationMin:
		got, err = predict.PenetrationMM(in.Penetration.K, i, c.TravelSpeedMMPerS, c.VoltageV)
		bound = in.Penetration.MinMM
	case predict.LimitHeatInputMax:
		got, err = in.HeatInput.Rule.JPerMM(c.VoltageV, i, c.TravelSpeedMMPerS)
		bound = in.HeatInput.MaxJPerMM
	case predict.LimitDepositionMin, predict.LimitDepositionMax:
		got, err = d.Lesnewich.DepositionRateKgPerH(i, c.ExtensionMM, d.Efficiency)
		bound = map[bool]float64{true: d.MinKgPerH, false: d.MaxKgPerH}[lim == predict.LimitDepositionMin]
	case predict.LimitWireFeedSpeedMin, predict.LimitWireFeedSpeedMax:
		mr, _ := d.Lesnewich.MeltingRateKgPerH(i, c.ExtensionMM)
		got, err = predict.WireFeedSpeedForMeltingRateMPerMin(mr, d.WireDiameterMM, d.DensityKgPerMM3)
		bound = map[bool]float64{true: in.WireFeedSpeedMPerMin.Min, false: in.WireFeedSpeedMPerMin.Max}[lim == predict.LimitWireFeedSpeedMin]
	default:
		tb.Fatalf("unexpected limit %q", lim)
	}
	if err != nil {
		tb.Fatalf("%s at %v A: %v", lim, i, err)
	}
	return got, bound
}

// allLimits lists the current-bounding limits present in demoWindow.
var allLimits = []predict.Limit{
	predict.LimitCurrentMin, predict.LimitCurrentMax, predict.LimitPenetrationMin, predict.LimitHeatInputMax,
	predict.LimitDepositionMin, predict.LimitDepositionMax, predict.LimitWireFeedSpeedMin, predict.LimitWireFeedSpeedMax,
}

// satisfied reports whether current i meets every limit in cell c, by the forward models.
func satisfied(tb testing.TB, in predict.WindowInput, c predict.WindowCell, i float64) bool {
	tb.Helper()
	for _, lim := range allLimits {
		got, bound := limitValue(tb, in, c, lim, i)
		isMin := lim == predict.LimitCurrentMin || lim == predict.LimitPenetrationMin ||
			lim == predict.LimitDepositionMin || lim == predict.LimitWireFeedSpeedMin
		if isMin && got < bound || !isMin && got > bound {
			return false
		}
	}
	return true
}

func TestParameterWindowIntervalsAreExact(t *testing.T) {
	in := demoWindow()
	w, err := predict.ParameterWindow(in)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := len(w.Cells), 7*5*3; got != want {
		t.Fatalf("len(Cells) = %d, want %d", got, want)
	}
	feasible := 0
	for _, c := range w.Cells {
		iv := c.CurrentA
		if iv.Empty() {
			continue
		}
		feasible++
		// Each end sits exactly on the limit named for it (forward model check).
		for _, end := range []struct {
			lim predict.Limit
			i   float64
		}{{iv.LoLimit, iv.Lo}, {iv.HiLimit, iv.Hi}} {
			got, bound := limitValue(t, in, c, end.lim, end.i)
			checkRel(t, string(end.lim)+" at interval end", got, bound, 1e-12)
		}
		// Just inside, every limit holds; just outside, the named one fails.
		eps := 1e-9 * iv.Lo
		if iv.Hi-iv.Lo > 2*eps && (!satisfied(t, in, c, iv.Lo+eps) || !satisfied(t, in, c, iv.Hi-eps)) {
			t.Errorf("cell %+v: a limit fails just inside [%v, %v]", c, iv.Lo, iv.Hi)
		}
		if satisfied(t, in, c, iv.Lo-eps) || satisfied(t, in, c, iv.Hi+eps) {
			t.Errorf("cell %+v: all limits hold just outside [%v, %v]", c, iv.Lo, iv.Hi)
		}
	}
	if feasible == 0 || !w.Feasible {
		t.Fatalf("demo window: %d feasible cells, Feasible = %v, want some", feasible, w.Feasible)
	}
	t.Logf("demo window: %d of %d grid points feasible; nominal %+v", feasible, len(w.Cells), w.Nominal)
}

func TestParameterWindowNominal(t *testing.T) {
	in := demoWindow()
	w, err := predict.ParameterWindow(in)
	if err != nil {
		t.Fatal(err)
	}
	n := w.Nominal
	var cell predict.WindowCell
	for _, c := range w.Cells {
		if c.VoltageV == n.VoltageV && c.TravelSpeedMMPerS == n.TravelSpeedMMPerS && c.ExtensionMM == n.ExtensionMM {
			cell = c
		}
	}
	checkRel(t, "nominal current = √(Lo·Hi)", n.CurrentA, math.Sqrt(cell.CurrentA.Lo*cell.CurrentA.Hi), 1e-15)
	if !satisfied(t, in, cell, n.CurrentA) || !(n.Margin > 0) || len(n.Closest) == 0 {
		t.Errorf("nominal %+v: limits not all met or margin not positive", n)
	}
	// The reported margin is the smallest log margin; recompute the current part.
	if m := 0.5 * math.Log(cell.CurrentA.Hi/cell.CurrentA.Lo); n.Margin > m+1e-15 {
		t.Errorf("Margin = %v exceeds current log margin %v", n.Margin, m)
	}
	// Max-min by brute force over the grid, with the documented log margins.
	for _, c := range w.Cells {
		if c.CurrentA.Empty() {
			continue
		}
		m := min(0.5*math.Log(c.CurrentA.Hi/c.CurrentA.Lo),
			math.Log(c.VoltageV/in.VoltageV.Min), math.Log(in.VoltageV.Max/c.VoltageV),
			math.Log(c.TravelSpeedMMPerS/in.TravelSpeedMMPerS.Min), math.Log(in.TravelSpeedMMPerS.Max/c.TravelSpeedMMPerS),
			math.Log(c.ExtensionMM/in.ExtensionMM.Min), math.Log(in.ExtensionMM.Max/c.ExtensionMM))
		if m > n.Margin+1e-15 {
			t.Errorf("cell %+v has smallest margin %v > nominal Margin %v", c, m, n.Margin)
		}
	}
	p, _ := predict.PenetrationMM(in.Penetration.K, n.CurrentA, n.TravelSpeedMMPerS, n.VoltageV)
	h, _ := in.HeatInput.Rule.JPerMM(n.VoltageV, n.CurrentA, n.TravelSpeedMMPerS)
	dep, _ := in.Deposition.Lesnewich.DepositionRateKgPerH(n.CurrentA, n.ExtensionMM, 0.95)
	checkRel(t, "nominal PenetrationMM", n.PenetrationMM, p, 1e-14)
	checkRel(t, "nominal HeatInputJPerMM", n.HeatInputJPerMM, h, 1e-14)
	checkRel(t, "nominal DepositionKgPerH", n.DepositionKgPerH, dep, 1e-14)
}

func TestParameterWindowInfeasible(t *testing.T) {
	in := demoWindow()
	in.Deposition, in.WireFeedSpeedMPerMin = nil, nil
	in.HeatInput.MaxJPerMM = 400 // too little heat for 3 mm penetration here
	w, err := predict.ParameterWindow(in)
	if err != nil {
		t.Fatal(err)
	}
	if w.Feasible || w.Infeasible == nil {
		t.Fatalf("Feasible = %v, Infeasible = %v; want infeasible", w.Feasible, w.Infeasible)
	}
	want := []predict.Limit{predict.LimitPenetrationMin, predict.LimitHeatInputMax}
	if !slices.Equal(w.Infeasible.Binding, want) {
		t.Errorf("Binding = %v, want %v (%s)", w.Infeasible.Binding, want, w.Infeasible.Message)
	}
	if !errors.Is(w.Infeasible, predict.ErrInfeasible) {
		t.Errorf("errors.Is(Infeasible, ErrInfeasible) = false")
	}
	t.Log(w.Infeasible.Message)
}

func TestParameterWindowWireFeedMode(t *testing.T) {
	in := demoWindow()
	in.Deposition.Lesnewich = nil
	in.ExtensionMM = nil
	in.TravelSpeedMMPerS = predict.Range{Min: 6, Max: 6} // a given travel speed
	w, err := predict.ParameterWindow(in)
	if err != nil {
		t.Fatal(err)
	}
	if got := len(w.Cells); got != 7 {
		t.Errorf("len(Cells) = %d, want 7 (voltage grid only)", got)
	}
	iv := w.WireFeedSpeedMPerMin
	if iv == nil || iv.Empty() {
		t.Fatalf("WireFeedSpeedMPerMin = %+v, want a non-empty interval", iv)
	}
	// By the mass balance, the ends give exactly the deposition band or the WFS range.
	lo, _ := predict.WireMeltingRateKgPerH(iv.Lo, 1.2, predict.CarbonSteelDensityKgPerMM3)
	checkRel(t, "deposition at WFS Lo", lo*0.95, 3.5, 1e-14)
	hi, _ := predict.WireMeltingRateKgPerH(iv.Hi, 1.2, predict.CarbonSteelDensityKgPerMM3)
	checkRel(t, "deposition at WFS Hi", hi*0.95, 5.5, 1e-14)
	if iv.LoLimit != predict.LimitDepositionMin || iv.HiLimit != predict.LimitDepositionMax {
		t.Errorf("WFS interval limits = %s, %s; want deposition_min, deposition_max", iv.LoLimit, iv.HiLimit)
	}
	in.WireFeedSpeedMPerMin = &predict.Range{Min: 2, Max: 5} // below the deposition band
	if w, _ = predict.ParameterWindow(in); w.Feasible || !slices.Equal(w.Infeasible.Binding,
		[]predict.Limit{predict.LimitDepositionMin, predict.LimitWireFeedSpeedMax}) {
		t.Errorf("WFS 2–5 m/min: Feasible = %v, Infeasible = %+v; want deposition_min vs wire_feed_speed_max", w.Feasible, w.Infeasible)
	}
}

func TestParameterWindowRejectsBadInput(t *testing.T) {
	cases := []struct {
		name string
		edit func(*predict.WindowInput)
	}{
		{"ErrCurrentMinAboveMax", func(in *predict.WindowInput) { in.CurrentA = predict.Range{Min: 300, Max: 200} }},
		{"ErrVoltageNaN", func(in *predict.WindowInput) { in.VoltageV.Max = math.NaN() }},
		{"ErrTravelZero", func(in *predict.WindowInput) { in.TravelSpeedMMPerS.Min = 0 }},
		{"ErrNegativeSteps", func(in *predict.WindowInput) { in.VoltageSteps = -1 }},
		{"ErrPenetrationZero", func(in *predict.WindowInput) { in.Penetration.MinMM = 0 }},
		{"ErrHeatInputInf", func(in *predict.WindowInput) { in.HeatInput.MaxJPerMM = math.Inf(1) }},
		{"ErrLesnewichWithoutExtension", func(in *predict.WindowInput) { in.ExtensionMM = nil }},
		{"ErrDepositionBandReversed", func(in *predict.WindowInput) { in.Deposition.MinKgPerH = 9 }},
		{"ErrTooManyGridPoints", func(in *predict.WindowInput) { in.VoltageSteps, in.TravelSpeedSteps = 5000, 5000 }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			in := demoWindow()
			c.edit(&in)
			if _, err := predict.ParameterWindow(in); !errors.Is(err, predict.ErrInvalidInput) {
				t.Errorf("ParameterWindow error = %v, want ErrInvalidInput", err)
			}
		})
	}
}

func BenchmarkParameterWindow(b *testing.B) {
	in := demoWindow()
	in.VoltageSteps, in.TravelSpeedSteps, in.ExtensionSteps = 9, 9, 5 // 405 grid points
	b.ReportAllocs()
	for b.Loop() {
		if _, err := predict.ParameterWindow(in); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkPenetrationMM(b *testing.B) {
	k := predict.JacksonK{Value: 0.036, Units: predict.JacksonUnitsMetric}
	b.ReportAllocs()
	for b.Loop() {
		_, _ = predict.PenetrationMM(k, 250, 6, 27)
	}
}

func BenchmarkCurrentForMeltingRateA(b *testing.B) {
	l := predict.Lesnewich{AlphaKgPerHA: 0.008, BetaKgPerHA2MM: 3e-6}
	b.ReportAllocs()
	for b.Loop() {
		_, _ = l.CurrentForMeltingRateA(4.5, 15)
	}
}
