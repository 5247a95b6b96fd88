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
	type leaf struct {
		kind string
		id   byte
		rev  int
	}
	coupon, section := coupons.entity, measurements.entity
	cases := []struct {
		name    string
		leaves  []leaf
		deletes int
	}{
		{"new coupons", []leaf{{coupon, 1, 1}, {coupon, 2, 1}}, 0},
		{"a coupon's correction", []leaf{{coupon, 1, 1}, {coupon, 2, 2}}, 1},
		{"a new section", []leaf{{coupon, 1, 1}, {section, 3, 1}}, 2}, // the coupons' and the sections' lists
		{"a procedure and a sign-off", []leaf{{procedureList.entity, 4, 1}, {signOffTable.entity, 5, 1}}, 1},
	}
	for _, c := range cases {
		b := &pgx.Batch{}
		var listed listedLeaves
		var out leafRows
		for _, l := range c.leaves { // as a pass notes them (integrate)
			out.add(pendingLeaf{Kind: l.kind, Revision: l.rev}, [16]byte{l.id}, nil)
			listed.add(l.kind, [16]byte{l.id})
		}
		listed.queue(b, "s", &out)
		queueSectionList(b, "s", listed.sections)
		procedureList.queue(b, "s", &out)
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
