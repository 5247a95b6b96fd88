package db_test

import (
	"context"
	"fmt"
	"sort"
	"strings"
	"testing"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// writePathIndexes names every index of the tables each record write
// inserts into, and what reads it. An index costs every write of its table
// an entry, so one that no statement reads is a cost with no use (migration
// 000051 dropped ten): a new index on these tables must name its reader here.
var writePathIndexes = map[string]string{
	"coupons_pkey":                                 "key; a coupon's revisions by id (latest revision, flag locks)",
	"coupons_site_id":                              "the site's latest coupon revisions in id order (DISTINCT ON (id) … ORDER BY id, revision DESC: calibration samples, activation, drift charts)",
	"coupons_procedure":                            "a procedure's coupons when its ranges change (procedureCouponsSQL)",
	"coupons_qualification_record":                 "a PQR's coupons when it is corrected or voided (recordCouponsSQL)",
	"measurements_pkey":                            "key; a section's revisions by id",
	"measurements_site_id":                         "the site's latest section revisions in id order (calibration samples, activation, drift charts)",
	"measurements_coupon_current":                  "a coupon's sections (its verdict in coupon_list_derived, model flags, the one-section-per-label check)",
	"qualification_records_pkey":                   "key; a PQR's revisions by id",
	"qualification_records_site_id":                "the latest revisions of a procedure's supporting PQRs (DISTINCT ON (id) … ORDER BY id, revision DESC)",
	"procedures_pkey":                              "key; a procedure's revisions by id",
	"procedures_site_id":                           "the site's latest procedure revisions in id order (DISTINCT ON (id))",
	"procedures_code_key":                          "one code per procedure (unique at revision 1)",
	"production_records_pkey1":                     "key; a production record by id (its leaf, the export)",
	"production_records_procedure":                 "a procedure's production records when its ranges change",
	"current_marks_pkey":                           "one current coupon mark or record number per site (the claim)",
	"current_marks_record":                         "a record's current mark, replaced when it is corrected",
	"log_pending_pkey":                             "the sequencer's read of pending leaves in commit order",
	"log_pending_site_kind_record_id_revision_key": "one pending leaf per revision; a record's pending leaf (the export's unlogged rows)",
}

// TestRecordIndexesHaveReaders reads the catalog: the indexes of the write
// path's tables are exactly writePathIndexes (a partition's indexes are its
// parent's).
func TestRecordIndexesHaveReaders(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	conn := dbtest.Conn(t)
	rows, _ := conn.Query(ctx, `SELECT indexname FROM pg_indexes WHERE schemaname = current_schema()
		AND tablename IN ('coupons', 'measurements', 'qualification_records', 'procedures', 'production_records',
		                  'current_marks', 'log_pending')`)
	names, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		t.Fatal(err)
	}
	have := map[string]bool{}
	for _, n := range names {
		have[n] = true
		if _, ok := writePathIndexes[n]; !ok {
			t.Errorf("index %s on a write path table names no reader in writePathIndexes: drop it, or name the statement that reads it", n)
		}
	}
	var missing []string
	for n := range writePathIndexes {
		if !have[n] {
			missing = append(missing, n)
		}
	}
	sort.Strings(missing)
	if len(missing) > 0 {
		t.Errorf("writePathIndexes names indexes the schema does not have: %s", strings.Join(missing, ", "))
	}
}

// TestRecordRecomputeReadsByIndex: correcting a procedure's ranges or a PQR
// judges again their own coupons, so the read of those coupons must cost
// them, not the site. With 20,000 coupons of 50 procedures and 100 PQRs
// (a tenth of them with a second revision), analysed, each read touches at
// most a few rows of coupons per coupon it returns. (Before, a PQR's read
// walked every coupon of the site: 22,000 rows for 200 coupons.) The
// coupons are invented for the test.
func TestRecordRecomputeReadsByIndex(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	_, conn := dbtest.FreshConn(t)
	const site, n = "recompute", 20000
	proc := func(i int) uuid.UUID { return uuid.NewSHA1(uuid.Nil, fmt.Appendf(nil, "procedure %d", i%50)) }
	pqr := func(i int) uuid.UUID { return uuid.NewSHA1(uuid.Nil, fmt.Appendf(nil, "pqr %d", i%100)) }
	if _, err := conn.Exec(ctx, `
		INSERT INTO coupons (site, id, revision, created_at, created_by, reason, voided, procedure_id,
			qualification_record_id, coupon_mark, welder_id, welded_on, joint_type, thickness_mm, pass_number,
			current_a, voltage_v, travel_speed_mm_s, position)
		SELECT $1, md5('coupon ' || g)::uuid, r, now(), 'seed', CASE WHEN r = 1 THEN '' ELSE 'corrected' END, false,
			($2::uuid[])[1 + g % 50], ($3::uuid[])[1 + g % 100], 'C-' || g, 'W' || (g % 40), date '2024-01-01' + g % 700,
			'butt', 10, 1, 250, 25, 5, '1G'
		FROM generate_series(1, $4::int) g CROSS JOIN generate_series(1, 2) r
		WHERE r = 1 OR g % 10 = 0`, site, ids(50, proc), ids(100, pqr), n); err != nil {
		t.Fatal(err)
	}
	if _, err := conn.Exec(ctx, "ANALYZE coupons"); err != nil {
		t.Fatal(err)
	}
	for _, st := range []struct {
		name string
		sql  string
		args []any
		want int // coupons returned
	}{
		{"a PQR's coupons", db.RecordCouponsSQL, []any{site, pqr(10), []uuid.UUID{}}, n / 100},
		{"a procedure's coupons", db.ProcedureCouponsSQL, []any{site, proc(20)}, n / 50},
	} {
		var got int
		if err := conn.QueryRow(ctx, "SELECT count(*) FROM ("+st.sql+") q", st.args...).Scan(&got); err != nil {
			t.Fatal(err)
		}
		if got != st.want {
			t.Errorf("%s: %d coupons, want %d", st.name, got, st.want)
		}
		// The plan made for the arguments, and the generic plan a prepared
		// statement switches to after five executions.
		for _, mode := range []string{"force_custom_plan", "force_generic_plan"} {
			read, plan := rowsRead(ctx, t, conn, "", st.sql, mode, st.args...)
			t.Logf("%s (%s): %d coupons, %d rows read: %s", st.name, mode, got, read, plan)
			if read > 10*st.want {
				t.Errorf("%s (%s): read %d rows for %d coupons of a site of %d: %s", st.name, mode, read, got, n, plan)
			}
		}
	}
}

// ids lists f(0) … f(k-1).
func ids(k int, f func(int) uuid.UUID) []uuid.UUID {
	out := make([]uuid.UUID, k)
	for i := range out {
		out[i] = f(i)
	}
	return out
}

// TestMarkLookupsReadByKey: an import part reads which of its marks current
// records hold, a few hundred marks at a time, and must find them by key
// however young the statistics: on a new site of 20,000 marks written after
// the table was last analysed (when the site had none), with autovacuum off,
// the read of 600 marks (half of them held) reads each by a descent of
// current_marks' key, in the plan made for the arguments and in the generic
// plan. (With current_marks_record leading with (site, kind), the planner
// filtered every mark of the site: 20,000 rows.) The marks are invented for
// the test.
func TestMarkLookupsReadByKey(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	_, conn := dbtest.FreshConn(t)
	autovacuumOff(ctx, t, conn)
	for _, sql := range []string{
		`INSERT INTO current_marks (site, kind, mark, record_id)
			SELECT 'analysed', 'coupon_mark', 'A-' || g, md5('a' || g)::uuid FROM generate_series(1, 5000) g`,
		"ANALYZE current_marks",
		`INSERT INTO current_marks (site, kind, mark, record_id)
			SELECT 'young', 'coupon_mark', 'Y-' || g, md5('y' || g)::uuid FROM generate_series(1, 20000) g`,
	} {
		if _, err := conn.Exec(ctx, sql); err != nil {
			t.Fatal(err)
		}
	}
	marks := make([]string, 600)
	for i := range marks {
		marks[i] = fmt.Sprintf("Y-%d", 19700+i) // Y-19700 … Y-20000 are held, the rest new
	}
	for _, mode := range []string{"force_custom_plan", "force_generic_plan"} {
		read, plan := rowsRead(ctx, t, conn, "", db.StoredMarksSQL, mode, "young", "coupon_mark", marks)
		t.Logf("%s: %d rows read for %d marks: %s", mode, read, len(marks), plan)
		if read > 2*len(marks) {
			t.Errorf("%s: read %d rows for %d marks of a site of 20,000: %s", mode, read, len(marks), plan)
		}
	}
}
