package db_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// lineOf names row i of a chunk the way the stream endpoint does.
func lineOf(i int) string { return fmt.Sprintf("line %d", i+1) }

// TestWeldRace: writers racing to log one weld of one procedure, each in a
// chunk of its own with other welds, in months far apart (a unique index of
// the partitioned table could not see across months): exactly one wins, the
// others are refused naming the winner's record, and none of their other
// rows is stored.
func TestWeldRace(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	const writers = 8
	var wg sync.WaitGroup
	results := make([]db.ChunkResult, writers)
	errs := make([]error, writers)
	for w := range writers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			rows := []db.ProductionRecordData{productionRow(p.ID, fmt.Sprintf("own-%d", w), 200), productionRow(p.ID, "RACE-1", 200)}
			rows[1].RecordedAt = time.Date(2000+w, time.Month(1+w), 3, 0, 0, 0, 0, time.UTC)
			results[w], errs[w] = s.ProductionChunk(ctx, a, rows, lineOf)
		}()
	}
	wg.Wait()
	won := 0
	for w := range writers {
		var dup *db.DuplicateError
		switch {
		case errs[w] == nil:
			won++
		case errors.As(errs[w], &dup) && dup.Field == "line 2.weld_id":
		default:
			t.Errorf("writer %d: %v, want success or a duplicate named line 2.weld_id", w, errs[w])
		}
	}
	if won != 1 {
		t.Fatalf("%d writers logged weld RACE-1, want exactly 1", won)
	}
	page, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, "", db.MaxPageSize)
	if err != nil || len(page.Items) != 2 {
		t.Fatalf("stored records = %d (err %v), want the winner's 2", len(page.Items), err)
	}
}

// TestProductionMonths: records from the first accepted day (1900-01-01)
// to tomorrow land in partitions made on demand; every leaf, encoded from
// the copied values, matches the fact encoded again from the stored row.
func TestProductionMonths(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	days := []time.Time{time.Date(1900, 1, 1, 0, 0, 0, 0, time.UTC), time.Date(1987, 6, 30, 23, 59, 59, 999999000, time.UTC),
		time.Now().UTC().Add(24 * time.Hour)}
	rows := make([]db.ProductionRecordData, len(days))
	for i, d := range days {
		rows[i] = productionRow(p.ID, fmt.Sprintf("M-%d", i), 200)
		rows[i].RecordedAt = d
	}
	rows[1].CTWDMM = nil
	if _, err := s.ProductionChunk(ctx, a, rows, lineOf); err != nil {
		t.Fatal(err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("VerifyLog = %+v, %v; want ok", v, err)
	}
	conn := superuser(t)
	for _, d := range days {
		var n int
		if err := conn.QueryRow(ctx, `SELECT count(*) FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid
			WHERE i.inhparent = 'production_records'::regclass AND c.relname = $1`, d.Format("production_records_y2006m01")).Scan(&n); err != nil || n != 1 {
			t.Errorf("partition of %s: %d (err %v), want 1", d.Format("2006-01"), n, err)
		}
	}
}

// TestDetachProductionMonth: an administrator detaches a past month; its
// records leave the lists and their flags go, verify stays ok (it reads the
// detached month), a record of that month written later lands in a new
// partition, and a month dropped altogether shows in verify as facts
// missing from the database.
func TestDetachProductionMonth(t *testing.T) {
	// Not parallel: detaching a month locks production_records for every
	// site, so a production write of another test may be chosen as the
	// deadlock victim and told to retry.
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	old := time.Date(1911, 7, 14, 6, 0, 0, 0, time.UTC) // a month no other test writes
	rows := []db.ProductionRecordData{productionRow(p.ID, "D-1", 200), productionRow(p.ID, "D-2", 230), productionRow(p.ID, "D-3", 200)}
	rows[0].RecordedAt, rows[1].RecordedAt = old, old.Add(time.Hour)
	if _, err := s.ProductionChunk(ctx, a, rows, lineOf); err != nil {
		t.Fatal(err)
	}
	owner := dbtest.Owner(t)
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	if _, err := owner.DetachProductionMonth(ctx, time.Now(), "ops"); err == nil || !strings.Contains(err.Error(), "not over") {
		t.Errorf("detaching this month: %v, want a refusal (not over)", err)
	}
	n, err := owner.DetachProductionMonth(ctx, old, "ops")
	if err != nil || n != 2 {
		t.Fatalf("DetachProductionMonth(1911-07) = %d, %v; want 2 records", n, err)
	}
	page, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, "", db.MaxPageSize)
	if err != nil || len(page.Items) != 1 || page.Items[0].WeldID != "D-3" {
		t.Fatalf("listed after the detach: %+v (err %v), want D-3 only", page.Items, err)
	}
	// In pages of one, the first page reads past the two detached leaves.
	one, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, "", 1)
	if err != nil || len(one.Items) != 1 || one.Items[0].WeldID != "D-3" {
		t.Errorf("first page of one after the detach: %+v (err %v), want D-3", one.Items, err)
	}
	if rest, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, one.Next, 1); err != nil || len(rest.Items) != 0 || rest.Next != one.Next {
		t.Errorf("page after D-3: %+v, cursor %q (err %v), want none and cursor %q", rest.Items, rest.Next, err, one.Next)
	}
	if len(procedureFlags(t, s, site, p.ID)) != 0 {
		t.Errorf("the detached month's flag (D-2 at 230 A) is still listed")
	}
	if diffs, err := s.RecheckProductionList(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("RecheckProductionList after the detach = %v, %v; want no difference", diffs, err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("VerifyLog after the detach = %+v, %v; want ok", v, err)
	}
	// A late record of the detached month, and a weld of it again.
	late := []db.ProductionRecordData{productionRow(p.ID, "D-4", 200)}
	late[0].RecordedAt = old.Add(48 * time.Hour)
	if _, err := s.ProductionChunk(ctx, a, late, lineOf); err != nil {
		t.Fatalf("a late record of the detached month: %v", err)
	}
	late[0].WeldID = "D-1"
	var dup *db.DuplicateError
	if _, err := s.ProductionChunk(ctx, a, late, lineOf); !errors.As(err, &dup) {
		t.Errorf("weld D-1 of the detached month again: %v, want a duplicate (a weld stays logged)", err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("VerifyLog after a late record = %+v, %v; want ok", v, err)
	}
	if page, err := s.ProductionRecords(ctx, site, db.ProductionRecordFilter{}, "", db.MaxPageSize); err != nil ||
		len(page.Items) != 2 || page.Items[1].WeldID != "D-4" {
		t.Errorf("listed after a late record: %+v (err %v), want D-3 and D-4", page.Items, err)
	}
	if diffs, err := s.RecheckProductionList(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("RecheckProductionList after a late record = %v, %v; want no difference", diffs, err)
	}
	// Dropping the detached month is a deletion: verify names each fact.
	conn := superuser(t)
	run(t, conn, "ALTER TABLE production_records_detached DETACH PARTITION production_records_y1911m07",
		"DROP TABLE production_records_y1911m07")
	v, err := s.VerifyLog(ctx, site, nil)
	if err != nil || v.OK || !strings.Contains(strings.Join(v.Problems, "\n"), "missing from the database") {
		t.Errorf("VerifyLog after dropping the month = %+v, %v; want the two facts missing", v, err)
	}
}

// TestChunkLeavesOnePerRecord: a chunk leaves one pending entry naming its
// records, and the sequencer gives each record a leaf of its own, in the
// chunk's order, under the leaf hash its stored row encodes to; the log
// verifies.
func TestChunkLeavesOnePerRecord(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	rows := []db.ProductionRecordData{productionRow(p.ID, "L-1", 200), productionRow(p.ID, "L-2", 210), productionRow(p.ID, "L-3", 220)}
	// Leaves are encoded from the bytes copied: a NULL, an empty-looking
	// text beyond ASCII, a time below the microsecond (stored truncated) and
	// fractions at float64's last digit must encode as the stored row does.
	rows[1].CTWDMM = nil
	rows[1].WelderID = "Ø 07"
	rows[2].RecordedAt = rows[2].RecordedAt.Add(1234567 * time.Nanosecond)
	rows[2].VoltageV = 24.123456789012345
	rows[2].CTWDMM = ptr(math.Nextafter(18, 19))
	r, err := s.ProductionChunk(ctx, a, rows, lineOf)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	conn := superuser(t)
	q, _ := conn.Query(ctx, `SELECT r.weld_id, l.leaf_index, l.pending_seq FROM log_leaves l
		JOIN production_records r ON r.site = l.site AND r.id = l.record_id
		WHERE l.site = $1 AND l.kind = 'production_record' AND r.batch_id = $2 ORDER BY l.leaf_index`, site, r.BatchID)
	type leaf struct {
		weld       string
		index, seq int64
	}
	var got []leaf
	var l leaf
	if _, err := pgx.ForEachRow(q, []any{&l.weld, &l.index, &l.seq}, func() error { got = append(got, l); return nil }); err != nil {
		t.Fatal(err)
	}
	if len(got) != 3 {
		t.Fatalf("leaves of the chunk = %+v, want one per record (3)", got)
	}
	for i, g := range got {
		if g.weld != rows[i].WeldID || g.index != got[0].index+int64(i) || g.seq != got[0].seq {
			t.Errorf("leaf %d = %+v, want weld %s at index %d from one pending entry", i, g, rows[i].WeldID, got[0].index+int64(i))
		}
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("VerifyLog = %+v, %v; want ok", v, err)
	}
}

// TestDetachWaitsForManyEntry: a month holding a record that a pending entry
// of many leaves still names is not detached (the entry is inserted and the
// detach tried in one transaction of the database owner, which is rolled
// back, so the sequencer never sees it).
func TestDetachWaitsForManyEntry(t *testing.T) {
	// Not parallel: detaching a month locks production_records for every
	// site, so a production write of another test may be chosen as the
	// deadlock victim and told to retry.
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	row := productionRow(p.ID, "M-1", 200)
	row.RecordedAt = time.Date(1913, 5, 14, 6, 0, 0, 0, time.UTC) // a month no other test writes
	r, err := s.ProductionChunk(ctx, a, []db.ProductionRecordData{row}, lineOf)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	conn := superuser(t)
	tx, err := conn.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // the point is to roll back
	if _, err := tx.Exec(ctx, `INSERT INTO log_pending (site, kind, version, record_id, revision, leaf_hash, tag, actor, action, reason, at, record_ids, leaf_hashes)
		SELECT $1, 'production_record', 1, gen_random_uuid(), 1, decode(repeat('05', 32), 'hex'), decode(repeat('07', 32), 'hex'), 'ops', 'create', '', now(),
			ARRAY[id], decode(repeat('00', 32), 'hex') FROM production_records WHERE site = $1 AND batch_id = $2`, site, r.BatchID); err != nil {
		t.Fatal(err)
	}
	_, err = tx.Exec(ctx, `SELECT etchlog_detach_production_month('1913-05-01', 'ops')`)
	if err == nil || !strings.Contains(err.Error(), "still wait for their log leaf") {
		t.Errorf("detaching 1913-05 while a pending entry names its record: %v, want a refusal", err)
	}
}
