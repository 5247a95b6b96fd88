package db

import (
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
)

// TestSequencerKeyDeleteReadsByAddress checks the batch of writes a
// sequencer pass builds for the list key tables: every key delete is
// planned for its arguments (a SET LOCAL plan_cache_mode before it, see
// queueKeyDelete), and a pass of first revisions of coupons alone deletes
// nothing. In the create benchmark's database (never analysed), the coupons'
// key delete ran on a generic plan made while coupon_list had a few pages:
// a sequential scan of the whole table, filtered by address, on every pass
// (auto_explain: "Seq Scan on coupon_list, Filter: (ctid = ANY ($3))";
// 457 buffers a pass at 20,000 coupons, growing with the table).
func TestSequencerKeyDeleteReadsByAddress(t *testing.T) {
	id := func(b byte) [16]byte { return [16]byte{b} }
	cases := []struct {
		name    string
		queue   func(b *pgx.Batch)
		deletes int
	}{
		{"new coupons", func(b *pgx.Batch) {
			var l listedLeaves
			l.add(coupons.entity, id(1), 1)
			l.add(coupons.entity, id(2), 1)
			l.queue(b, "s")
		}, 0},
		{"a coupon's correction", func(b *pgx.Batch) {
			var l listedLeaves
			l.add(coupons.entity, id(1), 1)
			l.add(coupons.entity, id(2), 2)
			l.queue(b, "s")
		}, 1},
		{"a new section", func(b *pgx.Batch) {
			var l listedLeaves
			l.add(coupons.entity, id(1), 1)
			l.add(measurements.entity, id(3), 1)
			l.queue(b, "s")
			queueSectionList(b, "s", l.sections)
		}, 2},
		{"a procedure and a sign-off", func(b *pgx.Batch) {
			var out leafRows
			out.kinds = []string{procedureList.entity, signOffTable.entity}
			out.ids = [][16]byte{id(4), id(5)}
			procedureList.queue(b, "s", &out)
		}, 1},
	}
	for _, c := range cases {
		b := &pgx.Batch{}
		c.queue(b)
		deletes := 0
		for i, q := range b.QueuedQueries {
			if !strings.Contains(q.SQL, "DELETE FROM") {
				continue
			}
			deletes++
			if i == 0 || !strings.Contains(b.QueuedQueries[i-1].SQL, "plan_cache_mode = force_custom_plan") {
				t.Errorf("%s: key delete %d is not planned for its arguments:\n%s", c.name, deletes, q.SQL)
			}
		}
		if deletes != c.deletes {
			t.Errorf("%s: %d key deletes queued, want %d", c.name, deletes, c.deletes)
		}
	}
}
