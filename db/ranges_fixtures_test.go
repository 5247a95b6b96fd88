package db_test

import (
	"context"
	"testing"
	"time"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
	"github.com/google/uuid"

	"etchlog/db"
)

// The PQR, coupons and production records below are fixtures (plausible
// GMAW spray values on carbon steel), not reference data.

// rangesPQRData is a GMAW spray PQR: 200 A, 24 V, 6 mm/s, 8 m/min, 1.2 mm
// ER70S-6, Ar-10CO2, DCEP, 2G, 10 mm plate, 20 °C preheat.
func rangesPQRData(number string) db.QualificationRecordData {
	return db.QualificationRecordData{
		RecordNumber: number, Process: "GMAW", WeldedOn: db.DateOf(time.Date(2026, 10, 1, 0, 0, 0, 0, time.UTC)),
		WelderID: "W-11", FillerClassification: "ER70S-6", WireDiameterMM: 1.2, ShieldingGas: "Ar-10CO2",
		Polarity: "DCEP", TransferMode: "spray", Position: "2G", BaseMetalGroup: "carbon steel", ThicknessMM: 10,
		CurrentA: 200, VoltageV: 24, TravelSpeedMMPerS: 6, WireFeedSpeedMPerMin: ptr(8.0), CTWDMM: ptr(18.0),
		PreheatC: ptr(20.0), VisualResult: "pass", BendResult: "pass", TensileResult: "pass", MacroResult: "pass",
		Outcome: "pass",
	}
}

// rangesProcedure stores the PQR and a procedure it supports, and returns the procedure.
func rangesProcedure(t *testing.T, s *db.Store, a db.Actor) db.Procedure {
	t.Helper()
	ctx := context.Background()
	q, err := s.CreateQualificationRecord(ctx, a, rangesPQRData("PQR-"+uuid.NewString()[:8]))
	if err != nil {
		t.Fatalf("CreateQualificationRecord: %v", err)
	}
	pd := procedureData("WPS-" + uuid.NewString()[:8])
	pd.WireDiameterMM, pd.ShieldingGas, pd.TransferMode = 1.2, "Ar-10CO2", "spray"
	pd.SupportingRecordIDs = []uuid.UUID{q.ID}
	p, err := s.CreateProcedure(ctx, a, pd)
	if err != nil {
		t.Fatalf("CreateProcedure: %v", err)
	}
	return p
}

// rangesCoupon is a coupon on procedure p matching the PQR except current and voltage.
func rangesCoupon(p uuid.UUID, mark string, currentA, voltageV float64) db.CouponData {
	c := couponData(p, mark)
	c.CurrentA, c.VoltageV, c.TravelSpeedMMPerS, c.WireFeedSpeedMPerMin = currentA, voltageV, 6, ptr(8.0)
	c.WireDiameterMM, c.ShieldingGas, c.Position, c.ThicknessMM = ptr(1.2), "Ar-10CO2", "2G", 10
	return c
}

// productionRow is one production record on procedure p.
func productionRow(p uuid.UUID, weld string, currentA float64) db.ProductionRecordData {
	return db.ProductionRecordData{ProcedureID: p, WeldID: weld, WelderID: "W-11",
		RecordedAt: time.Date(2026, 11, 5, 8, 0, 0, 0, time.UTC), CurrentA: currentA, VoltageV: 24,
		TravelSpeedMMPerS: 6, WireFeedSpeedMPerMin: 8, CTWDMM: ptr(18.0)}
}

// procedureFlags lists every flag of a procedure, in list order.
func procedureFlags(t *testing.T, s *db.Store, site string, p uuid.UUID) []db.Flag {
	t.Helper()
	var all []db.Flag
	cursor := ""
	for {
		page, err := s.Flags(context.Background(), site, db.FlagFilter{ProcedureID: &p}, cursor, 7)
		if err != nil {
			t.Fatalf("Flags: %v", err)
		}
		all = append(all, page.Items...)
		if page.Next == "" {
			return all
		}
		cursor = page.Next
	}
}

// flagKey names a flag by subject, variable and kind.
type flagKey struct {
	subject        uuid.UUID
	variable, kind string
}

// flagsByKey indexes flags, dropping what every recompute changes (time, version).
func flagsByKey(flags []db.Flag) map[flagKey]db.Flag {
	m := map[flagKey]db.Flag{}
	for _, f := range flags {
		f.ComputedAt, f.RangesVersion = time.Time{}, 0
		m[flagKey{f.SubjectID, f.Variable, f.Kind}] = f
	}
	return m
}

// sameFlag compares two flags with a relative tolerance on the numbers.
func sameFlag(a, b db.Flag) bool {
	return cmp.Equal(a, b, cmpopts.EquateApprox(1e-12, 0), cmpopts.EquateEmpty())
}
