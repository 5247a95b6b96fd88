package db_test

import (
	"context"
	"crypto/md5"
	"fmt"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestSequencerRewriteReadsByKey runs the sequencer's rewrite of coupon_list
// rows (the DELETE and the INSERT from coupon_list_derived) and of
// section_list rows (likewise) for a batch of
// a few coupons and their sections, on a site that grew after the tables
// were last analyzed, as it does during an import: the statistics say the
// site holds nearly nothing. The statements must read rows in proportion
// to the batch, not to the site: under such statistics the planner took a
// scan of the site's index and filtered the ids, reading every coupon and
// section of the site for each pass (and, for each coupon's verdict, every
// section of the site again). Checked with EXPLAIN ANALYZE, in the plan made
// for the arguments and in the generic plan a prepared statement switches
// to after five executions.
//
// Two ways to grow: statistics taken while only small sites had rows, and
// none at all (a new database whose tables were never analysed, as when a
// shop's first site fills up quickly, or in the create benchmark: there the
// coupons' rewrite read every coupon of the site through its welding-day
// index while the ids were an array condition on the view).
func TestSequencerRewriteReadsByKey(t *testing.T) {
	for _, before := range []string{"analysed while small", "never analysed", "analysed with one other site", "analysed while the site was small",
		"planned while the site was small"} {
		t.Run(before, func(t *testing.T) { rewritesReadByKey(t, before) })
	}
}

// rewritesReadByKey runs TestSequencerRewriteReadsByKey with the statistics
// taken before the site grew: with 200 small sites, with none, with one
// other site as large as the site grows to (a group of a few shops: the
// statistics then know every site but the new one, which they take for
// empty), with the site itself at 30 coupons (a new installation's first
// shop), or never, the statements prepared and their generic plans made
// while the site had 30 coupons and kept as it grew, as on the sequencer's
// connection of a server whose tables autovacuum does not analyse (the demo
// under the mixed load on a server with autovacuum off: each coupon's latest
// leaf was looked up through the leaves' index by sequence, every leaf of
// the site for each coupon, up to 13.7 s a pass, before migration 000056).
func rewritesReadByKey(t *testing.T, before string) {
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	_, conn := dbtest.FreshConn(t)
	const site, other, coupons = "grown", "settled", 3000
	// Statistics taken while only other, small sites had rows (or none),
	// and kept so (no autovacuum in this database's tables) while the site
	// grows.
	autovacuumOff(ctx, t, conn)
	switch before {
	case "analysed while small":
		for i := range 200 { // many small sites: a site's rows look few
			seedGrown(ctx, t, conn, fmt.Sprintf("%s-%d", other, i), 10)
		}
	case "analysed with one other site":
		seedGrown(ctx, t, conn, other, coupons)
	case "analysed while the site was small":
		seedGrownFrom(ctx, t, conn, site, 0, 30)
	}
	if before != "never analysed" && before != "planned while the site was small" {
		if _, err := conn.Exec(ctx, "ANALYZE"); err != nil {
			t.Fatal(err)
		}
	}
	statements := []struct {
		name, before, sql string
		sections          bool // the statement takes the sections alone
		perID             int  // rows it may read per id of the batch
	}{
		// A deletion seeks each row once (with the sections' coupons
		// found by key first).
		{"coupon_list delete", "", db.CouponListDelete, false, 3},
		// 30 rows per coupon or section of the batch covers its seeks (a
		// coupon's verdict reads its three sections and their leaves).
		{"coupon_list insert", db.CouponListDelete, db.CouponListRefresh, false, 30}, // the rows it writes, deleted first as in a pass
		{"section_list delete", "", db.SectionListDelete, true, 3},
		{"section_list insert", db.SectionListDelete, db.SectionListRefresh, true, 30},
	}
	stale := before == "planned while the site was small"
	switch {
	case before == "analysed while the site was small":
		seedGrownFrom(ctx, t, conn, site, 30, coupons)
	case stale:
		seedGrownFrom(ctx, t, conn, site, 0, 30)
		for i, st := range statements { // prepared, and run once for a generic plan to keep
			name := fmt.Sprintf("stale_%d", i)
			if _, err := conn.Exec(ctx, "PREPARE "+name+" AS "+st.sql, pgx.QueryExecModeSimpleProtocol); err != nil {
				t.Fatal(err)
			}
			args := []any{site, []uuid.UUID{grownID(site, "c", 1)}, []uuid.UUID{grownID(site, "m", 7)}}
			if st.sections {
				args = []any{site, []uuid.UUID{grownID(site, "m", 7)}}
			}
			preparedRowsRead(ctx, t, conn, st.before, name, "force_generic_plan", args...)
		}
		seedGrownFrom(ctx, t, conn, site, 30, coupons)
	default:
		seedGrown(ctx, t, conn, site, coupons)
	}

	// A batch of a few coupons (ten, and the sections of ten others) and one
	// of an import part's size (200 coupons, and the sections of 200 others).
	for _, size := range []int{10, 200} {
		var ids, sections []uuid.UUID
		for i := range size {
			ids = append(ids, grownID(site, "c", 100+i))
			for s := range 3 {
				sections = append(sections, grownID(site, "m", 3*(2000+i)+s))
			}
		}
		batch := len(ids) + len(sections)
		for i, st := range statements {
			modes := []string{"force_custom_plan", "force_generic_plan"}
			if stale {
				modes = modes[1:]
			}
			for _, mode := range modes {
				args := []any{site, ids, sections}
				if st.sections {
					args = []any{site, sections}
				}
				var read int
				var plan string
				if stale {
					read, plan = preparedRowsRead(ctx, t, conn, st.before, fmt.Sprintf("stale_%d", i), mode, args...)
				} else {
					read, plan = rowsRead(ctx, t, conn, st.before, st.sql, mode, args...)
				}
				// The site holds 3,000 coupons and 9,000 sections.
				if read > st.perID*batch {
					t.Errorf("%s (%s): %d rows read for a batch of %d ids at a site of %d coupons:\n%s",
						st.name, mode, read, batch, coupons, plan)
				} else {
					t.Logf("%s (%s): %d rows read for a batch of %d ids", st.name, mode, read, batch)
				}
			}
		}
	}
}

// seedGrown writes n coupons of site with three sections each, their log
// leaves and their coupon_list rows, as the sequencer would have left them.
// The values are invented for the test.
func seedGrown(ctx context.Context, t *testing.T, conn *pgx.Conn, site string, n int) {
	t.Helper()
	seedGrownFrom(ctx, t, conn, site, 0, n)
}

// seedGrownFrom is seedGrown for coupons from to n-1 of site (their
// sections and leaves likewise), so a site can grow in two steps.
func seedGrownFrom(ctx context.Context, t *testing.T, conn *pgx.Conn, site string, from, n int) {
	t.Helper()
	args := pgx.NamedArgs{"site": site, "from": from, "n": n}
	for _, q := range []string{
		// Links are not checked (session_replication_role): the coupons name
		// a procedure that is not stored.
		`SET session_replication_role = replica`,
		`INSERT INTO coupons (site, id, revision, created_at, created_by, procedure_id, coupon_mark, welder_id, welded_on, joint_type,
			thickness_mm, pass_number, current_a, voltage_v, travel_speed_mm_s, wire_diameter_mm, polarity, position)
		SELECT @site, md5(@site::text || 'c' || g)::uuid, 1, now(), 'seed', md5(@site::text || 'p')::uuid, 'C-' || g, 'W1',
			date '2026-11-03', 'fillet',
			6, 1, 180, 21, 5, 0.9, 'DCEP', '2F'
		FROM generate_series(@from::int, @n::int - 1) g`,
		`INSERT INTO measurements (site, id, revision, created_at, created_by, coupon_id, section, penetration_mm,
			bead_width_mm, reinforcement_mm, acceptance, inspector)
		SELECT @site, md5(@site::text || 'm' || g)::uuid, 1, now(), 'seed', md5(@site::text || 'c' || g / 3)::uuid,
			chr(65 + g % 3), 1.8, 7.5, 1.2, 'accept', 'QC'
		FROM generate_series(3 * @from::int, 3 * @n::int - 1) g`,
		`INSERT INTO log_leaves (site, leaf_index, kind, version, record_id, revision, leaf_hash, actor, action, at, integrated_at, pending_seq)
		SELECT @site, g, CASE WHEN g % 4 = 0 THEN 'coupon' ELSE 'measurement' END, 1,
			md5(@site::text || CASE WHEN g % 4 = 0 THEN 'c' || g / 4 ELSE 'm' || (3 * (g / 4) + g % 4 - 1) END)::uuid,
			1, sha256(g::text::bytea), 'seed', 'create', now(), now(), g + 1
		FROM generate_series(4 * @from::int, 4 * @n::int - 1) g`,
		`INSERT INTO coupon_list SELECT * FROM coupon_list_derived WHERE site = @site ON CONFLICT DO NOTHING`,
		`INSERT INTO section_list SELECT * FROM section_list_derived WHERE site = @site ON CONFLICT DO NOTHING`,
		`RESET session_replication_role`,
	} {
		if _, err := conn.Exec(ctx, q, args); err != nil {
			t.Fatalf("seed %s: %v\n%s", site, err, q)
		}
	}
}

// grownID is the id seedGrown gave the n-th row of a kind ("c", "m") at site.
func grownID(site, kind string, n int) uuid.UUID {
	return uuid.UUID(md5.Sum([]byte(site + kind + strconv.Itoa(n))))
}

// rowsRead runs sql with EXPLAIN ANALYZE in a transaction it rolls back
// (after before, when given, with the same arguments),
// under plan_cache_mode mode (a prepared statement, so a generic plan is
// the one the sequencer's connection would reuse), and returns how many
// rows its scans read (returned or filtered out, over all loops) and the
// plan on one line.
func rowsRead(ctx context.Context, t *testing.T, conn *pgx.Conn, before, sql, mode string, args ...any) (int, string) {
	t.Helper()
	if _, err := conn.Exec(ctx, "PREPARE rewrite AS "+sql, pgx.QueryExecModeSimpleProtocol); err != nil {
		t.Fatal(err)
	}
	defer conn.Exec(ctx, "DEALLOCATE rewrite", pgx.QueryExecModeSimpleProtocol) //nolint:errcheck // the test's own statement
	return preparedRowsRead(ctx, t, conn, before, "rewrite", mode, args...)
}

// preparedRowsRead is rowsRead for the statement already prepared as name
// on conn (with whatever plan it has kept).
func preparedRowsRead(ctx context.Context, t *testing.T, conn *pgx.Conn, before, name, mode string, args ...any) (int, string) {
	t.Helper()
	tx, err := conn.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // the statement's writes are not kept
	if before != "" {
		if _, err := tx.Exec(ctx, before, args...); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := tx.Exec(ctx, "SET LOCAL plan_cache_mode = "+mode+"; SET LOCAL jit = off", pgx.QueryExecModeSimpleProtocol); err != nil {
		t.Fatal(err)
	}
	params := make([]string, len(args))
	for i := range args {
		params[i] = fmt.Sprintf("$%d", i+1)
	}
	// The simple protocol writes the arguments into EXECUTE as literals
	// (id lists as array literals).
	literal := []any{pgx.QueryExecModeSimpleProtocol}
	for _, a := range args {
		if ids, ok := a.([]uuid.UUID); ok {
			s := make([]string, len(ids))
			for i, id := range ids {
				s[i] = id.String()
			}
			a = "{" + strings.Join(s, ",") + "}"
		}
		literal = append(literal, a)
	}
	var plan []map[string]any
	if err := tx.QueryRow(ctx, "EXPLAIN (ANALYZE, FORMAT JSON) EXECUTE "+name+"("+strings.Join(params, ", ")+")",
		literal...).Scan(&plan); err != nil {
		t.Fatal(err)
	}
	root, _ := plan[0]["Plan"].(map[string]any)
	return scannedRows(root), planText(root)
}

// scannedRows adds up the rows each scan of a plan read: those it returned
// and those its filter removed, times its loops.
func scannedRows(node map[string]any) int {
	n := 0
	if strings.HasSuffix(fmt.Sprint(node["Node Type"]), "Scan") && node["Relation Name"] != nil || node["Node Type"] == "Bitmap Index Scan" {
		rows, _ := node["Actual Rows"].(float64)
		removed, _ := node["Rows Removed by Filter"].(float64)
		loops, _ := node["Actual Loops"].(float64)
		n += int((rows + removed) * loops)
	}
	plans, _ := node["Plans"].([]any)
	for _, p := range plans {
		if m, ok := p.(map[string]any); ok {
			n += scannedRows(m)
		}
	}
	return n
}
