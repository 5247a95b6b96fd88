package db_test

import (
	"context"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
)

// The fixtures below are plausible GMAW values on carbon steel for exercising
// storage; they are not reference data.

func ptr[T any](v T) *T { return &v }

func actor(site string) db.Actor { return db.Actor{Site: site, Name: "tester", Role: db.RoleEngineer} }

func procedureData(code string) db.ProcedureData {
	return db.ProcedureData{
		Code: code, Title: "Fillet, carbon steel, short circuit", Process: "GMAW",
		FillerClassification: "ER70S-6", WireDiameterMM: 0.9, ShieldingGas: "Ar-25CO2",
		Polarity: "DCEP", TransferMode: "short_circuit", Positions: []string{"1F", "2F"},
		BaseMetalGroup: "carbon steel", ThicknessMinMM: 3, ThicknessMaxMM: 12,
		MinPenetrationMM: ptr(1.0), Status: "draft",
	}
}

func couponData(procedureID uuid.UUID, mark string) db.CouponData {
	return db.CouponData{
		ProcedureID: &procedureID, CouponMark: mark, WelderID: "W-07", PowerSourceID: "PS-2",
		FillerLot: "L2231", WeldedOn: db.DateOf(time.Date(2026, 11, 3, 0, 0, 0, 0, time.UTC)),
		JointType: "fillet", ThicknessMM: 6, PassNumber: 1, CurrentA: 180, VoltageV: 21,
		TravelSpeedMMPerS: 5, WireFeedSpeedMPerMin: ptr(7.6), CTWDMM: ptr(15.0), WireDiameterMM: ptr(0.9),
		ShieldingGas: "Ar-25CO2", Polarity: ptr("DCEP"), Position: "2F", PreheatC: ptr(20.0),
	}
}

func measurementData(couponID uuid.UUID, section, acceptance string) db.MeasurementData {
	return db.MeasurementData{
		CouponID: couponID, Section: section, PenetrationMM: 1.8, BeadWidthMM: 7.5,
		ReinforcementMM: 1.2, Leg1MM: ptr(6.1), Leg2MM: ptr(5.9), Acceptance: acceptance, Inspector: "QC-3",
	}
}

func mustProcedure(t *testing.T, s *db.Store, site string) db.Procedure {
	t.Helper()
	p, err := s.CreateProcedure(context.Background(), actor(site), procedureData("WPS-"+uuid.NewString()[:8]))
	if err != nil {
		t.Fatalf("CreateProcedure: %v", err)
	}
	return p
}
