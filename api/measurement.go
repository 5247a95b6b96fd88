package api

import (
	"github.com/google/uuid"
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// measurementIn is the request body for a macro-etch measurement. The coupon
// comes from the path on create and from the stored record on correction.
type measurementIn struct {
	changeFields
	Section         string   `json:"section"`
	PenetrationMM   *float64 `json:"penetration_mm"`
	PenetrationIn   *float64 `json:"penetration_in"`
	BeadWidthMM     *float64 `json:"bead_width_mm"`
	BeadWidthIn     *float64 `json:"bead_width_in"`
	ReinforcementMM *float64 `json:"reinforcement_mm"`
	ReinforcementIn *float64 `json:"reinforcement_in"`
	Leg1MM          *float64 `json:"leg1_mm"`
	Leg1In          *float64 `json:"leg1_in"`
	Leg2MM          *float64 `json:"leg2_mm"`
	Leg2In          *float64 `json:"leg2_in"`
	ThroatMM        *float64 `json:"throat_mm"`
	ThroatIn        *float64 `json:"throat_in"`
	FusedAreaMM2    *float64 `json:"fused_area_mm2"`
	FusedAreaIn2    *float64 `json:"fused_area_in2"`
	Acceptance      string   `json:"acceptance"`
	Inspector       string   `json:"inspector"`
	Remark          string   `json:"remark"`
}

// couponMeasurementsPath is the route under which a coupon's measurements are created and listed.
const couponMeasurementsPath = "/v1/coupons/:id/measurements"

func inch2(field string, v *float64) spelling {
	return spelling{field, v, func(a float64) float64 { return a * 25.4 * 25.4 }}
}

func (in measurementIn) data(c echo.Context, s *Server) (db.MeasurementData, error) {
	var u units
	d := db.MeasurementData{
		Section:         in.Section,
		PenetrationMM:   u.req(mm("penetration_mm", in.PenetrationMM), inch("penetration_in", in.PenetrationIn)),
		BeadWidthMM:     u.req(mm("bead_width_mm", in.BeadWidthMM), inch("bead_width_in", in.BeadWidthIn)),
		ReinforcementMM: u.req(mm("reinforcement_mm", in.ReinforcementMM), inch("reinforcement_in", in.ReinforcementIn)),
		Leg1MM:          u.opt(mm("leg1_mm", in.Leg1MM), inch("leg1_in", in.Leg1In)),
		Leg2MM:          u.opt(mm("leg2_mm", in.Leg2MM), inch("leg2_in", in.Leg2In)),
		ThroatMM:        u.opt(mm("throat_mm", in.ThroatMM), inch("throat_in", in.ThroatIn)),
		FusedAreaMM2:    u.opt(mm("fused_area_mm2", in.FusedAreaMM2), inch2("fused_area_in2", in.FusedAreaIn2)),
		Acceptance:      in.Acceptance, Inspector: in.Inspector, Remark: in.Remark,
	}
	if err := u.err(); err != nil {
		return d, err
	}
	id, err := pathID(c)
	if err != nil {
		return d, err
	}
	if c.Path() == couponMeasurementsPath { // create: the path names the coupon
		if err := s.couponExists(c, id); err != nil {
			return d, err
		}
		d.CouponID = id
		return d, nil
	}
	// correction: the measurement stays on its coupon
	old, err := s.store.Measurement(c.Request().Context(), actorOf(c).Site, id, 0)
	if err != nil {
		return d, err
	}
	d.CouponID = old.CouponID
	return d, nil
}

func (s *Server) measurementResource() resource[measurementIn, db.MeasurementData, db.Measurement] {
	return resource[measurementIn, db.MeasurementData, db.Measurement]{
		path: "/v1/measurements", create: s.store.CreateMeasurement, correct: s.store.CorrectMeasurement,
		void: s.store.VoidMeasurement, get: s.store.Measurement, revisions: s.store.MeasurementRevisions,
	}
}

func (s *Server) handleMeasurementList(c echo.Context) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	f := db.MeasurementFilter{Acceptance: c.QueryParam("acceptance"), IncludeVoided: c.QueryParam("include_voided") == "true"}
	if c.Path() == couponMeasurementsPath {
		id, err := pathID(c)
		if err != nil {
			return err
		}
		if err := s.couponExists(c, id); err != nil {
			return err
		}
		f.CouponID = &id
	} else if f.CouponID, err = queryUUID(c, "coupon_id"); err != nil {
		return err
	}
	p, err := s.store.Measurements(c.Request().Context(), actorOf(c).Site, f, c.QueryParam("cursor"), limit)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, pageOf(p))
}

// couponExists answers 404 when the coupon named by the path is not at the
// caller's site (a voided coupon exists: its sections stay readable, and the
// store refuses new ones).
func (s *Server) couponExists(c echo.Context, id uuid.UUID) error {
	_, err := s.store.Coupon(c.Request().Context(), actorOf(c).Site, id, 0)
	return err
}
