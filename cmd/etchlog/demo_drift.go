package main

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"etchlog/db"
	"etchlog/predict"
)

// loadDemoFollowUps writes the groove procedure's follow-up coupons, welded
// after its calibration was activated, on the shop's three power sources in
// turn. Invented for the demo: power source PS-3 was serviced on 2026-10-15
// and its current feedback has read low since, so it welds hotter than its
// display says and its coupons come out about 16 % deeper than the
// calibration predicts; PS-1 and PS-2 stay on the calibration. Welders and
// wire lots rotate independently of the machines, so only PS-3's chart
// moves. Call it from loadDemo after the calibrations are activated.
func loadDemoFollowUps(ctx context.Context, s *db.Store, groove db.Procedure) error {
	tech := db.Actor{Site: demoSite, Name: demoUsers[0].name, Role: db.RoleTechnician}
	rng := rand.New(rand.NewPCG(2026, 14))
	wire := predict.InchToMM(0.045)
	for i := 0; i < 24; i++ {
		ps := fmt.Sprintf("PS-%d", 1+i%3)
		welded := db.DateOf(demoDay(44 + i/3)) // 2026-10-15 onwards, three coupons a day
		cur := 285 * (0.92 + 0.16*rng.Float64())
		volt := 29 * (0.96 + 0.08*rng.Float64())
		speed := predict.InPerMinToMMPerS(14 * (0.85 + 0.3*rng.Float64()))
		c, err := s.CreateCoupon(ctx, tech, db.CouponData{
			ProcedureID: &groove.ID, CouponMark: fmt.Sprintf("TR-204-F%02d", i+1),
			WelderID: []string{"TR-W04", "TR-W09", "TR-W12"}[(i/3)%3], PowerSourceID: ps,
			FillerLot: fmt.Sprintf("H%05d", 41260+(i/2)%2), WeldedOn: welded, JointType: "butt",
			ThicknessMM: 19, PassNumber: 1, CurrentA: round(cur, 0), VoltageV: round(volt, 1),
			TravelSpeedMMPerS: round(speed, 2), WireFeedSpeedMPerMin: ptr(round(9.65*cur/285, 2)),
			CTWDMM: ptr(round(predict.InchToMM(0.75), 1)), WireDiameterMM: ptr(wire), ShieldingGas: "Ar-10CO2",
			Polarity: ptr("DCEP"), Position: "1G", PreheatC: ptr(20.0), InterpassC: ptr(150.0),
		})
		if err != nil {
			return err
		}
		heat := math.Cbrt(math.Pow(c.CurrentA, 4) / (c.TravelSpeedMMPerS * c.VoltageV * c.VoltageV))
		for _, sec := range []string{"A", "B"} {
			pen := 0.0370 * heat * math.Exp(0.08*rng.NormFloat64())
			if ps == "PS-3" && i >= 11 { // from PS-3's fourth follow-up coupon on
				pen *= 1.16
			}
			if _, err := s.CreateMeasurement(ctx, tech, db.MeasurementData{
				CouponID: c.ID, Section: sec, PenetrationMM: round(pen, 2),
				BeadWidthMM: round(heat*0.09*(0.95+0.1*rng.Float64()), 1), ReinforcementMM: round(1+rng.Float64(), 1),
				Acceptance: "accept", Inspector: "TR-QC2",
			}); err != nil {
				return err
			}
		}
	}
	return nil
}
