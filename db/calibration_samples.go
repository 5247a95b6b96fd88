package db

import (
	"context"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// SampleFilter selects the coupons of one group for a fit: current,
// non-voided coupons of the group, optionally welded within [WeldedFrom,
// WeldedTo) (half-open) and on one procedure. With AsOf, "current" means as
// of that moment: only coupon, section, procedure and qualification record
// revisions created at or before it are read.
type SampleFilter struct {
	Group       CalibrationGroup
	WeldedFrom  *Date
	WeldedTo    *Date
	ProcedureID *uuid.UUID
	AsOf        *time.Time
}

// groupCoupon is one selected coupon with its current, non-voided sections'
// penetrations in measurement id (creation) order.
type groupCoupon struct {
	ID                   uuid.UUID   `db:"id"`
	Revision             int32       `db:"revision"`
	ProcedureRevision    int32       `db:"procedure_revision"` // 0: no procedure
	RecordRevision       int32       `db:"record_revision"`    // 0: no qualification record
	SectionIDs           []uuid.UUID `db:"section_ids"`
	SectionRevisions     []int32     `db:"section_revisions"`
	Process              string      `db:"process"`
	JointType            string      `db:"joint_type"`
	ShieldingGas         string      `db:"shielding_gas"`
	CurrentA             float64     `db:"current_a"`
	VoltageV             float64     `db:"voltage_v"`
	TravelSpeedMMPerS    float64     `db:"travel_speed_mm_s"`
	WireFeedSpeedMPerMin *float64    `db:"wire_feed_speed_m_min"`
	CTWDMM               *float64    `db:"ctwd_mm"`
	WireDiameterMM       float64     `db:"wire_diameter_mm"`
	PenetrationsMM       []float64   `db:"penetrations_mm"`
}

// targets are c's fields in siteCoupons' column order, to scan a row into.
func (c *groupCoupon) targets() []any {
	return []any{&c.ID, &c.Revision, &c.ProcedureRevision, &c.RecordRevision, &c.Process, &c.JointType, &c.ShieldingGas, &c.CurrentA, &c.VoltageV,
		&c.TravelSpeedMMPerS, &c.WireFeedSpeedMPerMin, &c.CTWDMM, &c.WireDiameterMM, &c.PenetrationsMM,
		&c.SectionIDs, &c.SectionRevisions}
}

// siteCoupons is the current, non-voided coupons of a site (as of $5 when
// given: revisions created at or before it) with the revisions read, their
// process (the coupon's procedure's, else its qualification record's), their
// wire diameter and shielding gas (their own, else inherited the same way) and sections, welded within the filter's dates and on its procedure.
const siteCoupons = `
		WITH cur AS (
			SELECT DISTINCT ON (id) id, revision, voided, procedure_id, qualification_record_id, welded_on,
			       joint_type, current_a, voltage_v, travel_speed_mm_s, wire_feed_speed_m_min,
			       ctwd_mm, wire_diameter_mm, shielding_gas
			FROM coupons WHERE site = $1 AND ($5::timestamptz IS NULL OR created_at <= $5::timestamptz)
			ORDER BY id, revision DESC
		)
		SELECT cur.id, cur.revision, coalesce(p.revision, 0) AS procedure_revision, coalesce(r.revision, 0) AS record_revision,
		       coalesce(p.process, r.process, '') AS process, cur.joint_type,
		       coalesce(nullif(cur.shielding_gas, ''), p.shielding_gas, r.shielding_gas, '') AS shielding_gas,
		       cur.current_a, cur.voltage_v, cur.travel_speed_mm_s, cur.wire_feed_speed_m_min,
		       cur.ctwd_mm, coalesce(cur.wire_diameter_mm, p.wire_diameter_mm, r.wire_diameter_mm) AS wire_diameter_mm,
		       coalesce(m.pens, '{}') AS penetrations_mm, coalesce(m.ids, '{}') AS section_ids, coalesce(m.revs, '{}') AS section_revisions
		FROM cur
		LEFT JOIN LATERAL (SELECT revision, process, wire_diameter_mm, shielding_gas FROM procedures p WHERE p.site = $1 AND p.id = cur.procedure_id
		                   AND ($5::timestamptz IS NULL OR p.created_at <= $5::timestamptz)
		                   ORDER BY revision DESC LIMIT 1) p ON true
		LEFT JOIN LATERAL (SELECT revision, process, wire_diameter_mm, shielding_gas FROM qualification_records r WHERE r.site = $1 AND r.id = cur.qualification_record_id
		                   AND ($5::timestamptz IS NULL OR r.created_at <= $5::timestamptz)
		                   ORDER BY revision DESC LIMIT 1) r ON true
		LEFT JOIN LATERAL (SELECT array_agg(sec.penetration_mm ORDER BY sec.id) AS pens,
		                          array_agg(sec.id ORDER BY sec.id) AS ids, array_agg(sec.revision ORDER BY sec.id) AS revs FROM (
			SELECT DISTINCT ON (id) id, revision, voided, penetration_mm FROM measurements
			WHERE coupon_id = cur.id AND site = $1 AND ($5::timestamptz IS NULL OR created_at <= $5::timestamptz)
			ORDER BY id, revision DESC) sec
			WHERE NOT sec.voided) m ON true
		WHERE NOT cur.voided
		  AND ($2::date IS NULL OR cur.welded_on >= $2)
		  AND ($3::date IS NULL OR cur.welded_on < $3)
		  AND ($4::uuid IS NULL OR cur.procedure_id = $4)
		ORDER BY cur.id`

// forGroupCoupons runs the selection and calls fn with each coupon of the
// filter's group, compared as the trade does (nominal wire size, gas
// composition): done here, not in SQL, because the gas is parsed. The rows
// stream: memory does not grow with the group.
func forGroupCoupons(ctx context.Context, q querier, site string, f SampleFilter, fn func(*groupCoupon) error) error {
	g := newGroupMatch(f.Group)
	rows, _ := q.Query(ctx, siteCoupons, site, f.WeldedFrom, f.WeldedTo, f.ProcedureID, f.AsOf)
	var c groupCoupon
	_, err := pgx.ForEachRow(rows, c.targets(), func() error {
		if !g.has(c.Process, c.WireDiameterMM, c.ShieldingGas, c.JointType) {
			return nil
		}
		return fn(&c)
	})
	if err != nil {
		return fmt.Errorf("select coupons: %w", err)
	}
	return nil
}

// forGroupCouponsBatched is forGroupCoupons through a cursor of tx, read
// fittedBatch rows at a time, calling flush after each batch (which may
// write in tx between two reads: a plain stream holds the connection).
// The cursor is planned for the whole result, as the plain query is.
func forGroupCouponsBatched(ctx context.Context, tx pgx.Tx, site string, f SampleFilter, fn func(*groupCoupon) error, flush func() error) error {
	g := newGroupMatch(f.Group)
	if _, err := tx.Exec(ctx, `SET LOCAL cursor_tuple_fraction = 1`); err != nil {
		return fmt.Errorf("select coupons: %w", err)
	}
	if _, err := tx.Exec(ctx, `DECLARE selection_rows NO SCROLL CURSOR FOR `+siteCoupons,
		site, f.WeldedFrom, f.WeldedTo, f.ProcedureID, f.AsOf); err != nil {
		return fmt.Errorf("select coupons: %w", err)
	}
	var c groupCoupon
	for {
		rows, _ := tx.Query(ctx, fmt.Sprintf(`FETCH %d FROM selection_rows`, fittedBatch))
		n := 0
		_, err := pgx.ForEachRow(rows, c.targets(), func() error {
			n++
			if !g.has(c.Process, c.WireDiameterMM, c.ShieldingGas, c.JointType) {
				return nil
			}
			return fn(&c)
		})
		if err != nil {
			return fmt.Errorf("select coupons: %w", err)
		}
		if err := flush(); err != nil {
			return err
		}
		if n < fittedBatch {
			break
		}
	}
	if _, err := tx.Exec(ctx, `CLOSE selection_rows`); err != nil {
		return fmt.Errorf("select coupons: %w", err)
	}
	return nil
}

// penetrationSampleOf is the Jackson sample of a measured coupon: the
// coupon is the experimental unit (its sections share one current, voltage
// and travel speed), so its penetration is the mean of its current,
// non-voided sections. A coupon without a section gives none (false).
func penetrationSampleOf(c *groupCoupon) (predict.PenetrationSample, bool) {
	if len(c.PenetrationsMM) == 0 {
		return predict.PenetrationSample{}, false
	}
	return predict.PenetrationSample{ID: c.ID.String(), CurrentA: c.CurrentA, VoltageV: c.VoltageV,
		TravelSpeedMMPerS: c.TravelSpeedMMPerS, PenetrationMM: *predict.SectionMean(c.PenetrationsMM)}, true
}

// meltingSampleOf is the Lesnewich sample of a coupon with a wire feed speed
// and a CTWD (false without them): the melting rate is the wire fed (steady
// state: what is fed is melted), WFS·(π·d²/4)·ρ with the carbon steel
// density 7.85 g/cm³, and the electrode extension is CTWD − arcLengthMM, the
// arc length the caller states for the whole group (it is not recorded per
// coupon).
func meltingSampleOf(c *groupCoupon, arcLengthMM float64) (predict.MeltingSample, bool, error) {
	if c.WireFeedSpeedMPerMin == nil || c.CTWDMM == nil {
		return predict.MeltingSample{}, false, nil
	}
	mr, err := predict.WireMeltingRateKgPerH(*c.WireFeedSpeedMPerMin, c.WireDiameterMM, predict.CarbonSteelDensityKgPerMM3)
	if err != nil {
		return predict.MeltingSample{}, false, &FieldError{Field: "coupons", Reason: fmt.Sprintf("coupon %s: %v", c.ID, err)}
	}
	ext, err := predict.ExtensionFromCTWD(*c.CTWDMM, arcLengthMM)
	if err != nil {
		return predict.MeltingSample{}, false, &FieldError{Field: "arc_length_mm", Reason: fmt.Sprintf("coupon %s: %v", c.ID, err)}
	}
	return predict.MeltingSample{ID: c.ID.String(), CurrentA: c.CurrentA, ExtensionMM: ext, MeltingRateKgPerH: mr}, true, nil
}

// penetrationSamples gives the Jackson samples of the group's measured
// coupons (penetrationSampleOf).
func penetrationSamples(ctx context.Context, q querier, site string, f SampleFilter) ([]predict.PenetrationSample, error) {
	out := []predict.PenetrationSample{}
	err := forGroupCoupons(ctx, q, site, f, func(c *groupCoupon) error {
		if smp, ok := penetrationSampleOf(c); ok {
			out = append(out, smp)
		}
		return nil
	})
	return out, err
}

// meltingSamples gives the Lesnewich samples of the group's coupons that
// have a wire feed speed and a CTWD (meltingSampleOf).
func meltingSamples(ctx context.Context, q querier, site string, f SampleFilter, arcLengthMM float64) ([]predict.MeltingSample, error) {
	out := []predict.MeltingSample{}
	err := forGroupCoupons(ctx, q, site, f, func(c *groupCoupon) error {
		smp, ok, err := meltingSampleOf(c, arcLengthMM)
		if ok {
			out = append(out, smp)
		}
		return err
	})
	return out, err
}

// PenetrationSamples returns the Jackson samples a fit over f would use.
func (s *Store) PenetrationSamples(ctx context.Context, site string, f SampleFilter) ([]predict.PenetrationSample, error) {
	out, err := penetrationSamples(ctx, s.pool, site, f)
	if err != nil {
		return nil, fmt.Errorf("db: penetration samples: %w", err)
	}
	return out, nil
}

// MeltingSamples returns the Lesnewich samples a fit over f would use with
// the given arc length in mm.
func (s *Store) MeltingSamples(ctx context.Context, site string, f SampleFilter, arcLengthMM float64) ([]predict.MeltingSample, error) {
	out, err := meltingSamples(ctx, s.pool, site, f, arcLengthMM)
	if err != nil {
		return nil, fmt.Errorf("db: melting samples: %w", err)
	}
	return out, nil
}
