package api

import (
	"net/http"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// couponIn is the request body for a coupon.
type couponIn struct {
	changeFields
	ProcedureID           *uuid.UUID `json:"procedure_id"`
	QualificationRecordID *uuid.UUID `json:"qualification_record_id"`
	CouponMark            string     `json:"coupon_mark"`
	WelderID              string     `json:"welder_id"`
	PowerSourceID         string     `json:"power_source_id"`
	FillerLot             string     `json:"filler_lot"`
	WeldedOn              db.Date    `json:"welded_on"`
	JointType             string     `json:"joint_type"`
	ThicknessMM           *float64   `json:"thickness_mm"`
	ThicknessIn           *float64   `json:"thickness_in"`
	PassNumber            int        `json:"pass_number"`
	CurrentA              float64    `json:"current_a"`
	VoltageV              float64    `json:"voltage_v"`
	TravelSpeedMMPerS     *float64   `json:"travel_speed_mm_s"`
	TravelSpeedMMPerMin   *float64   `json:"travel_speed_mm_min"`
	TravelSpeedInPerMin   *float64   `json:"travel_speed_in_min"`
	WireFeedSpeedMPerMin  *float64   `json:"wire_feed_speed_m_min"`
	WireFeedSpeedInPerMin *float64   `json:"wire_feed_speed_in_min"`
	CTWDMM                *float64   `json:"ctwd_mm"`
	CTWDIn                *float64   `json:"ctwd_in"`
	WireDiameterMM        *float64   `json:"wire_diameter_mm"`
	WireDiameterIn        *float64   `json:"wire_diameter_in"`
	ShieldingGas          string     `json:"shielding_gas"`
	Polarity              string     `json:"polarity"`
	Position              string     `json:"position"`
	PreheatC              *float64   `json:"preheat_c"`
	PreheatF              *float64   `json:"preheat_f"`
	InterpassC            *float64   `json:"interpass_c"`
	InterpassF            *float64   `json:"interpass_f"`
}

func (in couponIn) data(echo.Context, *Server) (db.CouponData, error) {
	var u units
	d := db.CouponData{
		ProcedureID: in.ProcedureID, QualificationRecordID: in.QualificationRecordID, CouponMark: in.CouponMark,
		WelderID: in.WelderID, PowerSourceID: in.PowerSourceID, FillerLot: in.FillerLot, WeldedOn: in.WeldedOn,
		JointType:   in.JointType,
		ThicknessMM: u.req(mm("thickness_mm", in.ThicknessMM), inch("thickness_in", in.ThicknessIn)),
		PassNumber:  in.PassNumber, CurrentA: in.CurrentA, VoltageV: in.VoltageV,
		TravelSpeedMMPerS: u.req(mmPerS("travel_speed_mm_s", in.TravelSpeedMMPerS),
			mmPerMin("travel_speed_mm_min", in.TravelSpeedMMPerMin), inPerMin("travel_speed_in_min", in.TravelSpeedInPerMin)),
		WireFeedSpeedMPerMin: u.opt(mPerMin("wire_feed_speed_m_min", in.WireFeedSpeedMPerMin),
			wfsInPerMin("wire_feed_speed_in_min", in.WireFeedSpeedInPerMin)),
		CTWDMM:         u.opt(mm("ctwd_mm", in.CTWDMM), inch("ctwd_in", in.CTWDIn)),
		WireDiameterMM: u.req(mm("wire_diameter_mm", in.WireDiameterMM), inch("wire_diameter_in", in.WireDiameterIn)),
		ShieldingGas:   in.ShieldingGas, Polarity: in.Polarity, Position: in.Position,
		PreheatC:   u.opt(celsius("preheat_c", in.PreheatC), fahrenheit("preheat_f", in.PreheatF)),
		InterpassC: u.opt(celsius("interpass_c", in.InterpassC), fahrenheit("interpass_f", in.InterpassF)),
	}
	return d, u.err()
}

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
