package api_test

import (
	"context"
	"encoding/json"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
)

// inputKind is one input schema of the API with the endpoint that creates a
// record from it, so validation tables can run over every schema alike.
type inputKind struct {
	name     string // subtest name
	schema   string // OpenAPI schema name
	role     string // a role that may create it
	read     string // collection under which a record is read back: read + "/" + id
	path     func(e *testEnv) string
	body     func(e *testEnv) map[string]any // every field, metric, unique where needed
	data     func() any                      // the stored data type, carrying the validate tags
	required []string                        // quantities required in one of several spellings (the schema's allOf/anyOf)
	// direct stores body through the Store, skipping the API's validation, so
	// a test can see what the database's own CHECK rules refuse.
	direct func(e *testEnv, body map[string]any) error
}

// inputKinds lists the foundation's four input schemas.
func inputKinds() []inputKind {
	return []inputKind{
		{
			name: "Procedure", schema: "ProcedureIn", role: db.RoleEngineer, read: "/v1/procedures",
			path:     func(*testEnv) string { return "/v1/procedures" },
			body:     func(e *testEnv) map[string]any { return procedureBody(uniq("WPS"), e.pqr()) },
			data:     func() any { return db.ProcedureData{} },
			required: []string{"wire_diameter_mm", "thickness_min_mm", "thickness_max_mm"},
			direct: func(e *testEnv, b map[string]any) error {
				d := decodeAs[db.ProcedureData](e.t, b)
				_, err := e.store.CreateProcedure(context.Background(), e.actor(), d)
				return err
			},
		},
		{
			name: "QualificationRecord", schema: "QualificationRecordIn", role: db.RoleEngineer, read: "/v1/qualification-records",
			path:     func(*testEnv) string { return "/v1/qualification-records" },
			body:     func(*testEnv) map[string]any { return qualificationRecordBody(uniq("PQR")) },
			data:     func() any { return db.QualificationRecordData{} },
			required: []string{"wire_diameter_mm", "thickness_mm", "travel_speed_mm_s"},
			direct: func(e *testEnv, b map[string]any) error {
				d := decodeAs[db.QualificationRecordData](e.t, b)
				_, err := e.store.CreateQualificationRecord(context.Background(), e.actor(), d)
				return err
			},
		},
		{
			name: "Coupon", schema: "CouponIn", role: db.RoleTechnician, read: "/v1/coupons",
			path:     func(*testEnv) string { return "/v1/coupons" },
			body:     func(e *testEnv) map[string]any { return couponBody(e.procedure(), e.pqr(), uniq("C")) },
			data:     func() any { return db.CouponData{} },
			required: []string{"thickness_mm", "travel_speed_mm_s"},
			direct: func(e *testEnv, b map[string]any) error {
				d := decodeAs[db.CouponData](e.t, b)
				_, err := e.store.CreateCoupon(context.Background(), e.actor(), d)
				return err
			},
		},
		{
			name: "Measurement", schema: "MeasurementIn", role: db.RoleTechnician, read: "/v1/measurements",
			path:     func(e *testEnv) string { return "/v1/coupons/" + e.coupon() + "/measurements" },
			body:     func(*testEnv) map[string]any { return measurementBody(uniq("S")) }, // labels are unique per coupon
			data:     func() any { return db.MeasurementData{} },
			required: []string{"penetration_mm", "bead_width_mm", "reinforcement_mm"},
			direct: func(e *testEnv, b map[string]any) error {
				d := decodeAs[db.MeasurementData](e.t, b)
				d.CouponID = uuid.MustParse(e.coupon())
				_, err := e.store.CreateMeasurement(context.Background(), e.actor(), d)
				return err
			},
		},
	}
}

// actor is the env's engineer as a Store actor.
func (e *testEnv) actor() db.Actor {
	return db.Actor{Site: e.site, Name: userName(db.RoleEngineer), Role: db.RoleEngineer}
}

// decodeAs reads a metric request body into a stored data type; their JSON
// names agree, which is what lets a test bypass the API.
func decodeAs[T any](tb testing.TB, body map[string]any) T {
	tb.Helper()
	var v T
	js, err := json.Marshal(body)
	if err == nil {
		err = json.Unmarshal(js, &v)
	}
	if err != nil {
		tb.Fatalf("decode body as %T: %v", v, err)
	}
	return v
}
