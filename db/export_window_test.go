package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db/dbtest"
	"etchlog/db/logfmt"
)

// The export reads each kind's table in storage order beside its leaves and
// reports the rows no leaf claimed as not in the log. Stored rows with no
// leaf ahead of the logged ones, few or more than the rows it holds ahead of
// their leaves, must each come out as unlogged exactly once, and every leaf
// must still find its row. (Rows with no leaf are written with SQL alone:
// the tampering they stand for is the one the export reports.)
func TestExportReportsRowsWithoutLeaf(t *testing.T) {
	ctx := context.Background()
	s := dbtest.Store(t)
	conn := dbtest.Conn(t)
	for _, unlogged := range []int{5, 20001} { // below and above the rows held ahead (20,000)
		t.Run(fmt.Sprint(unlogged), func(t *testing.T) {
			site := fmt.Sprintf("win-%d-%s", unlogged, uuid.NewString()[:8])
			p := mustProcedure(t, s, site)
			now := time.Now()
			if _, err := conn.CopyFrom(ctx, pgx.Identifier{"coupons"}, []string{"site", "id", "revision", "created_at",
				"created_by", "procedure_id", "coupon_mark", "welder_id", "welded_on", "joint_type", "thickness_mm",
				"pass_number", "current_a", "voltage_v", "travel_speed_mm_s", "position"},
				pgx.CopyFromSlice(unlogged, func(i int) ([]any, error) {
					return []any{site, uuid.New(), 1, now, "sql", p.ID, fmt.Sprint("U-", i), "W-1", now, "butt", 10.0, 1, 250.0, 25.0, 5.0, "1G"}, nil
				})); err != nil {
				t.Fatal(err)
			}
			for i := range 3 {
				if _, err := s.CreateCoupon(ctx, actor(site), couponData(p.ID, fmt.Sprint("L-", i))); err != nil {
					t.Fatal(err)
				}
			}
			mustLogged(t, s, site)
			leaves, missing, noLeaf := 0, 0, map[string]int{}
			sum, err := s.Export(ctx, site, func(kind string, v any) error {
				switch kind {
				case logfmt.LineLeaf:
					leaves++
					if l := v.(logfmt.ExportLeaf); l.Missing != "" || l.Fields == nil {
						missing++
					}
				case logfmt.LineUnlogged:
					if u := v.(logfmt.Unlogged); u.Kind == "coupon" && u.Why == "no leaf in the log" {
						noLeaf[u.RecordID]++
					}
				}
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			if leaves != 4 || missing != 0 || sum.Unlogged != int64(unlogged) || len(noLeaf) != unlogged {
				t.Fatalf("export: %d leaves (%d without their row), %d unlogged lines, %d distinct coupons with no leaf; want 4 (the procedure and 3 coupons), 0, %d, %d",
					leaves, missing, sum.Unlogged, len(noLeaf), unlogged, unlogged)
			}
			for id, n := range noLeaf {
				if n != 1 {
					t.Fatalf("coupon %s reported %d times", id, n)
				}
			}
		})
	}
}
