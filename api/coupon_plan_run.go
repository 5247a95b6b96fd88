package api

import (
	"context"
	"fmt"

	"etchlog/db"
	"etchlog/predict"
)

// planCoupons reads the group's coupons the model would be fitted to (every
// current coupon of the group with what the model needs), fits the model to
// them when it can (for the residual SD the standard errors scale with) and
// fills the plan input; for lesnewich it also sets the extension range from
// the CTWD range and the arc length.
func (s *Server) planCoupons(ctx context.Context, site string, g db.CalibrationGroup, arc float64, pin *predict.PlanInput, out *couponPlanOut) error {
	f := db.SampleFilter{Group: g}
	if pin.Model == predict.ModelLesnewich {
		ms, err := s.store.MeltingSamples(ctx, site, f, arc)
		if err != nil {
			return err
		}
		for _, m := range ms {
			pin.Coupons = append(pin.Coupons, predict.DesignPoint{CurrentA: m.CurrentA, VoltageV: 1, TravelSpeedMMPerS: 1, ExtensionMM: m.ExtensionMM})
		}
		if fit, err := predict.FitMeltingRate(ms); err == nil {
			pin.ResidualSD = fit.ResidualSDKgPerH
		}
		out.CouponsUsed = len(ms)
		return nil
	}
	ps, err := s.store.PenetrationSamples(ctx, site, f)
	if err != nil {
		return err
	}
	for _, p := range ps {
		pin.Coupons = append(pin.Coupons, predict.DesignPoint{CurrentA: p.CurrentA, VoltageV: p.VoltageV, TravelSpeedMMPerS: p.TravelSpeedMMPerS})
	}
	fit, err := predict.FitPenetrationFixed(ps)
	if pin.Model == predict.ModelJacksonFree {
		fit, err = predict.FitPenetrationFree(ps)
	}
	if err == nil {
		pin.ResidualSD = fit.ResidualSDLn
	}
	out.CouponsUsed = len(ps)
	return nil
}

// planExtension sets a melting-rate plan's extension range: the CTWD range
// (the request's within the procedure's, if it has one) less the arc length.
func planExtension(l *procedureLimits, in couponPlanIn, arc float64, sp *predict.DesignSpace, out *couponPlanOut) error {
	got, from := l.merge("ctwd_mm", in.CTWDMM.rng())
	if got == nil {
		return badRequest("ctwd_mm", "is required to plan melting-rate coupons: the CTWD range to choose from, in mm")
	}
	if got.Min-arc <= 0 || got.Min > got.Max {
		return unprocessable(FieldIssue{"ctwd_mm", fmt.Sprintf("%g–%g mm leaves no electrode extension beyond the arc length %g mm", got.Min, got.Max, arc)})
	}
	sp.ExtensionMM, sp.ExtensionOffsetMM, out.LimitsFrom["ctwd_mm"] = &predict.Range{Min: got.Min - arc, Max: got.Max - arc}, arc, from
	return nil
}

// fill copies the plan into the answer, CTWD = extension + arc length.
func (out *couponPlanOut) fill(plan predict.Plan, arc float64, at *settingIn) {
	out.StartingDesign, out.Basis, out.Candidates = plan.Starting, plan.Basis, plan.Candidates
	lesnewich := out.Model == db.CalibrationLesnewich
	point := func(p predict.DesignPoint) proposalOut {
		o := proposalOut{CurrentA: p.CurrentA, VoltageV: p.VoltageV, TravelSpeedMMPerS: p.TravelSpeedMMPerS, Coefficients: []predict.CoefficientShrink{}}
		if lesnewich {
			o.CTWDMM = ptrTo(p.ExtensionMM + arc)
		}
		return o
	}
	out.Proposals = make([]proposalOut, 0, len(plan.Proposals))
	for _, p := range plan.Proposals {
		o := point(p.DesignPoint)
		if p.DetGain > 0 {
			o.DetGain = ptrTo(p.DetGain)
		}
		o.Coefficients = append(o.Coefficients, p.Coefficients...)
		out.Proposals = append(out.Proposals, o)
	}
	if plan.Starting {
		out.Notes = append(out.Notes, "a starting design: weld it, measure the sections and fit, then ask again for the next coupons")
	}
	if t := plan.Target; t != nil && at != nil {
		out.Target = &targetOut{proposalOut: point(t.DesignPoint), At: *at, FactorBefore: t.FactorBefore, FactorAfter: t.FactorAfter,
			MeanSEBefore: t.MeanSEBefore, MeanSEAfter: t.MeanSEAfter, PredSDBefore: t.PredSDBefore, PredSDAfter: t.PredSDAfter}
	}
	if plan.Starting && at != nil {
		out.Notes = append(out.Notes, "no proposal for the production setting: the group cannot be fitted yet")
	}
}
