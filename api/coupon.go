package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// couponIn is the request body for a coupon: the stored fields, each
// quantity in any registered spelling (bound by storedSpellings).
type couponIn struct {
	changeFields
	db.CouponData
}

func (in couponIn) data(echo.Context, *Server) (db.CouponData, error) { return in.CouponData, nil }

func (s *Server) couponResource() resource[couponIn, db.CouponData, db.Coupon] {
	return resource[couponIn, db.CouponData, db.Coupon]{
		path: "/v1/coupons", create: s.store.CreateCoupon, correct: s.store.CorrectCoupon,
		void: s.store.VoidCoupon, get: s.store.Coupon, revisions: s.store.CouponRevisions,
	}
}

func (s *Server) handleCouponList(c echo.Context) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	f := db.CouponFilter{WelderID: c.QueryParam("welder_id"), CouponMark: c.QueryParam("coupon_mark"), Acceptance: c.QueryParam("acceptance"),
		IncludeVoided: c.QueryParam("include_voided") == "true"}
	if f.ProcedureID, err = queryUUID(c, "procedure_id"); err != nil {
		return err
	}
	if f.QualificationRecordID, err = queryUUID(c, "qualification_record_id"); err != nil {
		return err
	}
	if f.WeldedFrom, err = queryDay(c, "welded_from"); err != nil {
		return err
	}
	if f.WeldedTo, err = queryDay(c, "welded_to"); err != nil {
		return err
	}
	p, err := s.store.Coupons(c.Request().Context(), actorOf(c).Site, f, c.QueryParam("cursor"), limit)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, pageOf(p))
}
