package db

import (
	"context"
	"errors"
	"fmt"

	"github.com/google/uuid"
)

// CouponData is what was welded on one test coupon. Units: mm, mm/s (travel
// speed), m/min (wire feed speed), A, V, °C. Wire diameter, polarity and
// shielding gas may be left out (NULL, or ” for the gas): the coupon was
// welded with its procedure's, else its qualification record's.
type CouponData struct {
	ProcedureID           *uuid.UUID `db:"procedure_id" json:"procedure_id,omitempty" validate:"required_without=QualificationRecordID"`
	QualificationRecordID *uuid.UUID `db:"qualification_record_id" json:"qualification_record_id,omitempty"`
	CouponMark            string     `db:"coupon_mark" json:"coupon_mark" validate:"required,max=64"`
	WelderID              string     `db:"welder_id" json:"welder_id" validate:"required,max=64"`
	PowerSourceID         string     `db:"power_source_id" json:"power_source_id" validate:"max=64"`
	FillerLot             string     `db:"filler_lot" json:"filler_lot" validate:"max=64"`
	WeldedOn              Date       `db:"welded_on" json:"welded_on" validate:"required,plausible_day"`
	JointType             string     `db:"joint_type" json:"joint_type" validate:"required,enum"`
	ThicknessMM           float64    `db:"thickness_mm" json:"thickness_mm" validate:"required,quantity"`
	PassNumber            int        `db:"pass_number" json:"pass_number" validate:"required,quantity"`
	CurrentA              float64    `db:"current_a" json:"current_a" validate:"required,quantity"`
	VoltageV              float64    `db:"voltage_v" json:"voltage_v" validate:"required,quantity"`
	TravelSpeedMMPerS     float64    `db:"travel_speed_mm_s" json:"travel_speed_mm_s" validate:"required,quantity"`
	WireFeedSpeedMPerMin  *float64   `db:"wire_feed_speed_m_min" json:"wire_feed_speed_m_min,omitempty" validate:"omitempty,quantity"`
	CTWDMM                *float64   `db:"ctwd_mm" json:"ctwd_mm,omitempty" validate:"omitempty,quantity"`
	WireDiameterMM        *float64   `db:"wire_diameter_mm" json:"wire_diameter_mm,omitempty" validate:"omitempty,quantity"`
	ShieldingGas          string     `db:"shielding_gas" json:"shielding_gas" validate:"max=64"`
	Polarity              *string    `db:"polarity" json:"polarity,omitempty" validate:"omitempty,enum"`
	Position              string     `db:"position" json:"position" validate:"required,max=8"`
	PreheatC              *float64   `db:"preheat_c" json:"preheat_c,omitempty" validate:"omitempty,quantity"`
	InterpassC            *float64   `db:"interpass_c" json:"interpass_c,omitempty" validate:"omitempty,quantity"`
}

// Coupon is one stored revision of a coupon as read: the fields it leaves
// out carry the effective value taken from its procedure (else its
// qualification record), named in Inherited, and Process is always taken
// from there (a coupon has no process of its own). The row itself keeps
// what was written.
type Coupon struct {
	Meta
	CouponData
	Process   string   `db:"-" json:"process"`
	Inherited []string `db:"-" json:"inherited"`
}

var coupons = table{name: "coupons", entity: "coupon", fields: recordColumns(CouponData{})}

// CreateCoupon stores revision 1 of a new coupon and its flags. When it
// judged the coupon by inputs kept from an earlier create and the write
// found them changed meanwhile (judged.go), it drops them and writes once
// more, reading afresh.
func (s *Store) CreateCoupon(ctx context.Context, a Actor, c CouponData) (Coupon, error) {
	ctx = carryUserCheck(ctx) // in the claim of the mark (recordedNew)
	m, err := s.newRecord(a)
	if err != nil {
		return Coupon{}, err
	}
	var in *couponInputs
	written, err := s.recordedNew(ctx, coupons, couponMark, m, c.CouponMark, recordValues(c), actionCreate,
		func() *judgedCheck { return in.check })
	if err != nil {
		return Coupon{}, fmt.Errorf("db: create coupon: %w", err)
	}
	for useKept := true; ; useKept = false {
		out := Coupon{Meta: m, CouponData: c}
		err := s.write(ctx, "create coupon",
			readWrittenCoupon(ctx, &s.judged, useKept, m, c, &in),
			written,
			writtenCouponFlags(ctx, &s.judged, m, &in, &out),
		)
		if errors.Is(err, errJudgementChanged) && useKept {
			s.judged.drop(judgedKey{m.Site, *c.ProcedureID, c.JointType})
			continue // read afresh: nothing kept is used, so nothing is checked
		}
		if err != nil {
			return Coupon{}, s.duplicateMark(ctx, a.Site, c.CouponMark, err)
		}
		return out, nil
	}
}

// CorrectCoupon stores the next revision of a coupon and rewrites its flags.
func (s *Store) CorrectCoupon(ctx context.Context, a Actor, id uuid.UUID, ch Change, c CouponData) (Coupon, error) {
	m := s.nextRevision(a, id, ch, false)
	out := Coupon{Meta: m, CouponData: c}
	var in *couponInputs
	if err := s.write(ctx, "correct coupon "+id.String(),
		coupons.baseIs(ctx, a.Site, id, ch),
		readWrittenCoupon(ctx, &s.judged, false, m, c, &in),
		claimMark(ctx, couponMark, m, c.CouponMark),
		s.recorded(ctx, coupons, m, recordValues(c), actionCorrect),
		writtenCouponFlags(ctx, &s.judged, m, &in, &out),
	); err != nil {
		return Coupon{}, err
	}
	return out, nil
}

// VoidCoupon voids a coupon with a reason; a voided coupon has no flags.
func (s *Store) VoidCoupon(ctx context.Context, a Actor, id uuid.UUID, ch Change) (Coupon, error) {
	m := s.nextRevision(a, id, ch, true)
	if err := s.write(ctx, "void coupon "+id.String(),
		coupons.baseIs(ctx, a.Site, id, ch),
		coupons.voidLatest(ctx, m),
		s.logged(ctx, coupons, m, actionVoid),
		couponFlags(ctx, m),
	); err != nil {
		return Coupon{}, err
	}
	return s.Coupon(ctx, a.Site, id, 0)
}

// Coupon reads the latest revision of a coupon, or revision rev when rev > 0.
func (s *Store) Coupon(ctx context.Context, site string, id uuid.UUID, rev int) (Coupon, error) {
	c, err := readOne[Coupon](ctx, s, coupons, site, id, rev)
	if err != nil {
		return c, err
	}
	one := []Coupon{c}
	err = s.inheritCoupons(ctx, s.pool, site, one)
	return one[0], err
}

// CouponRevisions lists every revision of a coupon, oldest first.
func (s *Store) CouponRevisions(ctx context.Context, site string, id uuid.UUID) ([]Coupon, error) {
	v, err := revisions[Coupon](ctx, s, coupons, site, id)
	if err != nil {
		return nil, err
	}
	return v, s.inheritCoupons(ctx, s.pool, site, v)
}

// CouponFilter selects coupons in a list. Acceptance "reject" keeps coupons
// with at least one rejected section; "accept" keeps measured coupons with none.
// Welding days are half-open: WeldedFrom included, WeldedTo not.
type CouponFilter struct {
	ProcedureID           *uuid.UUID
	QualificationRecordID *uuid.UUID
	WelderID              string
	CouponMark            string
	WeldedFrom            *Date
	WeldedTo              *Date
	Acceptance            string
	IncludeVoided         bool
}

// Coupons lists current coupons after the cursor, in log order, each with
// what it inherits (listCoupons).
func (s *Store) Coupons(ctx context.Context, site string, cf CouponFilter, cursor string, limit int) (Page[Coupon], error) {
	return s.listCoupons(ctx, site, cf, cursor, limit)
}
