package db_test

import (
	"context"
	"crypto/md5"
	"fmt"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// recordTables are the tables that grow with a site's records: a list must
// never read one of them whole.
var recordTables = map[string]bool{
	"procedures": true, "qualification_records": true, "coupons": true, "measurements": true,
	"production_records": true, "flags": true, "log_leaves": true, "sign_offs": true, "coupon_list": true,
	"section_list": true, "production_list": true, "production_welds": true, "sign_off_list": true,
	"qualification_list": true, "procedure_list": true,
}

// tracedStore opens the service's store on the database at dbURL (through
// its application login) with a listTracer watching it; it closes at the end.
func tracedStore(tb testing.TB, dbURL string) (*db.Store, *listTracer) {
	tb.Helper()
	appURL, err := db.AppURL(dbURL)
	if err != nil {
		tb.Fatal(err)
	}
	tr := &listTracer{}
	s, err := db.OpenTraced(context.Background(), appURL, tr)
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(s.Close)
	return s, tr
}

// listTracer keeps the last list statement (the one with ORDER BY ... LIMIT
// and a page's size, bound or written in) a store sent, alone or in a
// batch, with its arguments.
type listTracer struct {
	mu   sync.Mutex
	sql  string
	args []any
}

func (t *listTracer) TraceQueryStart(ctx context.Context, _ *pgx.Conn, d pgx.TraceQueryStartData) context.Context {
	if strings.Contains(d.SQL, "ORDER BY ") && pageLimit.MatchString(d.SQL) {
		t.mu.Lock()
		t.sql, t.args = d.SQL, d.Args
		t.mu.Unlock()
	}
	return ctx
}

// pageLimit matches the LIMIT of a page: bound, or written in (a page is
// never a single row; LIMIT 1 picks a record's latest revision).
var pageLimit = regexp.MustCompile(` LIMIT (\$[0-9]+|[0-9]{2,})`)

func (t *listTracer) TraceQueryEnd(context.Context, *pgx.Conn, pgx.TraceQueryEndData) {}

// The batch hooks see the statements a list sends in one round trip.
func (t *listTracer) TraceBatchStart(ctx context.Context, _ *pgx.Conn, _ pgx.TraceBatchStartData) context.Context {
	return ctx
}

func (t *listTracer) TraceBatchQuery(ctx context.Context, c *pgx.Conn, d pgx.TraceBatchQueryData) {
	t.TraceQueryStart(ctx, c, pgx.TraceQueryStartData{SQL: d.SQL, Args: d.Args})
}

func (t *listTracer) TraceBatchEnd(context.Context, *pgx.Conn, pgx.TraceBatchEndData) {}

func (t *listTracer) take() (string, []any) {
	t.mu.Lock()
	defer t.mu.Unlock()
	sql, args := t.sql, t.args
	t.sql, t.args = "", nil
	return sql, args
}

// seqScans returns the record tables a JSON plan reads with a sequential scan.
func seqScans(node map[string]any) []string {
	var out []string
	if node["Node Type"] == "Seq Scan" && recordTables[fmt.Sprint(node["Relation Name"])] {
		out = append(out, fmt.Sprint(node["Relation Name"]))
	}
	plans, _ := node["Plans"].([]any)
	for _, p := range plans {
		if m, ok := p.(map[string]any); ok {
			out = append(out, seqScans(m)...)
		}
	}
	return out
}

// TestListPlansUseIndexes asks the planner, on a seeded and analyzed
// database, for the plan of every list statement with each filter the API
// offers (alone, in common pairs, and on a deep page), and fails when a plan
// reads a record table with a sequential scan: such a list slows down with
// every record the site keeps. The plan is PostgreSQL's own choice under
// default settings (no enable_* switched off).
func TestListPlansUseIndexes(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 4*time.Minute)
	defer cancel()
	dbURL, conn := dbtest.FreshConn(t)
	start := time.Now()
	seedPlans(ctx, t, conn)
	t.Logf("seeded in %v", time.Since(start).Round(time.Millisecond))
	s, tr := tracedStore(t, dbURL)

	cases := listPlanCases(ctx, s)
	explainRefresh(ctx, t, s)
	for _, c := range cases {
		if err := c.list(); err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		sql, args := tr.take()
		if sql == "" {
			t.Errorf("%s: no list statement seen", c.name)
			continue
		}
		for _, generic := range []bool{false, true} {
			root, err := explainList(ctx, s, sql, args, generic)
			name := c.name
			if generic {
				name += " (generic plan)"
			}
			if err != nil {
				t.Errorf("%s: explain: %v", name, err)
				continue
			}
			scans := seqScans(root)
			if reason, ok := planGaps[c.name]; ok && len(scans) > 0 {
				t.Logf("%s: known gap (%s): %s", name, reason, planText(root))
			} else if len(scans) > 0 {
				t.Errorf("%s: sequential scan of %v: %s", name, scans, planText(root))
			} else if testing.Verbose() {
				t.Logf("%s: %s", name, planText(root))
			}
		}
	}
}

// explainList returns the plan of a list statement for its arguments: the
// plan made for them, or with generic set the generic plan, the one
// PostgreSQL reuses for every later execution of a prepared statement once
// five executions have not found it dearer (the service's pool prepares
// each statement once per connection). Both must stay off sequential scans.
func explainList(ctx context.Context, s *db.Store, sql string, args []any, generic bool) (map[string]any, error) {
	return explainListWith(ctx, s.Pool(), "FORMAT JSON", sql, args, generic)
}

// explainListWith is explainList with EXPLAIN's options (with ANALYZE the
// statement runs, and the plan counts the rows each node read), through pool.
func explainListWith(ctx context.Context, pool *pgxpool.Pool, options, sql string, args []any, generic bool) (map[string]any, error) {
	var plan []map[string]any
	if !generic {
		if err := pool.QueryRow(ctx, "EXPLAIN ("+options+") "+sql, args...).Scan(&plan); err != nil {
			return nil, err
		}
		root, _ := plan[0]["Plan"].(map[string]any)
		return root, nil
	}
	conn, err := pool.Acquire(ctx)
	if err != nil {
		return nil, err
	}
	defer conn.Release()
	defer func() {
		_, _ = conn.Exec(ctx, "DEALLOCATE list_plan; RESET plan_cache_mode", pgx.QueryExecModeSimpleProtocol)
	}()
	if _, err := conn.Exec(ctx, "PREPARE list_plan AS "+sql+"; SET plan_cache_mode = force_generic_plan", pgx.QueryExecModeSimpleProtocol); err != nil {
		return nil, err
	}
	params := make([]string, len(args))
	for i := range args {
		params[i] = "$" + strconv.Itoa(i+1)
	}
	// The simple protocol writes the arguments into EXECUTE as literals.
	rows, _ := conn.Query(ctx, "EXPLAIN ("+options+") EXECUTE list_plan("+strings.Join(params, ", ")+")",
		append([]any{pgx.QueryExecModeSimpleProtocol}, args...)...)
	if plan, err = pgx.CollectExactlyOneRow(rows, pgx.RowTo[[]map[string]any]); err != nil {
		return nil, err
	}
	root, _ := plan[0]["Plan"].(map[string]any)
	return root, nil
}

// TestListPlansUseIndexes also covers the sequencer's rewrites of
// coupon_list, section_list, production_list, sign_off_list, qualification_list and procedure_list rows: they run for every batch, so they must
// reach a batch's coupons and sections by key, never order every leaf of a
// kind at the site.
func explainRefresh(ctx context.Context, t *testing.T, s *db.Store) {
	var plan []map[string]any
	ids := []uuid.UUID{seededID("c", 5), seededID("c", 77)}
	sections := []uuid.UUID{seededID("m", 8), seededID("m", 90)}
	if err := s.Pool().QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+db.CouponListRefresh, planSite, ids, sections).Scan(&plan); err != nil {
		t.Fatalf("explain coupon_list refresh: %v", err)
	}
	root, _ := plan[0]["Plan"].(map[string]any)
	if scans := seqScans(root); len(scans) > 0 {
		t.Errorf("coupon_list refresh: sequential scan of %v: %s", scans, planText(root))
	}
	sections = []uuid.UUID{seededID("m", 4), seededID("m", 78)}
	if err := s.Pool().QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+db.SectionListRefresh, planSite, sections).Scan(&plan); err != nil {
		t.Fatalf("explain section_list refresh: %v", err)
	}
	root, _ = plan[0]["Plan"].(map[string]any)
	if scans := seqScans(root); len(scans) > 0 {
		t.Errorf("section_list refresh: sequential scan of %v: %s", scans, planText(root))
	}
	entries, records := []uuid.UUID{seededID("batch", 1), seededID("batch", 2)}, []uuid.UUID{seededID("r", 3), seededID("r", 4)}
	if err := s.Pool().QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+db.ProductionListRefresh, planSite, entries, records, []int64{7, 8}).Scan(&plan); err != nil {
		t.Fatalf("explain production_list refresh: %v", err)
	}
	root, _ = plan[0]["Plan"].(map[string]any)
	if scans := seqScans(root); len(scans) > 0 {
		t.Errorf("production_list refresh: sequential scan of %v: %s", scans, planText(root))
	}
	if err := s.Pool().QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+db.ProcedureListRefresh, planSite,
		[]uuid.UUID{seededID("p", 3), seededID("p", 40)}, []uuid.UUID{seededID("sp", 4)}).Scan(&plan); err != nil {
		t.Fatalf("explain procedure_list refresh: %v", err)
	}
	root, _ = plan[0]["Plan"].(map[string]any)
	if scans := seqScans(root); len(scans) > 0 {
		t.Errorf("procedure_list refresh: sequential scan of %v: %s", scans, planText(root))
	}
	if err := s.Pool().QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+db.QualificationListRefresh, planSite,
		[]uuid.UUID{seededID("q", 3), seededID("q", 40)}, []uuid.UUID{seededID("sq", 3)}).Scan(&plan); err != nil {
		t.Fatalf("explain qualification_list refresh: %v", err)
	}
	root, _ = plan[0]["Plan"].(map[string]any)
	if scans := seqScans(root); len(scans) > 0 {
		t.Errorf("qualification_list refresh: sequential scan of %v: %s", scans, planText(root))
	}
	if err := s.Pool().QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+db.SignOffListRefresh, planSite,
		[]uuid.UUID{seededID("sq", 3), seededID("sp", 4)}, []int64{7, 8}).Scan(&plan); err != nil {
		t.Fatalf("explain sign_off_list refresh: %v", err)
	}
	root, _ = plan[0]["Plan"].(map[string]any)
	if scans := seqScans(root); len(scans) > 0 {
		t.Errorf("sign_off_list refresh: sequential scan of %v: %s", scans, planText(root))
	}
}

// planGaps are the lists whose plan still reads a table whole, each with
// why; they are logged, not failed, so the report shows them. None at
// present.
var planGaps = map[string]string{}

// seededID is the id seedPlans gave the n-th row of a kind at planSite.
func seededID(kind string, n int) uuid.UUID { return seedID(planSite, kind, n) }

// seedID is the id seedStatements give the n-th row of a kind at site.
func seedID(site, kind string, n int) uuid.UUID {
	return uuid.UUID(md5.Sum([]byte(site + kind + strconv.Itoa(n))))
}

// planText writes a plan tree on one line: each node's type, relation and
// index, children in brackets.
func planText(node map[string]any) string {
	var b strings.Builder
	b.WriteString(fmt.Sprint(node["Node Type"]))
	if r, ok := node["Relation Name"]; ok {
		b.WriteString(" on " + fmt.Sprint(r))
	}
	if i, ok := node["Index Name"]; ok {
		b.WriteString(" using " + fmt.Sprint(i))
	}
	plans, _ := node["Plans"].([]any)
	if len(plans) > 0 {
		parts := make([]string, 0, len(plans))
		for _, p := range plans {
			if m, ok := p.(map[string]any); ok {
				parts = append(parts, planText(m))
			}
		}
		b.WriteString(" [" + strings.Join(parts, "; ") + "]")
	}
	return b.String()
}

// listPlanCase is one list call of the plan tests: a Store list with its
// filter and page; the statement it sends is taken from the tracer.
type listPlanCase struct {
	name string
	list func() error
}

// listPlanCases are the list calls the plan tests make on planSite: every
// list with each filter the API offers (alone, in common pairs) on its first
// page and, where it pages, 90% deep.
func listPlanCases(ctx context.Context, s *db.Store) []listPlanCase {
	proc := seededID("p", 7)
	pqr := seededID("q", 11)
	coupon := seededID("c", 1234)
	from, to := db.DateOf(time.Date(2021, 3, 1, 0, 0, 0, 0, time.UTC)), db.DateOf(time.Date(2021, 3, 8, 0, 0, 0, 0, time.UTC))
	quarter := db.DateOf(time.Date(2021, 6, 1, 0, 0, 0, 0, time.UTC))
	at, until := time.Date(2019, 6, 1, 0, 0, 0, 0, time.UTC), time.Date(2019, 6, 2, 0, 0, 0, 0, time.UTC)
	deep := db.SeqCursor("coupons", planCoupons)
	var cases []listPlanCase
	add := func(name string, list func() error) { cases = append(cases, listPlanCase{name, list}) }
	// paged adds a list's first page and its page from the cursor deep.
	paged := func(list, name, deep string, page func(cursor string) error) {
		add(list+"/"+name, func() error { return page("") })
		add(list+"/deep/"+name, func() error { return page(deep) })
	}
	coupons := map[string]db.CouponFilter{
		"none": {}, "procedure_id": {ProcedureID: &proc}, "qualification_record_id": {QualificationRecordID: &pqr},
		"welder_id": {WelderID: "W17"}, "coupon_mark": {CouponMark: "C-2024"},
		"welded_from": {WeldedFrom: &from}, "welded_to": {WeldedTo: &from}, "welded_from+to": {WeldedFrom: &from, WeldedTo: &to},
		"welded_from+to(quarter)": {WeldedFrom: &from, WeldedTo: &quarter}, "welded_from+to(quarter)+acceptance=reject": {WeldedFrom: &from, WeldedTo: &quarter, Acceptance: "reject"},
		"welded_from+to+acceptance=reject": {WeldedFrom: &from, WeldedTo: &to, Acceptance: "reject"},
		"procedure_id+welder_id":           {ProcedureID: &proc, WelderID: "W17"},
		"procedure_id+welded_from+to":      {ProcedureID: &proc, WeldedFrom: &from, WeldedTo: &to},
		"welder_id+welded_from+to":         {WelderID: "W17", WeldedFrom: &from, WeldedTo: &to},
		"acceptance=reject":                {Acceptance: "reject"}, "acceptance=accept": {Acceptance: "accept"},
		"procedure_id+acceptance=reject":    {ProcedureID: &proc, Acceptance: "reject"},
		"include_voided":                    {IncludeVoided: true},
		"qualification_record_id+welder_id": {QualificationRecordID: &pqr, WelderID: "W17"},
		"coupon_mark+include_voided":        {CouponMark: "C-2024", IncludeVoided: true},
		"welded_from+acceptance=reject":     {WeldedFrom: &from, Acceptance: "reject"},
		"welded_to+acceptance=accept":       {WeldedTo: &from, Acceptance: "accept"},
		"welded_from+to+include_voided":     {WeldedFrom: &from, WeldedTo: &to, IncludeVoided: true},
		"welder_id+acceptance=reject":       {WelderID: "W17", Acceptance: "reject"},
	}
	for name, f := range coupons {
		paged("coupons", name, deep, func(cursor string) error { _, err := s.Coupons(ctx, planSite, f, cursor, 50); return err })
	}
	deepProcedures := db.SeqCursor("procedures", planProcedures*9/10)
	for name, f := range map[string]db.ProcedureFilter{"none": {}, "process": {Process: "FCAW"}, "status": {Status: "qualified"},
		"include_voided": {IncludeVoided: true}, "process+status": {Process: "FCAW", Status: "qualified"}} {
		paged("procedures", name, deepProcedures, func(cursor string) error { _, err := s.Procedures(ctx, planSite, f, cursor, 50); return err })
	}
	deepPQRs := db.SeqCursor("qualification_records", planProcedures+planPQRs*9/10)
	for name, f := range map[string]db.QualificationRecordFilter{
		"none": {}, "process": {Process: "FCAW"}, "welder_id": {WelderID: "W17"}, "outcome": {Outcome: "fail"},
		"include_voided": {IncludeVoided: true}, "process+outcome": {Process: "FCAW", Outcome: "fail"},
		"welded_from+to": {WeldedFrom: &from, WeldedTo: &to}, "welded_from+to(quarter)": {WeldedFrom: &from, WeldedTo: &quarter},
		"welded_from": {WeldedFrom: &from}, "welded_to": {WeldedTo: &from},
		"welder_id+welded_from+to":      {WelderID: "W17", WeldedFrom: &from, WeldedTo: &quarter},
		"process+welded_from+to":        {Process: "FCAW", WeldedFrom: &from, WeldedTo: &to},
		"outcome+welded_from":           {Outcome: "fail", WeldedFrom: &from},
		"welded_from+to+include_voided": {WeldedFrom: &from, WeldedTo: &to, IncludeVoided: true},
	} {
		paged("qualification_records", name, deepPQRs, func(cursor string) error {
			_, err := s.QualificationRecords(ctx, planSite, f, cursor, 50)
			return err
		})
	}
	deepSections := db.SeqCursor("measurements", planProcedures+planPQRs+4*planCoupons*9/10)
	for name, f := range map[string]db.MeasurementFilter{
		"none": {}, "coupon_id": {CouponID: &coupon}, "acceptance": {Acceptance: "reject"}, "acceptance=accept": {Acceptance: "accept"},
		"include_voided": {IncludeVoided: true}, "coupon_id+acceptance": {CouponID: &coupon, Acceptance: "reject"},
		"acceptance+include_voided": {Acceptance: "reject", IncludeVoided: true},
	} {
		paged("measurements", name, deepSections, func(cursor string) error { _, err := s.Measurements(ctx, planSite, f, cursor, 50); return err })
	}
	// The production records' times: at a day's midnight and inside one, a
	// week, a quarter and open ranges (days and months walked).
	noon, week, quarterAt := at.Add(12*time.Hour+7*time.Minute), at.AddDate(0, 0, 7), at.AddDate(0, 3, 0)
	deepProduction := db.SeqCursor("production_records", planProcedures+planPQRs+4*planCoupons*9/10)
	for name, f := range map[string]db.ProductionRecordFilter{
		"none": {}, "procedure_id": {ProcedureID: &proc}, "weld_id": {WeldID: "J-777"}, "welder_id": {WelderID: "W17"},
		"recorded_from+to": {RecordedFrom: &at, RecordedTo: &until}, "flagged_only": {FlaggedOnly: true},
		"procedure_id+welder_id":              {ProcedureID: &proc, WelderID: "W17"},
		"recorded_from+to(week, inside days)": {RecordedFrom: &noon, RecordedTo: &week},
		"recorded_from+to(quarter)":           {RecordedFrom: &noon, RecordedTo: &quarterAt},
		"recorded_from":                       {RecordedFrom: &noon}, "recorded_to": {RecordedTo: &noon},
		"procedure_id+recorded_from+to":          {ProcedureID: &proc, RecordedFrom: &at, RecordedTo: &quarterAt},
		"welder_id+flagged_only":                 {WelderID: "W17", FlaggedOnly: true},
		"recorded_from+to(quarter)+flagged_only": {RecordedFrom: &noon, RecordedTo: &quarterAt, FlaggedOnly: true},
		"weld_id+procedure_id":                   {WeldID: "J-777", ProcedureID: &proc},
	} {
		paged("production_records", name, deepProduction, func(cursor string) error {
			_, err := s.ProductionRecords(ctx, planSite, f, cursor, 50)
			return err
		})
	}
	fat, funtil := at, at.AddDate(0, 0, 7)
	for name, f := range map[string]db.FlagFilter{
		"none": {}, "subject_kind": {SubjectKind: "production_record"}, "kind": {Kind: "model"},
		"variable": {Variable: "voltage_v"}, "procedure_id": {ProcedureID: &proc}, "from+to": {From: &fat, To: &funtil},
		"procedure_id+from+to": {ProcedureID: &proc, From: &fat, To: &funtil}, "subject_id": {SubjectID: &coupon},
	} {
		add("flags/"+name, func() error { _, err := s.Flags(ctx, planSite, f, "", 50); return err })
	}
	signed := seededID("q", 42)
	deepSignOffs := db.SeqCursor("sign-offs", planProcedures+planPQRs+4*planCoupons*9/10)
	for name, f := range map[string]db.SignOffFilter{
		"none": {}, "record_kind": {RecordKind: "procedure"}, "record_id": {RecordID: &signed}, "signed_by": {SignedBy: "E3"},
		"record_kind+signed_by": {RecordKind: "qualification_record", SignedBy: "E3"},
	} {
		paged("sign_offs", name, deepSignOffs, func(cursor string) error { _, err := s.SignOffs(ctx, planSite, f, cursor, 50); return err })
	}

	return cases
}
