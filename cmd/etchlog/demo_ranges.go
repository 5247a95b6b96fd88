package main

import (
	"context"
	"fmt"
	"time"

	"etchlog/db"
	"etchlog/predict"
)

// loadDemoRanges derives the qualified ranges of the demo shop's qualified
// procedures under the built-in structural-style rule set (written from
// memory: verify against your code of record) and logs a shift of invented
// production welds on the groove procedure, one of them above its current
// range. Call it from loadDemo once the coupons are written; it recomputes
// the coupons' flags as it derives.
func loadDemoRanges(ctx context.Context, s *db.Store) error {
	eng := db.Actor{Site: demoSite, Name: demoUsers[1].name, Role: db.RoleEngineer}
	tech := db.Actor{Site: demoSite, Name: demoUsers[0].name, Role: db.RoleTechnician}
	procs, err := s.Procedures(ctx, demoSite, db.ProcedureFilter{Status: "qualified"}, "", db.MaxPageSize)
	if err != nil {
		return err
	}
	var groove *db.Procedure
	for i, p := range procs.Items {
		if len(p.SupportingRecordIDs) == 0 {
			continue
		}
		if _, err := s.DeriveRanges(ctx, eng, p.ID, "structural-style-gmaw", 0); err != nil {
			return fmt.Errorf("derive ranges of %s: %w", p.Code, err)
		}
		if p.Code == "WPS-TR-204" {
			groove = &procs.Items[i]
		}
	}
	if groove == nil {
		return nil
	}
	// PQR-TR-21 welded 285 A, 29 V, 14 ipm, 380 ipm: ±10 % current is 256.5–313.5 A.
	start := time.Date(2026, 11, 23, 7, 0, 0, 0, time.UTC)
	var recs []db.ProductionRecordData
	for i, amps := range []float64{281, 288, 279, 292, 286, 331, 284, 290} {
		recs = append(recs, db.ProductionRecordData{
			ProcedureID: groove.ID, WeldID: fmt.Sprintf("TR-J%03d", 101+i), WelderID: []string{"TR-W09", "TR-W12"}[i%2],
			RecordedAt: start.Add(time.Duration(i*25) * time.Minute), CurrentA: amps, VoltageV: 29 + 0.2*float64(i%3),
			TravelSpeedMMPerS: predict.InPerMinToMMPerS(14), WireFeedSpeedMPerMin: predict.InPerMinToMPerMin(380 * amps / 285),
			CTWDMM: ptr(predict.InchToMM(0.75)),
		})
	}
	_, err = s.CreateProductionRecords(ctx, tech, recs)
	return err
}
