package api

import (
	"context"
	"fmt"
	"math"
	"slices"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// couponIn is the request body for a coupon: the stored fields, each
// quantity in any registered spelling (bound by storedSpellings), and the
// read-only process and inherited of a read sent back (see leftOut).
type couponIn struct {
	changeFields
	db.CouponData
	Process   *string  `json:"process,omitempty"`
	Inherited []string `json:"inherited,omitempty"`
}

func (in couponIn) data(c echo.Context, s *Server) (db.CouponData, error) {
	if in.Process == nil && in.Inherited == nil {
		return in.CouponData, nil
	}
	var v issues
	if in.BaseRevision == nil {
		const why = "is set by the server (taken from the procedure); leave it out of a new record"
		if in.Process != nil {
			v.refused("process", why)
		}
		if in.Inherited != nil {
			v.refused("inherited", why)
		}
		return in.CouponData, v.err()
	}
	id, err := pathID(c)
	if err != nil {
		return in.CouponData, err
	}
	base, err := s.store.Coupon(c.Request().Context(), actorOf(c).Site, id, *in.BaseRevision)
	if err != nil { // no such revision: the store's stale-revision check answers 409
		return in.CouponData, nil
	}
	if in.Process != nil && *in.Process != base.Process {
		v.refused("process", fmt.Sprintf("is taken from the procedure: %q differs from %q; leave it out or send it unchanged", *in.Process, base.Process))
	}
	if in.Inherited != nil && !slices.Equal(in.Inherited, base.Inherited) {
		v.refused("inherited", fmt.Sprintf("is set by the server: %v differs from the base revision's %v; leave it out or send it unchanged", in.Inherited, base.Inherited))
	}
	if err := v.err(); err != nil {
		return in.CouponData, err
	}
	return leftOut(in.CouponData, base), nil
}

// leftOut keeps a correction faithful to what was written: a read sent back
// carries the inherited values, so a field the base revision inherits and
// the body sends unchanged (to the 12 significant digits a read shows) stays
// left out; a changed value becomes the coupon's own.
func leftOut(d db.CouponData, base db.Coupon) db.CouponData {
	for _, f := range base.Inherited {
		switch f {
		case "wire_diameter_mm":
			if d.WireDiameterMM != nil && base.WireDiameterMM != nil && sameAsRead(*d.WireDiameterMM, *base.WireDiameterMM) {
				d.WireDiameterMM = nil
			}
		case "polarity":
			if d.Polarity != nil && base.Polarity != nil && *d.Polarity == *base.Polarity {
				d.Polarity = nil
			}
		case "shielding_gas":
			if d.ShieldingGas == base.ShieldingGas {
				d.ShieldingGas = ""
			}
		}
	}
	return d
}

// sameAsRead reports whether sent is stored as a read shows it: reads write
// 12 significant digits (and inch-pound reads convert back with rounding).
func sameAsRead(sent, stored float64) bool {
	return math.Abs(sent-stored) <= 1e-11*math.Abs(stored)
}

func (s *Server) couponResource() resource[couponIn, db.CouponData, db.Coupon] {
	return resource[couponIn, db.CouponData, db.Coupon]{
		path: "/v1/coupons", create: s.store.CreateCoupon, correct: s.store.CorrectCoupon,
		void: s.store.VoidCoupon, get: s.store.Coupon, revisions: s.store.CouponRevisions,
	}
}

func (s *Server) handleCouponList(c echo.Context) error {
	var err error
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
	site := actorOf(c).Site
	return answerList(s, c, "coupons", func(ctx context.Context, cursor string, limit int) (db.Page[db.Coupon], error) {
		return s.store.Coupons(ctx, site, f, cursor, limit)
	})
}
