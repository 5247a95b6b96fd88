package db_test

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// superuser connects to the package's test database as the test server's
// superuser, who can do what the service never does.
func superuser(t *testing.T) *pgx.Conn {
	t.Helper()
	cfg, err := pgx.ParseConfig(dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	cfg.RuntimeParams["timezone"] = "UTC" // as the Store's connections, so row JSON reads the same
	conn, err := pgx.ConnectConfig(context.Background(), cfg)
	if err != nil {
		t.Fatalf("connect as superuser: %v", err)
	}
	t.Cleanup(func() { conn.Close(context.Background()) })
	return conn
}

// auditFixture is one site's records: a procedure, a coupon corrected once
// (revisions 1 and 2) and a measurement on it.
type auditFixture struct {
	site        string
	coupon      db.Coupon
	measurement db.Measurement
}

func newAuditFixture(t *testing.T, s *db.Store) auditFixture {
	t.Helper()
	ctx := context.Background()
	f := auditFixture{site: dbtest.Site(t)}
	p := mustProcedure(t, s, f.site)
	c, err := s.CreateCoupon(ctx, actor(f.site), couponData(p.ID, "C-AUD-1"))
	if err != nil {
		t.Fatal(err)
	}
	fixed := c.CouponData
	fixed.VoltageV = 21.5
	if f.coupon, err = s.CorrectCoupon(ctx, actor(f.site), c.ID, db.Change{BaseRevision: 1, Reason: "voltage re-read"}, fixed); err != nil {
		t.Fatal(err)
	}
	if f.measurement, err = s.CreateMeasurement(ctx, actor(f.site), measurementData(c.ID, "A", "accept")); err != nil {
		t.Fatal(err)
	}
	if v, err := s.VerifyAudit(ctx, f.site); err != nil || !v.OK {
		t.Fatalf("VerifyAudit before tampering = %+v (err %v), want ok", v, err)
	}
	return f
}

// seqOf returns the sequence number of the audit event of one record revision.
func seqOf(t *testing.T, conn *pgx.Conn, site, id string, rev int) int64 {
	t.Helper()
	var seq int64
	err := conn.QueryRow(context.Background(),
		"SELECT seq FROM audit_events WHERE site = $1 AND entity_id = $2 AND revision = $3", site, id, rev).Scan(&seq)
	if err != nil {
		t.Fatalf("audit event of %s revision %d: %v", id, rev, err)
	}
	return seq
}

// TestVerifyAuditFindsTampering edits the database behind the service's back,
// as a superuser who disables the append-only triggers, and checks that
// VerifyAudit reports exactly what was altered.
func TestVerifyAuditFindsTampering(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	conn := superuser(t)
	for _, c := range []struct {
		name   string
		tamper func(f auditFixture) (sql []string, want []string)
	}{
		{"EditRow", func(f auditFixture) ([]string, []string) {
			return []string{
					"ALTER TABLE coupons DISABLE TRIGGER coupons_append_only",
					fmt.Sprintf("UPDATE coupons SET current_a = 200 WHERE site = '%s' AND id = '%s' AND revision = 1", f.site, f.coupon.ID),
					"ALTER TABLE coupons ENABLE TRIGGER coupons_append_only",
				}, []string{
					fmt.Sprintf("coupon %s revision 1: differs from the content recorded when it was written", f.coupon.ID),
				}
		}},
		{"DeleteRow", func(f auditFixture) ([]string, []string) {
			return []string{
					"ALTER TABLE measurements DISABLE TRIGGER measurements_append_only",
					fmt.Sprintf("DELETE FROM measurements WHERE site = '%s' AND id = '%s'", f.site, f.measurement.ID),
					"ALTER TABLE measurements ENABLE TRIGGER measurements_append_only",
				}, []string{
					fmt.Sprintf("measurement %s revision 1: recorded in the audit chain but missing from the table", f.measurement.ID),
				}
		}},
		{"ForgedRevision", func(f auditFixture) ([]string, []string) {
			// INSERT needs no disabled trigger; the forged revision has no event.
			return []string{
					fmt.Sprintf(`INSERT INTO coupons SELECT (jsonb_populate_record(c, '{"revision": 3, "reason": "forged", "current_a": 150}')).*
						FROM coupons c WHERE site = '%s' AND id = '%s' AND revision = 2`, f.site, f.coupon.ID),
				}, []string{
					fmt.Sprintf("coupon %s revision 3: has no audit event", f.coupon.ID),
				}
		}},
	} {
		t.Run(c.name, func(t *testing.T) {
			f := newAuditFixture(t, s)
			sql, want := c.tamper(f)
			checkTampered(t, s, conn, f.site, sql, want)
		})
	}
	t.Run("EditEventReason", func(t *testing.T) {
		f := newAuditFixture(t, s)
		seq := seqOf(t, conn, f.site, f.coupon.ID.String(), 2)
		checkTampered(t, s, conn, f.site, []string{
			"ALTER TABLE audit_events DISABLE TRIGGER audit_events_append_only",
			fmt.Sprintf("UPDATE audit_events SET reason = 'routine' WHERE site = '%s' AND seq = %d", f.site, seq),
			"ALTER TABLE audit_events ENABLE TRIGGER audit_events_append_only",
		}, []string{fmt.Sprintf("event %d: content does not match its hash", seq)})
	})
	t.Run("RehashedEvent", func(t *testing.T) {
		// A careful forger changes a row, its event's payload, and that event's
		// hash to match: the next event's link still gives it away.
		f := newAuditFixture(t, s)
		seq := seqOf(t, conn, f.site, f.coupon.ID.String(), 1)
		checkTampered(t, s, conn, f.site, []string{
			"ALTER TABLE coupons DISABLE TRIGGER coupons_append_only",
			"ALTER TABLE audit_events DISABLE TRIGGER audit_events_append_only",
			fmt.Sprintf("UPDATE coupons SET current_a = 200 WHERE site = '%s' AND id = '%s' AND revision = 1", f.site, f.coupon.ID),
			fmt.Sprintf(`UPDATE audit_events e SET payload = to_jsonb(r),
				hash = etchlog_audit_hash(e.prev_hash, e.seq, e.at, e.actor, e.action, e.entity, e.entity_id, e.revision, e.reason, to_jsonb(r))
				FROM coupons r WHERE e.site = '%s' AND e.seq = %d AND r.id = e.entity_id AND r.revision = e.revision`, f.site, seq),
			"ALTER TABLE audit_events ENABLE TRIGGER audit_events_append_only",
			"ALTER TABLE coupons ENABLE TRIGGER coupons_append_only",
		}, []string{fmt.Sprintf("event %d: previous-hash link broken", seq+1)})
	})
	t.Run("DeleteEvent", func(t *testing.T) {
		f := newAuditFixture(t, s)
		seq := seqOf(t, conn, f.site, f.coupon.ID.String(), 1)
		checkTampered(t, s, conn, f.site, []string{
			"ALTER TABLE audit_events DISABLE TRIGGER audit_events_append_only",
			fmt.Sprintf("DELETE FROM audit_events WHERE site = '%s' AND seq = %d", f.site, seq),
			"ALTER TABLE audit_events ENABLE TRIGGER audit_events_append_only",
		}, []string{
			fmt.Sprintf("event %d: expected sequence %d (an event is missing)", seq+1, seq),
			fmt.Sprintf("coupon %s revision 1: has no audit event", f.coupon.ID),
		})
	})
}

// checkTampered runs the statements in one transaction (so other tests never
// see a disabled trigger) and compares VerifyAudit's problems with want.
func checkTampered(t *testing.T, s *db.Store, conn *pgx.Conn, site string, stmts, want []string) {
	t.Helper()
	ctx := context.Background()
	err := pgx.BeginFunc(ctx, conn, func(tx pgx.Tx) error {
		for _, q := range stmts {
			if _, err := tx.Exec(ctx, q); err != nil {
				return fmt.Errorf("%s: %w", strings.Fields(q)[0], err)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatalf("tamper: %v", err)
	}
	v, err := s.VerifyAudit(ctx, site)
	if err != nil {
		t.Fatalf("VerifyAudit: %v", err)
	}
	if v.OK {
		t.Errorf("VerifyAudit ok = true after tampering, want false")
	}
	if d := cmp.Diff(want, v.Problems); d != "" {
		t.Errorf("VerifyAudit problems (-want +got):\n%s", d)
	}
}

// TestAppendOnly checks that UPDATE and DELETE are refused on every record
// table and on the audit chain, even for the superuser, unless the trigger is
// disabled, and that the refused statements changed nothing.
func TestAppendOnly(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	conn := superuser(t)
	ctx := context.Background()
	f := newAuditFixture(t, s)
	if _, err := s.CreateQualificationRecord(ctx, actor(f.site), db.QualificationRecordData{
		RecordNumber: "PQR-AO-1", Process: "GMAW", WeldedOn: f.coupon.WeldedOn, WelderID: "W-07",
		FillerClassification: "ER70S-6", WireDiameterMM: 1.2, Polarity: "DCEP", Position: "1G",
		BaseMetalGroup: "carbon steel", ThicknessMM: 12, CurrentA: 280, VoltageV: 29, TravelSpeedMMPerS: 6,
		VisualResult: "pass", BendResult: "pass", TensileResult: "pass", MacroResult: "pass", Outcome: "pass",
	}); err != nil {
		t.Fatal(err)
	}
	for _, table := range []string{"procedures", "qualification_records", "coupons", "measurements", "audit_events"} {
		for _, stmt := range []string{
			"UPDATE " + table + " SET site = site WHERE site = $1",
			"DELETE FROM " + table + " WHERE site = $1",
		} {
			t.Run(table+"/"+strings.Fields(stmt)[0], func(t *testing.T) {
				var before, after int
				count := "SELECT count(*) FROM " + table + " WHERE site = $1"
				if err := conn.QueryRow(ctx, count, f.site).Scan(&before); err != nil || before == 0 {
					t.Fatalf("%s rows of the site: %d (err %v), want some", table, before, err)
				}
				_, err := conn.Exec(ctx, stmt, f.site)
				var pg *pgconn.PgError
				if !errors.As(err, &pg) || pg.Code != pgerrcode.InsufficientPrivilege || !strings.Contains(pg.Message, "append-only") {
					t.Errorf("%s: err = %v, want SQLSTATE 42501 from the append-only trigger", stmt, err)
				}
				if err := conn.QueryRow(ctx, count, f.site).Scan(&after); err != nil || after != before {
					t.Errorf("%s rows after the refused %s: %d (err %v), want %d", table, strings.Fields(stmt)[0], after, err, before)
				}
			})
		}
	}
	if v, err := s.VerifyAudit(ctx, f.site); err != nil || !v.OK {
		t.Errorf("VerifyAudit after refused statements = %+v (err %v), want ok", v, err)
	}
}

// TestTruncateRefused checks that TRUNCATE, which row triggers do not see, is
// refused on every append-only table.
func TestTruncateRefused(t *testing.T) {
	t.Parallel()
	dbtest.Store(t)
	conn := superuser(t)
	ctx := context.Background()
	for _, table := range []string{"procedures", "qualification_records", "coupons", "measurements",
		"audit_events", "calibrations", "calibration_activations", "rule_sets", "procedure_ranges",
		"production_batches", "production_records"} {
		t.Run(table, func(t *testing.T) {
			_, err := conn.Exec(ctx, "TRUNCATE "+table+" CASCADE")
			var pg *pgconn.PgError
			if !errors.As(err, &pg) || pg.Code != pgerrcode.InsufficientPrivilege || !strings.Contains(pg.Message, "append-only") {
				t.Errorf("TRUNCATE %s: err = %v, want SQLSTATE 42501 from the append-only trigger", table, err)
			}
		})
	}
}
