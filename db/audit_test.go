package db_test

import (
	"context"
	"errors"
	"strings"
	"testing"

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

// TestAppendOnly checks that UPDATE and DELETE are refused on every record
// table and on the log's tables, even for the superuser, unless the trigger is
// disabled, and that the refused statements changed nothing.
func TestAppendOnly(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	conn := superuser(t)
	ctx := context.Background()
	f := newTamperFixture(t, s)
	if _, err := s.CreateQualificationRecord(ctx, actor(f.site), db.QualificationRecordData{
		RecordNumber: "PQR-AO-1", Process: "GMAW", WeldedOn: f.coupon.WeldedOn, WelderID: "W-07",
		FillerClassification: "ER70S-6", WireDiameterMM: 1.2, Polarity: "DCEP", Position: "1G",
		BaseMetalGroup: "carbon steel", ThicknessMM: 12, CurrentA: 280, VoltageV: 29, TravelSpeedMMPerS: 6,
		VisualResult: "pass", BendResult: "pass", TensileResult: "pass", MacroResult: "pass", Outcome: "pass",
	}); err != nil {
		t.Fatal(err)
	}
	// Its leaf is integrated before the counts: the sequencer adding it
	// between a count and the next would read as a changed table.
	mustLogged(t, s, f.site)
	for _, table := range []string{"procedures", "qualification_records", "coupons", "measurements",
		"log_leaves", "log_nodes", "log_checkpoints", "production_records"} {
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
	if v, err := s.VerifyLog(ctx, f.site, []byte(f.saved)); err != nil || !v.OK {
		t.Errorf("VerifyLog after refused statements = %+v (err %v), want ok", v, err)
	}
}

// TestTruncateRefused checks that TRUNCATE, which row triggers do not see, is
// refused on every append-only table.
func TestTruncateRefused(t *testing.T) {
	// Not parallel: it takes table-wide locks (ALTER TABLE, TRUNCATE) that
	// can make another test's write a deadlock victim.
	dbtest.Store(t)
	conn := superuser(t)
	ctx := context.Background()
	for _, table := range []string{"procedures", "qualification_records", "coupons", "measurements",
		"audit_events", "calibrations", "calibration_activations", "rule_sets", "procedure_ranges",
		"production_batches", "production_records", "log_leaves", "log_nodes", "log_checkpoints"} {
		t.Run(table, func(t *testing.T) {
			_, err := conn.Exec(ctx, "TRUNCATE "+table+" CASCADE")
			var pg *pgconn.PgError
			if !errors.As(err, &pg) || pg.Code != pgerrcode.InsufficientPrivilege || !strings.Contains(pg.Message, "append-only") {
				t.Errorf("TRUNCATE %s: err = %v, want SQLSTATE 42501 from the append-only trigger", table, err)
			}
		})
	}
}
