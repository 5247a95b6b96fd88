package db_test

import (
	"bytes"
	"context"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"strings"
	"testing"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/transparency-dev/merkle/compact"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/db/logfmt"
)

// tamperFixture is one site's records, all logged: a procedure with derived
// ranges, a coupon corrected once (revisions 1 and 2), a section on it, and
// a later batch of three production records (the second outside the
// current range, so it carries a flag). saved is the checkpoint an auditor
// took away after the last write; before is the size of the log before the
// production batch, itself a checkpoint.
type tamperFixture struct {
	site        string
	coupon      db.Coupon
	measurement db.Measurement
	prod        []db.ProductionRecord
	saved       string
	before      uint64
}

func newTamperFixture(t *testing.T, s *db.Store) tamperFixture {
	t.Helper()
	ctx := context.Background()
	f := tamperFixture{site: dbtest.Site(t)}
	a := actor(f.site)
	p := rangesProcedure(t, s, a)
	if _, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0); err != nil {
		t.Fatal(err)
	}
	c, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "C-T-"+p.Code, 200, 24))
	if err != nil {
		t.Fatal(err)
	}
	fixed := c.CouponData
	fixed.VoltageV = 24.5
	if f.coupon, err = s.CorrectCoupon(ctx, a, c.ID, db.Change{BaseRevision: 1, Reason: "voltage re-read"}, fixed); err != nil {
		t.Fatal(err)
	}
	if f.measurement, err = s.CreateMeasurement(ctx, a, measurementData(c.ID, "A", "accept")); err != nil {
		t.Fatal(err)
	}
	mustLogged(t, s, f.site)
	cp, err := s.Checkpoint(ctx, f.site, 0)
	if err != nil {
		t.Fatal(err)
	}
	f.before = cp.Size
	if f.prod, err = s.CreateProductionRecords(ctx, a, []db.ProductionRecordData{
		productionRow(p.ID, "W1", 190), productionRow(p.ID, "W2", 230), productionRow(p.ID, "W3", 200)}); err != nil {
		t.Fatal(err)
	}
	mustLogged(t, s, f.site)
	if cp, err = s.Checkpoint(ctx, f.site, 0); err != nil {
		t.Fatal(err)
	}
	f.saved = cp.Note
	if v, err := s.VerifyLog(ctx, f.site, []byte(f.saved)); err != nil || !v.OK {
		t.Fatalf("VerifyLog before tampering = %+v (err %v), want ok", v, err)
	}
	return f
}

func mustLogged(t *testing.T, s *db.Store, site string) {
	t.Helper()
	if err := s.AwaitLogged(context.Background(), site); err != nil {
		t.Fatalf("AwaitLogged(%s): %v", site, err)
	}
}

// leafIndex is the log index of one fact's leaf.
func leafIndex(t *testing.T, conn *pgx.Conn, site, kind string, id fmt.Stringer, rev int) int64 {
	t.Helper()
	var idx int64
	if err := conn.QueryRow(context.Background(), `SELECT leaf_index FROM log_leaves WHERE site = $1 AND kind = $2 AND record_id = $3 AND revision = $4`,
		site, kind, id.String(), rev).Scan(&idx); err != nil {
		t.Fatalf("leaf of %s %s revision %d: %v", kind, id, rev, err)
	}
	return idx
}

// run executes statements in one transaction as the database owner, so no
// other test sees a disabled trigger.
func run(t *testing.T, conn *pgx.Conn, stmts ...string) {
	t.Helper()
	ctx := context.Background()
	err := pgx.BeginFunc(ctx, conn, func(tx pgx.Tx) error {
		for _, q := range stmts {
			if _, err := tx.Exec(ctx, q); err != nil {
				return fmt.Errorf("%s: %w", q, err)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatalf("tamper: %v", err)
	}
}

// offlineVerify exports the site as the export endpoint does and verifies
// the file as "etchlog verify" does: against the latest checkpoint in the
// export (the saved one when the database holds none) and the saved one.
func offlineVerify(t *testing.T, s *db.Store, site, saved string) logfmt.Report {
	t.Helper()
	var buf bytes.Buffer
	latest := saved
	enc := json.NewEncoder(&buf)
	_, err := s.Export(context.Background(), site, func(kind string, v any) error {
		if kind == logfmt.LineCheckpoint {
			latest = v.(logfmt.ExportCheckpoint).Note
		}
		return enc.Encode(map[string]any{"kind": kind, "record": v})
	})
	if err != nil {
		t.Fatalf("Export: %v", err)
	}
	// The endpoint's path writes coupon records and leaves from the rows'
	// bytes: the same file as encoding/json writes from Export's values.
	var direct bytes.Buffer
	w := db.NewExportWriter(&direct)
	if _, err := s.ExportTo(context.Background(), site, w); err != nil || w.Flush() != nil {
		t.Fatalf("ExportTo: %v", err)
	}
	if !bytes.Equal(direct.Bytes(), buf.Bytes()) {
		t.Errorf("ExportTo wrote:\n%s\nencoding/json of Export's values:\n%s", direct.Bytes(), buf.Bytes())
	}
	rep, err := logfmt.VerifyExport(bytes.NewReader(buf.Bytes()), dbtest.PublicKey, []byte(latest), []byte(saved))
	if err != nil {
		// The database's checkpoint does not verify: that is a finding, and
		// the auditor goes on with the checkpoint they kept.
		rep, err2 := logfmt.VerifyExport(bytes.NewReader(buf.Bytes()), dbtest.PublicKey, []byte(saved), nil)
		if err2 != nil {
			t.Fatalf("offline verify with the saved checkpoint alone: %v", err2)
		}
		rep.OK, rep.Problems = false, append([]string{err.Error()}, rep.Problems...)
		return rep
	}
	return rep
}

func hasAll(problems, want []string) []string {
	var missing []string
	for _, w := range want {
		found := false
		for _, p := range problems {
			found = found || strings.Contains(p, w)
		}
		if !found {
			missing = append(missing, w)
		}
	}
	return missing
}

const (
	disableLeaves = "ALTER TABLE log_leaves DISABLE TRIGGER log_leaves_append_only"
	enableLeaves  = "ALTER TABLE log_leaves ENABLE TRIGGER log_leaves_append_only"
)

// TestTamperingIsDetected plays the fourteen ways of altering the records
// behind the service's back that were tried against the earlier hash chain
// (eight it caught, six it missed), each with SQL as the database owner.
// Given the checkpoint an auditor saved and the public key, every one is
// found by VerifyLog (the verify endpoint) and, where it touches logged
// facts, by offline verification of an export. unseenWithoutSaved marks what
// no check can find without a saved checkpoint: cutting the log's tail back
// to an earlier checkpoint of its own.
func TestTamperingIsDetected(t *testing.T) {
	// Not parallel: it takes table-wide locks (ALTER TABLE, TRUNCATE) that
	// can make another test's write a deadlock victim.
	s := dbtest.Store(t)
	conn := superuser(t)
	ctx := context.Background()
	for _, c := range []struct {
		name               string
		tamper             func(t *testing.T, f tamperFixture) []string // returns the problems expected
		online             bool                                         // only the verify endpoint can see it
		unseenWithoutSaved bool
	}{
		{name: "EditCoupon", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, "ALTER TABLE coupons DISABLE TRIGGER coupons_append_only",
				fmt.Sprintf("UPDATE coupons SET current_a = 250 WHERE site = '%s' AND id = '%s' AND revision = 1", f.site, f.coupon.ID),
				"ALTER TABLE coupons ENABLE TRIGGER coupons_append_only")
			return []string{fmt.Sprintf("(coupon %s revision 1): the stored fact does not match its leaf hash", f.coupon.ID)}
		}},
		{name: "DeleteLeaf", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, disableLeaves,
				fmt.Sprintf("DELETE FROM log_leaves WHERE site = '%s' AND record_id = '%s' AND revision = 1", f.site, f.coupon.ID),
				enableLeaves)
			return []string{"a leaf is missing or out of order", fmt.Sprintf("coupon %s revision 1: stored but not in the log", f.coupon.ID)}
		}},
		{name: "ReorderLeaves", tamper: func(t *testing.T, f tamperFixture) []string {
			i := leafIndex(t, conn, f.site, "coupon", f.coupon.ID, 1)
			j := leafIndex(t, conn, f.site, "measurement", f.measurement.ID, 1)
			q := "UPDATE log_leaves SET leaf_index = %d WHERE site = '" + f.site + "' AND leaf_index = %d"
			run(t, conn, disableLeaves, fmt.Sprintf(q, 1<<40, i), fmt.Sprintf(q, i, j), fmt.Sprintf(q, j, 1<<40), enableLeaves)
			return []string{"logged facts were altered, removed or reordered"}
		}},
		{name: "DeleteRow", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, "ALTER TABLE measurements DISABLE TRIGGER measurements_append_only",
				fmt.Sprintf("DELETE FROM measurements WHERE site = '%s' AND id = '%s'", f.site, f.measurement.ID),
				"ALTER TABLE measurements ENABLE TRIGGER measurements_append_only")
			return []string{fmt.Sprintf("(measurement %s revision 1): the fact is missing from the database", f.measurement.ID)}
		}},
		{name: "EditRowAndLeafHash", tamper: func(t *testing.T, f tamperFixture) []string {
			h := forgedLeafHash(t, s, f, "250")
			run(t, conn, "ALTER TABLE coupons DISABLE TRIGGER coupons_append_only", disableLeaves,
				fmt.Sprintf("UPDATE coupons SET current_a = 250 WHERE site = '%s' AND id = '%s' AND revision = 1", f.site, f.coupon.ID),
				fmt.Sprintf("UPDATE log_leaves SET leaf_hash = decode('%x', 'hex') WHERE site = '%s' AND record_id = '%s' AND revision = 1", h, f.site, f.coupon.ID),
				enableLeaves, "ALTER TABLE coupons ENABLE TRIGGER coupons_append_only")
			return []string{"logged facts were altered, removed or reordered"}
		}},
		{name: "MoveToOtherSite", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, "ALTER TABLE coupons DISABLE TRIGGER coupons_append_only",
				fmt.Sprintf("UPDATE coupons SET site = site || '-elsewhere' WHERE site = '%s' AND id = '%s'", f.site, f.coupon.ID),
				"ALTER TABLE coupons ENABLE TRIGGER coupons_append_only")
			return []string{fmt.Sprintf("(coupon %s revision 1): the fact is missing", f.coupon.ID), fmt.Sprintf("(coupon %s revision 2): the fact is missing", f.coupon.ID)}
		}},
		{name: "InsertRowWithoutLeaf", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, forgedRevision(f))
			return []string{fmt.Sprintf("coupon %s revision 3: stored but not in the log (no leaf in the log)", f.coupon.ID)}
		}},
		{name: "EditListedReason", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, disableLeaves,
				fmt.Sprintf("UPDATE log_leaves SET reason = 'routine' WHERE site = '%s' AND record_id = '%s' AND revision = 2", f.site, f.coupon.ID),
				enableLeaves)
			return []string{fmt.Sprintf("(coupon %s revision 2): the log lists a reason the fact does not hold", f.coupon.ID)}
		}},
		// The six the hash chain missed.
		{name: "RewriteHistory", tamper: func(t *testing.T, f tamperFixture) []string {
			rewriteHistory(t, s, conn, f)
			return []string{"checkpoint signature", "logged facts were altered, removed or reordered"}
		}},
		{name: "TruncateTail", unseenWithoutSaved: true, tamper: func(t *testing.T, f tamperFixture) []string {
			truncateTail(t, conn, f)
			return []string{fmt.Sprintf("a signed checkpoint covers %d leaves but only %d are present", f.before+4, f.before)}
		}},
		{name: "EditProductionValue", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, "ALTER TABLE production_records DISABLE TRIGGER production_records_append_only",
				fmt.Sprintf("UPDATE production_records SET current_a = 205 WHERE id = '%s'", f.prod[1].ID),
				"ALTER TABLE production_records ENABLE TRIGGER production_records_append_only")
			return []string{fmt.Sprintf("(production_record %s revision 1): the stored fact does not match its leaf hash", f.prod[1].ID)}
		}},
		{name: "DeleteProductionFromBatch", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, "ALTER TABLE production_records DISABLE TRIGGER production_records_append_only",
				fmt.Sprintf("DELETE FROM production_records WHERE id = '%s'", f.prod[1].ID),
				"ALTER TABLE production_records ENABLE TRIGGER production_records_append_only")
			return []string{fmt.Sprintf("(production_record %s revision 1): the fact is missing", f.prod[1].ID)}
		}},
		{name: "DeleteFlags", online: true, tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, fmt.Sprintf("DELETE FROM flags WHERE site = '%s'", f.site))
			return []string{fmt.Sprintf("flag %s current_a range: recomputed from the records but missing from the flags table", f.prod[1].ID)}
		}},
		{name: "ForgeWithInsertsOnly", tamper: func(t *testing.T, f tamperFixture) []string {
			run(t, conn, forgedRevision(f))
			fact, err := s.Fact(ctx, "coupon", f.site, f.coupon.ID, 3)
			if err != nil {
				t.Fatal(err)
			}
			run(t, conn, fmt.Sprintf(`INSERT INTO log_pending (site, kind, version, record_id, revision, leaf_hash, tag, actor, action, reason, at)
				VALUES ('%s', 'coupon', 1, '%s', 3, decode('%x', 'hex'), decode('%x', 'hex'), 'oskar.engineer', 'correct', 'forged', now())`,
				f.site, f.coupon.ID, fact.LeafHash(), bytes.Repeat([]byte{7}, 32)))
			mustLogged(t, s, f.site)
			return []string{fmt.Sprintf("coupon %s revision 3: stored but not in the log (refused by the sequencer", f.coupon.ID)}
		}},
		{name: "ForgeManyEntry", tamper: func(t *testing.T, f tamperFixture) []string {
			// A production record added by INSERT, with a pending entry of
			// many leaves naming it under its true leaf hash but a made-up tag.
			id := uuid.New()
			run(t, conn, fmt.Sprintf(`INSERT INTO production_records SELECT (jsonb_populate_record(r, '{"id": "%s", "weld_id": "W9"}')).*
				FROM production_records r WHERE id = '%s'`, id, f.prod[0].ID))
			fact, err := s.Fact(ctx, "production_record", f.site, id, 1)
			if err != nil {
				t.Fatal(err)
			}
			run(t, conn, fmt.Sprintf(`INSERT INTO log_pending (site, kind, version, record_id, revision, leaf_hash, tag, actor, action, reason, at, record_ids, leaf_hashes)
				VALUES ('%s', 'production_record', 1, '%s', 1, decode('%x', 'hex'), decode('%x', 'hex'), 'oskar.engineer', 'create', '', now(), ARRAY['%s']::uuid[], decode('%x', 'hex'))`,
				f.site, uuid.New(), bytes.Repeat([]byte{5}, 32), bytes.Repeat([]byte{7}, 32), id, fact.LeafHash()))
			mustLogged(t, s, f.site)
			return []string{fmt.Sprintf("production_record %s revision 1: stored but not in the log (no leaf in the log)", id)}
		}},
	} {
		t.Run(c.name, func(t *testing.T) {
			f := newTamperFixture(t, s)
			want := c.tamper(t, f)
			v, err := s.VerifyLog(ctx, f.site, []byte(f.saved))
			if err != nil {
				t.Fatalf("VerifyLog: %v", err)
			}
			if v.OK || len(hasAll(v.Problems, want)) > 0 {
				t.Errorf("VerifyLog with the saved checkpoint: ok %v, missing %q in problems %q", v.OK, hasAll(v.Problems, want), v.Problems)
			}
			if !c.online {
				rep := offlineVerify(t, s, f.site, f.saved)
				if rep.OK || len(hasAll(rep.Problems, want)) > 0 {
					t.Errorf("offline verify with the saved checkpoint: ok %v, missing %q in problems %q", rep.OK, hasAll(rep.Problems, want), rep.Problems)
				}
			}
			alone, err := s.VerifyLog(ctx, f.site, nil)
			if err != nil {
				t.Fatalf("VerifyLog without a saved checkpoint: %v", err)
			}
			if alone.OK != c.unseenWithoutSaved {
				t.Errorf("VerifyLog without a saved checkpoint: ok = %v, want %v (problems %q)", alone.OK, c.unseenWithoutSaved, alone.Problems)
			}
		})
	}
}

// forgedRevision inserts a revision 3 of the fixture's coupon with INSERT
// only: no trigger stands in the way.
func forgedRevision(f tamperFixture) string {
	return fmt.Sprintf(`INSERT INTO coupons SELECT (jsonb_populate_record(c, '{"revision": 3, "reason": "forged", "current_a": 150, "created_by": "oskar.engineer"}')).*
		FROM coupons c WHERE site = '%s' AND id = '%s' AND revision = 2`, f.site, f.coupon.ID)
}

// forgedLeafHash is the leaf hash the fixture's coupon revision 1 would have
// with another current, computed as a forger would from the published encoding.
func forgedLeafHash(t *testing.T, s *db.Store, f tamperFixture, currentA string) []byte {
	t.Helper()
	fact, err := s.Fact(context.Background(), "coupon", f.site, f.coupon.ID, 1)
	if err != nil {
		t.Fatal(err)
	}
	for i := range fact.Fields {
		if fact.Fields[i].Name == "current_a" {
			fact.Fields[i].Value = currentA
		}
	}
	return fact.LeafHash()
}

// rewriteHistory edits coupon revision 1, then recomputes its leaf hash,
// every tree node and the checkpoints, signing them with a key of the
// forger's own: everything in the database agrees again.
func rewriteHistory(t *testing.T, s *db.Store, conn *pgx.Conn, f tamperFixture) {
	t.Helper()
	ctx := context.Background()
	h := forgedLeafHash(t, s, f, "250")
	i := leafIndex(t, conn, f.site, "coupon", f.coupon.ID, 1)
	rows, _ := conn.Query(ctx, `SELECT leaf_hash FROM log_leaves WHERE site = $1 ORDER BY leaf_index`, f.site)
	leaves, err := pgx.CollectRows(rows, pgx.RowTo[[]byte])
	if err != nil {
		t.Fatal(err)
	}
	leaves[i] = h
	stmts := []string{"ALTER TABLE coupons DISABLE TRIGGER coupons_append_only", disableLeaves,
		"ALTER TABLE log_nodes DISABLE TRIGGER log_nodes_append_only",
		"ALTER TABLE log_checkpoints DISABLE TRIGGER log_checkpoints_append_only",
		fmt.Sprintf("UPDATE coupons SET current_a = 250 WHERE site = '%s' AND id = '%s' AND revision = 1", f.site, f.coupon.ID),
		fmt.Sprintf("UPDATE log_leaves SET leaf_hash = decode('%x', 'hex') WHERE site = '%s' AND leaf_index = %d", h, f.site, i),
		fmt.Sprintf("DELETE FROM log_checkpoints WHERE site = '%s'", f.site)}
	rng := (&compact.RangeFactory{Hash: logfmt.HashChildren}).NewEmptyRange(0)
	for _, l := range leaves {
		if err := rng.Append(l, func(id compact.NodeID, hash []byte) {
			stmts = append(stmts, fmt.Sprintf("UPDATE log_nodes SET hash = decode('%x', 'hex') WHERE site = '%s' AND tree_level = %d AND tree_index = %d",
				hash, f.site, id.Level, id.Index))
		}); err != nil {
			t.Fatal(err)
		}
	}
	root, _ := rng.GetRootHash(nil)
	skey, _, _ := logfmt.GenerateKey("etchlog-test")
	forger, err := logfmt.NewSigner(skey)
	if err != nil {
		t.Fatal(err)
	}
	note, err := logfmt.SignCheckpoint(forger, f.site, uint64(len(leaves)), root)
	if err != nil {
		t.Fatal(err)
	}
	hashes := make([]string, len(rng.Hashes()))
	for k, x := range rng.Hashes() {
		hashes[k] = fmt.Sprintf("decode('%x', 'hex')", x)
	}
	stmts = append(stmts, fmt.Sprintf("INSERT INTO log_checkpoints (site, size, root, range_hashes, note, created_at) VALUES ('%s', %d, decode('%s', 'hex'), ARRAY[%s], '%s', now())",
		f.site, len(leaves), hex.EncodeToString(root), strings.Join(hashes, ", "), strings.ReplaceAll(note, "'", "''")),
		"ALTER TABLE log_checkpoints ENABLE TRIGGER log_checkpoints_append_only",
		"ALTER TABLE log_nodes ENABLE TRIGGER log_nodes_append_only", enableLeaves,
		"ALTER TABLE coupons ENABLE TRIGGER coupons_append_only")
	run(t, conn, stmts...)
}

// truncateTail removes the production batch, its records, their flags,
// leaves, tree nodes and checkpoints: the log ends where it ended before.
func truncateTail(t *testing.T, conn *pgx.Conn, f tamperFixture) {
	t.Helper()
	ids := make([]string, len(f.prod))
	for i, r := range f.prod {
		ids[i] = "'" + r.ID.String() + "'"
	}
	in := "(" + strings.Join(ids, ", ") + ")"
	run(t, conn,
		"ALTER TABLE production_records DISABLE TRIGGER production_records_append_only",
		"ALTER TABLE production_batches DISABLE TRIGGER production_batches_append_only",
		"ALTER TABLE log_nodes DISABLE TRIGGER log_nodes_append_only",
		"ALTER TABLE log_checkpoints DISABLE TRIGGER log_checkpoints_append_only", disableLeaves,
		"DELETE FROM flags WHERE subject_id IN "+in,
		"DELETE FROM production_records WHERE id IN "+in,
		fmt.Sprintf("DELETE FROM production_batches WHERE id = '%s'", f.prod[0].BatchID),
		fmt.Sprintf("DELETE FROM log_leaves WHERE site = '%s' AND leaf_index >= %d", f.site, f.before),
		fmt.Sprintf("DELETE FROM log_nodes WHERE site = '%s' AND (tree_index + 1) << tree_level > %d", f.site, f.before),
		fmt.Sprintf("DELETE FROM log_checkpoints WHERE site = '%s' AND size > %d", f.site, f.before),
		enableLeaves,
		"ALTER TABLE log_checkpoints ENABLE TRIGGER log_checkpoints_append_only",
		"ALTER TABLE log_nodes ENABLE TRIGGER log_nodes_append_only",
		"ALTER TABLE production_batches ENABLE TRIGGER production_batches_append_only",
		"ALTER TABLE production_records ENABLE TRIGGER production_records_append_only")
}

// auditEvents lists a site's whole log filtered by af, failing the test on error.
func auditEvents(t *testing.T, s *db.Store, site string, af db.AuditFilter) []db.LogEntry {
	t.Helper()
	p, err := s.AuditEvents(context.Background(), site, af, "", 0)
	if err != nil {
		t.Fatalf("AuditEvents: %v", err)
	}
	return p.Items
}
