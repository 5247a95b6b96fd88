package lab

import (
	"fmt"
	"html/template"
	"net/url"

	"etchlog/api/lab/chart"
	"etchlog/predict"
)

// display returns the conversion of quantity name from its stored unit to
// units u and the unit's symbol.
func display(u Units, name string) (func(float64) float64, string) {
	s, _ := spellingFor(u, predict.MustQuantity(name))
	return s.FromStored, s.Unit
}

// fitPoints pairs each sample of the calibration with its diagnostics and
// the fit's prediction interval at its setting (predict's, from the stored
// coefficients), in the units shown.
func fitPoints(u Units, cal calibrationAnswer) ([]chart.FitPoint, error) {
	d := cal.Diagnostics
	if d == nil || cal.Samples == nil {
		return nil, nil
	}
	diag := map[string]predict.SampleDiagnostic{}
	for _, s := range d.Samples {
		diag[s.ID] = s
	}
	point := func(id string) chart.FitPoint {
		s := diag[id]
		return chart.FitPoint{Name: "coupon " + shortID(id), Href: Prefix + "/coupons/" + url.PathEscape(id), Residual: s.Residual,
			HighLeverage: s.HighLeverage, HighCooksDistance: s.HighCooksDistance, OutsideInterval: s.OutsidePrediction}
	}
	var pts []chart.FitPoint
	switch {
	case cal.Fit.Penetration != nil:
		pen, _ := display(u, "penetration_mm")
		speed, _ := display(u, "travel_speed_mm_s")
		for _, s := range cal.Samples.Penetration {
			iv, err := cal.Fit.Penetration.Predict(s.CurrentA, s.VoltageV, s.TravelSpeedMMPerS, cal.Level)
			if err != nil {
				return nil, fmt.Errorf("lab: predict coupon %s: %w", s.ID, err)
			}
			p := point(s.ID)
			p.Measured, p.Predicted = pen(s.PenetrationMM), pen(iv.MedianMM)
			p.PredLow, p.PredHigh = pen(iv.PredLowMM), pen(iv.PredHighMM)
			p.Factors = []float64{s.CurrentA, s.VoltageV, speed(s.TravelSpeedMMPerS)}
			pts = append(pts, p)
		}
	case cal.Fit.Melting != nil:
		rate, _ := display(u, "melting_rate_kg_h")
		ext, _ := display(u, "extension_mm")
		for _, s := range cal.Samples.Melting {
			iv, err := cal.Fit.Melting.Predict(s.CurrentA, s.ExtensionMM, cal.Level)
			if err != nil {
				return nil, fmt.Errorf("lab: predict coupon %s: %w", s.ID, err)
			}
			p := point(s.ID)
			p.Measured, p.Predicted = rate(s.MeltingRateKgPerH), rate(iv.MeanKgPerH)
			p.PredLow, p.PredHigh = rate(iv.PredLowKgPerH), rate(iv.PredHighKgPerH)
			p.Residual = p.Measured - p.Predicted
			p.Factors = []float64{s.CurrentA, ext(s.ExtensionMM)}
			pts = append(pts, p)
		}
	}
	return pts, nil
}

// shortID is the first block of a record id, enough to tell coupons apart.
func shortID(id string) string {
	if len(id) > 8 {
		return id[:8]
	}
	return id
}

// fitFigures draws measured against predicted and the residuals against
// each setting the model takes.
func fitFigures(u Units, cal calibrationAnswer, pts []chart.FitPoint) ([]figure, error) {
	level := levelPercent(cal.Level)
	quantity, name, response := "penetration", "penetration_mm", "ln(measured/predicted)"
	measured := "the coupon's mean section penetration"
	factors := []string{"current_a", "voltage_v", "travel_speed_mm_s"}
	if cal.Fit.Melting != nil {
		quantity, name, measured = "melting rate", "melting_rate_kg_h", "the wire it melted, per hour"
		factors = []string{"current_a", "extension_mm"}
	}
	_, unit := display(u, name)
	if cal.Fit.Melting != nil {
		response = unit
	}
	svg, err := chart.MeasuredPredicted("Measured against predicted "+quantity, quantity, unit, cal.Level, pts)
	if err != nil {
		return nil, err
	}
	figs := []figure{{ID: "measured-predicted", Heading: "Measured against predicted " + quantity, SVG: template.HTML(svg),
		Caption: fmt.Sprintf("Each mark is one coupon: %s against the fit's value at its settings. The dashed line is perfect agreement; "+
			"the shaded band joins the %s prediction intervals for one new coupon at the coupons' settings.", measured, level)}}
	for k, f := range factors {
		_, fu := display(u, f)
		words := VariableLabel(f)
		axis := fmt.Sprintf("%s, %s", lower(words), fu)
		svg, err := chart.Residuals("Residuals against "+lower(words), axis, response, k, pts)
		if err != nil {
			return nil, err
		}
		figs = append(figs, figure{ID: "residuals-" + f, Heading: "Residuals against " + lower(words), SVG: template.HTML(svg),
			Caption: fmt.Sprintf("A trend here says the model misses how %s acts on %s; a random scatter about zero is what the fit assumes.", lower(words), quantity)})
	}
	return figs, nil
}

// lower puts the first letter in lower case ("current" from "Current"),
// keeping capitals that are initials ("CTWD").
func lower(s string) string {
	if len(s) > 1 && s[1] >= 'A' && s[1] <= 'Z' {
		return s
	}
	if s != "" && s[0] >= 'A' && s[0] <= 'Z' {
		return string(s[0]+'a'-'A') + s[1:]
	}
	return s
}
