package db_test

import (
	"context"
	"fmt"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkCouponWrite compares a coupon write through the Store (transaction,
// link checks, revision row, audit chain link) with the baseline of a bare
// INSERT of the same row through pgx, side by side on the same database.
// Compare the two ns/op figures as a ratio; absolute times depend on the machine.
func BenchmarkCouponWrite(b *testing.B) {
	s := dbtest.Store(b)
	site := dbtest.Site(b)
	ctx := context.Background()
	p, err := s.CreateProcedure(ctx, actor(site), procedureData("WPS-BENCH"))
	if err != nil {
		b.Fatal(err)
	}
	n := 0 // marks stay unique across the benchmark's repeated runs
	b.Run("Store", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			n++
			if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("B-S-%d", n))); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("RawInsert", func(b *testing.B) {
		c := couponData(p.ID, "")
		for i := 0; i < b.N; i++ {
			n++
			_, err := s.Pool().Exec(ctx, `
				INSERT INTO coupons (site, id, revision, created_at, created_by, procedure_id, coupon_mark,
					welder_id, welded_on, joint_type, thickness_mm, pass_number, current_a, voltage_v,
					travel_speed_mm_s, wire_diameter_mm, polarity, position)
				VALUES ($1, $2, 1, now(), 'bench', $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15)`,
				site+"-raw", uuid.New(), p.ID, fmt.Sprintf("B-R-%d", n), c.WelderID, c.WeldedOn, c.JointType,
				c.ThicknessMM, c.PassNumber, c.CurrentA, c.VoltageV, c.TravelSpeedMMPerS, c.WireDiameterMM,
				c.Polarity, c.Position)
			if err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkCouponList compares one 100-row page of current coupons through the
// Store (latest revision per record, filters, keyset) with a bare SELECT of
// 100 rows of the same table.
func BenchmarkCouponList(b *testing.B) {
	s := dbtest.Store(b)
	site := dbtest.Site(b)
	ctx := context.Background()
	p, err := s.CreateProcedure(ctx, actor(site), procedureData("WPS-BENCH-L"))
	if err != nil {
		b.Fatal(err)
	}
	for i := 0; i < 1000; i++ {
		if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprintf("B-L-%d", i))); err != nil {
			b.Fatal(err)
		}
	}
	b.Run("Store", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			if _, err := s.Coupons(ctx, site, db.CouponFilter{}, "", 100); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("RawSelect", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			rows, err := s.Pool().Query(ctx, `SELECT id, coupon_mark, current_a FROM coupons WHERE site = $1 ORDER BY id LIMIT 100`, site)
			if err != nil {
				b.Fatal(err)
			}
			for rows.Next() {
			}
			rows.Close()
		}
	})
}
