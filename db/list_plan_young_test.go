package db_test

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/db/dbtest"
)

// TestListPlansUnderYoungStatistics: a site that fills faster than
// autovacuum analyses it (a shop's history imported into a new site) is
// planned with statistics that do not know it. With every table analysed
// when only planOther held rows, autovacuum off, and then planSite seeded
// (as large as planOther) and its list keys written, each list call of
// TestListPlansUseIndexes is run with EXPLAIN ANALYZE (the plan made for its
// arguments and the generic plan), and again once the tables are analysed.
// A plan may read more under the young statistics, but not more than ten
// times the analysed plan's rows and 1,000 besides: a plan that reads a
// table or an index prefix of the site whole (12,000 coupons, 48,000
// sections) fails, except in the lists youngGaps names, which are logged.
//
// Two ways the statistics are young: they know only another site (a
// group's new shop), and they were taken on an empty database (a new
// installation whose first site imports its history).
func TestListPlansUnderYoungStatistics(t *testing.T) {
	t.Run("another site", func(t *testing.T) { youngListPlans(t, true) })
	t.Run("empty database", func(t *testing.T) { youngListPlans(t, false) })
}

// youngListPlans is TestListPlansUnderYoungStatistics with the statistics
// taken while planOther alone held rows (other) or while no table held any.
func youngListPlans(t *testing.T, other bool) {
	ctx, cancel := context.WithTimeout(context.Background(), 4*time.Minute)
	defer cancel()
	dbURL, conn := dbtest.FreshConn(t)
	if other {
		seedSites(ctx, t, conn, planOther)
	}
	if _, err := conn.Exec(ctx, "ANALYZE"); err != nil {
		t.Fatal(err)
	}
	if other {
		deriveLists(ctx, t, conn, "", true)
	}
	autovacuumOff(ctx, t, conn)
	seedSites(ctx, t, conn, planSite)
	autovacuumOff(ctx, t, conn) // any table the seed added
	deriveLists(ctx, t, conn, planSite, false)
	s, tr := tracedStore(t, dbURL)
	cases := listPlanCases(ctx, s)

	type run struct {
		read int
		plan string
	}
	measure := func() map[string]run {
		out := map[string]run{}
		for _, c := range cases {
			if err := c.list(); err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
			sql, args := tr.take()
			if sql == "" {
				t.Fatalf("%s: no list statement seen", c.name)
			}
			for _, generic := range []bool{false, true} {
				name := c.name
				if generic {
					name += " (generic plan)"
				}
				root, err := explainListWith(ctx, s.Pool(), "ANALYZE, FORMAT JSON", sql, args, generic)
				if err != nil {
					t.Fatalf("%s: explain: %v", name, err)
				}
				out[name] = run{scannedRows(root), planText(root)}
			}
		}
		return out
	}
	young := measure()
	if _, err := conn.Exec(ctx, "ANALYZE"); err != nil {
		t.Fatal(err)
	}
	analysed := measure()
	gaps := map[string]int{}
	var youngRows, analysedRows int
	for name, y := range young {
		a := analysed[name]
		youngRows, analysedRows = youngRows+y.read, analysedRows+a.read
		list, _, _ := strings.Cut(name, "/")
		if y.read > 10*a.read+1000 {
			if _, known := youngGaps[list]; known {
				gaps[list]++
				t.Logf("%s: known gap: %d rows read under young statistics, %d analysed:\n  young:    %s\n  analysed: %s", name, y.read, a.read, y.plan, a.plan)
				continue
			}
			t.Errorf("%s: %d rows read under young statistics, %d analysed:\n  young:    %s\n  analysed: %s", name, y.read, a.read, y.plan, a.plan)
		} else if testing.Verbose() && y.read > a.read {
			t.Logf("%s: %d rows read under young statistics, %d analysed", name, y.read, a.read)
		}
	}
	t.Logf("%d plans of %d lists' calls read more than ten times the analysed plan's rows (known gaps by list: %v); rows read by all plans: %d young, %d analysed",
		total(gaps), len(young), gaps, youngRows, analysedRows)
}

// total adds up a map's counts.
func total(m map[string]int) int {
	n := 0
	for _, v := range m {
		n += v
	}
	return n
}

// youngGaps are the lists some of whose plans still read far more under
// young statistics, each with why; their cases are logged (and counted), not
// failed. The others (procedures, sections) must hold.
var youngGaps = map[string]string{
	"coupons":               "a filter's walk may take the log index instead of the filter's (site leads every index of coupon_list)",
	"qualification_records": "welding-day ranges walk the wrong index of qualification_list",
	"production_records":    "a filter's or a time range's walk may take the wrong index of production_list",
	"sign_offs":             "a filter's walk may take the log index instead of the filter's",
	"flags":                 "a procedure's or a day's flags may walk the wrong index",
}

// autovacuumOff keeps autovacuum from analysing any table of the database,
// so the statistics stay those taken before.
func autovacuumOff(ctx context.Context, tb testing.TB, conn *pgx.Conn) {
	tb.Helper()
	rows, _ := conn.Query(ctx, `SELECT c.oid::regclass::text FROM pg_class c
		WHERE c.relnamespace = current_schema()::regnamespace AND c.relkind = 'r'`)
	tables, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		tb.Fatal(err)
	}
	for _, t := range tables {
		if _, err := conn.Exec(ctx, "ALTER TABLE "+t+" SET (autovacuum_enabled = false)"); err != nil {
			tb.Fatal(err)
		}
	}
}
