package api

import (
	"context"
	"fmt"

	"github.com/google/uuid"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// measurementIn is the request body for a macro-etch measurement: the
// stored fields, each quantity in any registered spelling. The coupon comes
// from the path on create and from the stored record on correction.
type measurementIn struct {
	changeFields
	db.MeasurementData
}

// couponMeasurementsPath is the route under which a coupon's measurements are created and listed.
const couponMeasurementsPath = "/v1/coupons/:id/measurements"

func (in measurementIn) data(c echo.Context, s *Server) (db.MeasurementData, error) {
	d := in.MeasurementData
	id, err := pathID(c)
	if err != nil {
		return d, err
	}
	coupon := id
	if c.Path() == couponMeasurementsPath { // create: the path names the coupon
		if err := s.couponExists(c, id); err != nil {
			return d, err
		}
	} else { // correction: the measurement stays on its coupon
		old, err := s.store.Measurement(c.Request().Context(), actorOf(c).Site, id, 0)
		if err != nil {
			return d, err
		}
		coupon = old.CouponID
	}
	// coupon_id is owned like the bookkeeping: sent back unchanged it is
	// ignored, another coupon is refused.
	if in.CouponID != uuid.Nil && in.CouponID != coupon {
		return d, unprocessable(FieldIssue{"coupon_id", fmt.Sprintf("a section stays on its coupon %s; %s differs (leave coupon_id out or send it unchanged)", coupon, in.CouponID)})
	}
	d.CouponID = coupon
	return d, nil
}

func (s *Server) measurementResource() resource[measurementIn, db.MeasurementData, db.Measurement] {
	return resource[measurementIn, db.MeasurementData, db.Measurement]{
		path: "/v1/measurements", create: s.store.CreateMeasurement, correct: s.store.CorrectMeasurement,
		void: s.store.VoidMeasurement, get: s.store.Measurement, revisions: s.store.MeasurementRevisions,
	}
}

func (s *Server) handleMeasurementList(c echo.Context) error {
	var err error
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
	site := actorOf(c).Site
	return answerList(s, c, "measurements", func(ctx context.Context, cursor string, limit int) (db.Page[db.Measurement], error) {
		return s.store.Measurements(ctx, site, f, cursor, limit)
	})
}

// couponExists answers 404 when the coupon named by the path is not at the
// caller's site (a voided coupon exists: its sections stay readable, and the
// store refuses new ones).
func (s *Server) couponExists(c echo.Context, id uuid.UUID) error {
	_, err := s.store.Coupon(c.Request().Context(), actorOf(c).Site, id, 0)
	return err
}
