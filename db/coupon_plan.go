package db

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// A coupon plan is the record of trial coupons an engineer means to weld:
// the proposals of a plan request with a mark reserved for each. Marks stay
// unique among current records through current_marks (mark.go); a plan
// reserves its marks in coupon_plan_marks, refusing one a current record
// already holds or another plan reserved. The coupon welded to the plan
// then claims its mark as any coupon does: a reserved mark is not taken
// from current_marks, so the coupon that carries it is the planned one.

func init() {
	RegisterLeafKind(LeafKind{Kind: "coupon_plan", Version: 1, Table: "coupon_plans", Columns: []string{
		"site", "id", "created_at", "created_by", "procedure_id", "model", "process", "wire_diameter_mm",
		"shielding_gas", "joint_type", "request", "plan", "marks", "note"}})
}

// CouponPlan is a stored coupon plan. Request and Plan are the request and
// the proposals as the API gave them (JSON objects); Marks are the reserved
// marks, one per proposal, in order.
type CouponPlan struct {
	Site        string           `db:"site" json:"site"`
	ID          uuid.UUID        `db:"id" json:"id"`
	CreatedAt   time.Time        `db:"created_at" json:"created_at"`
	CreatedBy   string           `db:"created_by" json:"created_by"`
	ProcedureID uuid.UUID        `db:"procedure_id" json:"procedure_id"`
	Model       CalibrationModel `db:"model" json:"model"`
	CalibrationGroup
	Request json.RawMessage `db:"request" json:"request"`
	Plan    json.RawMessage `db:"plan" json:"plan"`
	Marks   []string        `db:"marks" json:"marks"`
	Note    string          `db:"note" json:"note"`
}

const couponPlanColumns = `site, id, created_at, created_by, procedure_id, model, process, wire_diameter_mm,
	shielding_gas, joint_type, request, plan, marks, note`

// CreateCouponPlan stores a plan and reserves its marks in one transaction
// with its log leaf. A mark a current coupon or qualification record holds,
// or another plan reserved, is a DuplicateError naming field and holder.
func (s *Store) CreateCouponPlan(ctx context.Context, a Actor, p CouponPlan) (CouponPlan, error) {
	id, err := uuid.NewV7()
	if err != nil {
		return CouponPlan{}, err
	}
	p.Site, p.ID, p.CreatedAt, p.CreatedBy = a.Site, id, s.now(), a.Name
	err = s.tx(ctx, func(tx pgx.Tx) error {
		if err := exists(ctx, tx, procedures, a.Site, p.ProcedureID, "procedure_id"); err != nil {
			return err
		}
		for i, m := range p.Marks {
			var holder uuid.UUID
			err := tx.QueryRow(ctx, `SELECT record_id FROM current_marks WHERE site = $1 AND kind = 'coupon_mark' AND mark = $2`,
				a.Site, m).Scan(&holder)
			if err == nil {
				return &DuplicateError{Field: "mark_prefix", ExistingID: holder,
					Reason: fmt.Sprintf("coupon %s already has the mark %q; choose another prefix", holder, m)}
			}
			if !errors.Is(err, pgx.ErrNoRows) {
				return err
			}
			if _, err := tx.Exec(ctx, `INSERT INTO coupon_plan_marks (site, mark, plan_id, position) VALUES ($1, $2, $3, $4)
				ON CONFLICT DO NOTHING`, a.Site, m, p.ID, i+1); err != nil {
				return mapError(err)
			}
			if err := tx.QueryRow(ctx, `SELECT plan_id FROM coupon_plan_marks WHERE site = $1 AND mark = $2`, a.Site, m).Scan(&holder); err != nil {
				return err
			}
			if holder != p.ID {
				return &DuplicateError{Field: "mark_prefix", ExistingID: holder,
					Reason: fmt.Sprintf("coupon plan %s already reserves the mark %q; choose another prefix", holder, m)}
			}
		}
		if _, err := tx.Exec(ctx, `INSERT INTO coupon_plans (`+couponPlanColumns+`)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14)`,
			p.Site, p.ID, p.CreatedAt, p.CreatedBy, p.ProcedureID, p.Model, p.Process, p.WireDiameterMM,
			p.ShieldingGas, p.JointType, p.Request, p.Plan, p.Marks, p.Note); err != nil {
			return mapError(err)
		}
		return s.AppendLeaf(ctx, tx, LeafEntry{Kind: "coupon_plan", Site: a.Site, ID: p.ID, Revision: 1,
			Actor: a.Name, Action: "create", At: p.CreatedAt})
	})
	if err != nil {
		return CouponPlan{}, fmt.Errorf("db: create coupon plan: %w", err)
	}
	return p, nil
}

// CouponPlan reads one plan.
func (s *Store) CouponPlan(ctx context.Context, site string, id uuid.UUID) (CouponPlan, error) {
	rows, _ := s.pool.Query(ctx, `SELECT `+couponPlanColumns+` FROM coupon_plans WHERE site = $1 AND id = $2`, site, id)
	p, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[CouponPlan])
	if errors.Is(err, pgx.ErrNoRows) {
		return p, fmt.Errorf("db: coupon plan %s: %w", id, ErrNotFound)
	}
	if err != nil {
		return p, fmt.Errorf("db: coupon plan %s: %w", id, err)
	}
	return p, nil
}

// PlannedCoupon is a current, non-voided coupon that carries one of a plan's marks.
type PlannedCoupon struct {
	Mark string    `db:"mark" json:"coupon_mark"`
	ID   uuid.UUID `db:"id" json:"coupon_id"`
}

// PlannedCoupons returns the current, non-voided coupons carrying the
// plan's marks: the planned coupons that have come back.
func (s *Store) PlannedCoupons(ctx context.Context, site string, marks []string) ([]PlannedCoupon, error) {
	rows, _ := s.pool.Query(ctx, `SELECT m.mark, m.record_id AS id FROM (`+storedMarksSQL+`) m
		WHERE NOT (SELECT voided FROM coupons c WHERE c.site = $1 AND c.id = m.record_id ORDER BY revision DESC LIMIT 1)
		ORDER BY m.mark`, site, couponMark.kind, marks)
	out, err := pgx.CollectRows(rows, pgx.RowToStructByName[PlannedCoupon])
	if err != nil {
		return nil, fmt.Errorf("db: planned coupons: %w", err)
	}
	return out, nil
}
