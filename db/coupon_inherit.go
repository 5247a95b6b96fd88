package db

import (
	"context"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// couponDefaults is what a coupon takes from the record it was welded
// under, its procedure (latest revision), else its qualification record,
// for the fields it leaves out.
type couponDefaults struct {
	Process        string
	WireDiameterMM *float64
	ShieldingGas   string
	Polarity       *string
}

// procedureDefaults is what a coupon welded under procedure p takes from it.
func procedureDefaults(p Procedure) couponDefaults {
	return couponDefaults{Process: p.Process, WireDiameterMM: &p.WireDiameterMM, ShieldingGas: p.ShieldingGas, Polarity: &p.Polarity}
}

// inherit fills the fields c leaves out from d and names them in
// c.Inherited, in field order: process (a coupon has none of its own),
// wire_diameter_mm, shielding_gas, polarity. A field the coupon states is
// never overridden.
func (c *Coupon) inherit(d couponDefaults) {
	c.Process, c.Inherited = d.Process, []string{}
	if d.Process != "" {
		c.Inherited = append(c.Inherited, "process")
	}
	if c.WireDiameterMM == nil && d.WireDiameterMM != nil {
		c.WireDiameterMM = d.WireDiameterMM
		c.Inherited = append(c.Inherited, "wire_diameter_mm")
	}
	if c.ShieldingGas == "" && d.ShieldingGas != "" {
		c.ShieldingGas = d.ShieldingGas
		c.Inherited = append(c.Inherited, "shielding_gas")
	}
	if c.Polarity == nil && d.Polarity != nil {
		c.Polarity = d.Polarity
		c.Inherited = append(c.Inherited, "polarity")
	}
}

// inheritCoupons fills every coupon's left-out fields from its procedure,
// else its qualification record, in one query.
func (s *Store) inheritCoupons(ctx context.Context, q querier, site string, cs []Coupon) error {
	if len(cs) == 0 {
		return nil
	}
	rows, err := q.Query(ctx, inheritSQL, inheritArgs(site, cs)...)
	if err != nil {
		return fmt.Errorf("db: coupon defaults: %w", err)
	}
	return readInherited(rows, cs)
}

// inheritSQL reads the defaults of each coupon: $2 its procedure ids, $3
// its qualification record ids.
const inheritSQL = `
		SELECT x.n, coalesce(p.process, r.process, ''), coalesce(p.wire_diameter_mm, r.wire_diameter_mm),
		       coalesce(p.shielding_gas, r.shielding_gas, ''), coalesce(p.polarity, r.polarity)
		FROM unnest($2::uuid[], $3::uuid[]) WITH ORDINALITY AS x(pid, rid, n)
		LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas, polarity FROM procedures
			WHERE site = $1 AND id = x.pid ORDER BY revision DESC LIMIT 1) p ON true
		LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas, polarity FROM qualification_records
			WHERE site = $1 AND id = x.rid ORDER BY revision DESC LIMIT 1) r ON true`

func inheritArgs(site string, cs []Coupon) []any {
	procs := make([]*uuid.UUID, len(cs))
	recs := make([]*uuid.UUID, len(cs))
	for i, c := range cs {
		procs[i], recs[i] = c.ProcedureID, c.QualificationRecordID
	}
	return []any{site, procs, recs}
}

// readInherited reads the rows of inheritSQL into cs.
func readInherited(rows pgx.Rows, cs []Coupon) error {
	defer rows.Close()
	for rows.Next() {
		var n int64
		var d couponDefaults
		if err := rows.Scan(&n, &d.Process, &d.WireDiameterMM, &d.ShieldingGas, &d.Polarity); err != nil {
			return fmt.Errorf("db: coupon defaults: %w", err)
		}
		cs[n-1].inherit(d)
	}
	if err := rows.Err(); err != nil {
		return fmt.Errorf("db: coupon defaults: %w", err)
	}
	return nil
}
