package db_test

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// seedStatement is the statement of seedStatements that begins with prefix
// (found by its text: a statement added to the seed moves the others).
func seedStatement(tb testing.TB, prefix string) string {
	tb.Helper()
	for _, q := range seedStatements {
		if strings.HasPrefix(q, prefix) {
			return q
		}
	}
	tb.Fatalf("no seed statement begins with %q", prefix)
	return ""
}

// seedOtherLists adds to BenchmarkRecordListScale's site of n coupons the
// records of the other lists, logged after the sections: n/200 procedures
// (at least 100; process and status in turn), n/100 qualification records
// (at least 100; 250 welders, 2,500 welding days, outcomes in turn), n
// production records over the coupons' 2,500 days (60 procedures, 250
// welders, one weld each; a flag on every twentieth) and a sign-off of each
// procedure and PQR (7 engineers). It returns how many of each it wrote.
// The values are invented (only their spreads matter), as in seedPlans.
func seedOtherLists(ctx context.Context, tb testing.TB, conn *pgx.Conn, n int) (procs, pqrs, production int) {
	tb.Helper()
	procs, pqrs, production = max(n/200, 100), max(n/100, 100), n
	args := pgx.NamedArgs{"site": "bench", "procedures": procs, "pqrs": pqrs, "production": production,
		"welders": 250, "days": 2500, "procids": 60}
	for _, q := range []string{
		"SET session_replication_role = replica", // the seed's rows are unique by construction
		seedStatement(tb, "INSERT INTO procedures "),
		seedStatement(tb, "INSERT INTO qualification_records "),
		`INSERT INTO production_batches (site, id, created_at, created_by, record_count, first_id, last_id, procedure_ids)
		SELECT @site, md5(@site::text || 'batch')::uuid, now(), 'seed', @production, md5(@site::text || 'r0')::uuid, md5(@site::text || 'r0')::uuid, '{}'`,
		`SELECT etchlog_production_month((date '2019-01-01' + m * interval '1 month')::date)
		FROM generate_series(0, (@days::int / 28) + 1) m`,
		`INSERT INTO production_records (site, id, batch_id, procedure_id, weld_id, welder_id, recorded_at,
			current_a, voltage_v, travel_speed_mm_s, wire_feed_speed_m_min, created_at, created_by)
		SELECT @site, md5(@site::text || 'r' || g)::uuid, md5(@site::text || 'batch')::uuid, md5(@site::text || 'p' || (g * 13 % @procids::int))::uuid,
			'J-' || g, 'W' || (g * 31 % @welders::int), timestamptz '2019-01-01' + g * (@days::int * interval '1 day' / @production::int),
			250, 25, 5, 8, now(), 'seed'
		FROM generate_series(0, @production::int - 1) g`,
		// Each record's weld claim, as the write that stores it makes.
		`INSERT INTO production_welds (site, procedure_id, weld_id, record_id)
		SELECT site, procedure_id, weld_id, id FROM production_records WHERE site = @site`,
		`INSERT INTO flags (site, subject_kind, subject_id, subject_at, procedure_id, ranges_version, kind, variable, detail, computed_at)
		SELECT @site, 'production_record', md5(@site::text || 'r' || g)::uuid, timestamptz '2019-01-01' + g * (@days::int * interval '1 day' / @production::int),
			md5(@site::text || 'p' || (g * 13 % @procids::int))::uuid, 1, 'range', 'current_a', 'seeded', now()
		FROM generate_series(0, @production::int - 1, 20) g`,
		seedStatement(tb, "INSERT INTO sign_offs "),
		// The log: after the coupons and sections, the procedures, the PQRs,
		// the production records, then the sign-offs.
		`INSERT INTO log_leaves (site, leaf_index, kind, version, record_id, revision, leaf_hash, actor, action, at, integrated_at, pending_seq)
		SELECT @site, base + i, kind, 1, id, 1, sha256(id::text::bytea), 'seed', 'create', now(), now(), base + i + 1
		FROM (SELECT max(leaf_index) + 1 AS base FROM log_leaves WHERE site = @site) b, (
			SELECT 'procedure' AS kind, md5(@site::text || 'p' || g)::uuid AS id, g::bigint AS i FROM generate_series(0, @procedures::int - 1) g
			UNION ALL SELECT 'qualification_record', md5(@site::text || 'q' || g)::uuid, @procedures::int + g FROM generate_series(0, @pqrs::int - 1) g
			UNION ALL SELECT 'production_record', md5(@site::text || 'r' || g)::uuid, @procedures::int + @pqrs::int + g FROM generate_series(0, @production::int - 1) g
			UNION ALL SELECT 'sign_off', s.id, @procedures::int + @pqrs::int + @production::int
				+ row_number() OVER (ORDER BY s.record_kind DESC, s.record_id) - 1
			FROM sign_offs s WHERE s.site = @site
		) leaves`,
		"SET session_replication_role = origin",
	} {
		if _, err := conn.Exec(ctx, q, args); err != nil {
			tb.Fatalf("%v\n%s", err, q)
		}
	}
	for _, t := range []string{"procedures", "qualification_records", "production_records", "production_welds", "flags", "sign_offs", "log_leaves"} {
		if _, err := conn.Exec(ctx, "VACUUM ANALYZE "+t); err != nil {
			tb.Fatal(err)
		}
	}
	// The production records, sign-offs, PQRs and procedures lists' keys, as the sequencer
	// would have written them (derived once the records have statistics:
	// before, the planner looked each production leaf up in every month).
	if err := indexAfter(ctx, conn, "production_list", func() error {
		_, err := conn.Exec(ctx, "INSERT INTO production_list SELECT * FROM production_list_derived WHERE site = 'bench'")
		return err
	}); err != nil {
		tb.Fatal(err)
	}
	for _, q := range []string{"INSERT INTO sign_off_list SELECT * FROM sign_off_list_derived WHERE site = 'bench'",
		"INSERT INTO qualification_list SELECT * FROM qualification_list_derived WHERE site = 'bench'",
		"INSERT INTO procedure_list SELECT * FROM procedure_list_derived WHERE site = 'bench'"} {
		if _, err := conn.Exec(ctx, q); err != nil {
			tb.Fatal(err)
		}
	}
	for _, t := range []string{"production_list", "sign_off_list", "qualification_list", "procedure_list"} {
		if _, err := conn.Exec(ctx, "VACUUM ANALYZE "+t); err != nil {
			tb.Fatal(err)
		}
	}
	return procs, pqrs, production
}

// otherListCases seeds the other record lists (seedOtherLists) and returns
// a case for each filter their Store calls take, first page and deep (90 %
// through the kind's leaves), each beside a raw page of the same filter from
// the record table.
func otherListCases(ctx context.Context, tb testing.TB, s *db.Store, conn *pgx.Conn, n int) []recordListCase {
	tb.Helper()
	const site = "bench"
	procs, pqrs, production := seedOtherLists(ctx, tb, conn, n)
	rawListIndexes(ctx, tb, conn)
	deep := func(list, kind string, count int) string {
		var idx int64
		if err := conn.QueryRow(ctx, "SELECT leaf_index FROM log_leaves WHERE site = 'bench' AND kind = $1 ORDER BY leaf_index OFFSET $2 LIMIT 1",
			kind, count*9/10).Scan(&idx); err != nil {
			tb.Fatal(err)
		}
		return db.SeqCursor(list, idx)
	}
	cols := func(table string) string {
		var c string
		if err := conn.QueryRow(ctx, `SELECT string_agg(column_name, ', ' ORDER BY ordinal_position)
			FROM information_schema.columns WHERE table_name = $1 AND table_schema = current_schema()`, table).Scan(&c); err != nil {
			tb.Fatal(err)
		}
		return "SELECT " + c + " FROM " + table + " WHERE site = $1 AND "
	}
	id := func(kind string, g int) uuid.UUID { return seedID("bench", kind, g) }
	at := func(g int) *time.Time { // the recording time seedOtherLists gives production record g
		step := time.Duration(2500*24*3600*1_000_000/int64(production)) * time.Microsecond
		t := time.Date(2019, 1, 1, 0, 0, 0, 0, time.UTC).Add(time.Duration(g) * step)
		return &t
	}
	day := func(d int) *db.Date {
		v := db.DateOf(time.Date(2019, 1, 1, 0, 0, 0, 0, time.UTC).AddDate(0, 0, d))
		return &v
	}
	procDeep := deep("procedures", "procedure", procs)
	pqrDeep := deep("qualification_records", "qualification_record", pqrs)
	prodDeep := deep("production_records", "production_record", production)
	signDeep := deep("sign-offs", "sign_off", procs+pqrs)
	page := func(list func(cursor string) (int, error), cursor string) func() (int, error) {
		return func() (int, error) { return list(cursor) }
	}
	procList := func(f db.ProcedureFilter) func(string) (int, error) {
		return func(cursor string) (int, error) {
			p, err := s.Procedures(ctx, site, f, cursor, 50)
			return len(p.Items), err
		}
	}
	pqrList := func(f db.QualificationRecordFilter) func(string) (int, error) {
		return func(cursor string) (int, error) {
			p, err := s.QualificationRecords(ctx, site, f, cursor, 50)
			return len(p.Items), err
		}
	}
	prodList := func(f db.ProductionRecordFilter) func(string) (int, error) {
		return func(cursor string) (int, error) {
			p, err := s.ProductionRecords(ctx, site, f, cursor, 50)
			return len(p.Items), err
		}
	}
	signList := func(f db.SignOffFilter) func(string) (int, error) {
		return func(cursor string) (int, error) {
			p, err := s.SignOffs(ctx, site, f, cursor, 50)
			return len(p.Items), err
		}
	}
	rawProc, rawPQR, rawProd, rawSign := cols("procedures"), cols("qualification_records"), cols("production_records"), cols("sign_offs")
	// PQR 19 has welder W89 (31·19 mod 250), welded on day 133; production record 19 has procedure 7 (13·19 mod 60) and welder W89.
	welder, pqrDay := "W89", 19*7%2500
	pqrLate := min(7*pqrs, 2500) * 9 / 10 // the last tenth of the PQRs' welding days
	// Deep in that filter's own PQRs (90 % through them in log order): deep in
	// the whole log, none of them is left at 100,000 coupons (PQR g is welded
	// on day 7g mod 2500, so the last tenth of the log's PQRs lies earlier).
	var pqrLateIdx int64
	if err := conn.QueryRow(ctx, `SELECT l.leaf_index FROM log_leaves l
		JOIN qualification_records q ON q.site = l.site AND q.id = l.record_id AND q.revision = l.revision
		WHERE l.site = 'bench' AND l.kind = 'qualification_record' AND q.welded_on >= $1
		ORDER BY l.leaf_index OFFSET (SELECT count(*) * 9 / 10 FROM qualification_records WHERE site = 'bench' AND welded_on >= $1) LIMIT 1`,
		day(pqrLate)).Scan(&pqrLateIdx); err != nil {
		tb.Fatal(err)
	}
	pqrLateDeep := db.SeqCursor("qualification_records", pqrLateIdx)
	prodProc, lateAt := id("p", 19*13%60), production*8/10
	signed := id("q", pqrs*9/10)
	var cases []recordListCase
	for _, c := range []struct {
		name   string
		list   func(string) (int, error)
		deep   string
		raw    string
		args   []any
		noDeep bool // the filter matches too few records for a deep page
	}{
		{"procedures/none", procList(db.ProcedureFilter{}), procDeep, rawProc + "true ORDER BY id LIMIT 50", nil, false},
		{"procedures/process", procList(db.ProcedureFilter{Process: "FCAW"}), procDeep, rawProc + "process = 'FCAW' ORDER BY id LIMIT 50", nil, false},
		{"procedures/status", procList(db.ProcedureFilter{Status: "superseded"}), procDeep, rawProc + "status = 'superseded' ORDER BY id LIMIT 50", nil, false},
		{"procedures/include_voided", procList(db.ProcedureFilter{IncludeVoided: true}), procDeep, rawProc + "true ORDER BY id LIMIT 50", nil, false},
		{"pqrs/none", pqrList(db.QualificationRecordFilter{}), pqrDeep, rawPQR + "true ORDER BY id LIMIT 50", nil, false},
		{"pqrs/process", pqrList(db.QualificationRecordFilter{Process: "FCAW"}), pqrDeep, rawPQR + "process = 'FCAW' ORDER BY id LIMIT 50", nil, false},
		{"pqrs/outcome", pqrList(db.QualificationRecordFilter{Outcome: "fail"}), pqrDeep, rawPQR + "outcome = 'fail' ORDER BY id LIMIT 50", nil, false},
		{"pqrs/welder_id", pqrList(db.QualificationRecordFilter{WelderID: welder}), "",
			rawPQR + "welder_id = $2 ORDER BY welded_on LIMIT 50", []any{welder}, true},
		{"pqrs/welded_from+to(week)", pqrList(db.QualificationRecordFilter{WeldedFrom: day(pqrDay), WeldedTo: day(pqrDay + 7)}), "",
			rawPQR + "welded_on >= $2 AND welded_on < $3 ORDER BY welded_on LIMIT 50", []any{day(pqrDay), day(pqrDay + 7)}, true},
		{"pqrs/welded_from(last tenth)", pqrList(db.QualificationRecordFilter{WeldedFrom: day(pqrLate)}), pqrLateDeep,
			rawPQR + "welded_on >= $2 ORDER BY welded_on LIMIT 50", []any{day(pqrLate)}, false},
		{"production/none", prodList(db.ProductionRecordFilter{}), prodDeep, rawProd + "true ORDER BY recorded_at LIMIT 50", nil, false},
		{"production/procedure_id", prodList(db.ProductionRecordFilter{ProcedureID: &prodProc}), prodDeep,
			rawProd + "procedure_id = $2 ORDER BY id LIMIT 50", []any{prodProc}, false},
		{"production/welder_id", prodList(db.ProductionRecordFilter{WelderID: welder}), prodDeep,
			rawProd + "welder_id = $2 ORDER BY recorded_at LIMIT 50", []any{welder}, false},
		{"production/procedure_id+welder_id", prodList(db.ProductionRecordFilter{ProcedureID: &prodProc, WelderID: welder}), prodDeep,
			rawProd + "procedure_id = $2 AND welder_id = $3 ORDER BY recorded_at LIMIT 50", []any{prodProc, welder}, false},
		{"production/weld_id", prodList(db.ProductionRecordFilter{WeldID: "J-19"}), "",
			rawProd + "weld_id = $2 ORDER BY weld_id LIMIT 50", []any{"J-19"}, true},
		{"production/recorded_from+to(late week)", prodList(db.ProductionRecordFilter{RecordedFrom: at(lateAt), RecordedTo: at(lateAt + production*7/2500)}), "",
			rawProd + "recorded_at >= $2 AND recorded_at < $3 ORDER BY recorded_at LIMIT 50", []any{at(lateAt), at(lateAt + production*7/2500)}, true},
		{"production/recorded_from(last tenth)", prodList(db.ProductionRecordFilter{RecordedFrom: at(production * 9 / 10)}), prodDeep,
			rawProd + "recorded_at >= $2 ORDER BY recorded_at LIMIT 50", []any{at(production * 9 / 10)}, false},
		{"production/flagged_only", prodList(db.ProductionRecordFilter{FlaggedOnly: true}), prodDeep,
			rawProd + "EXISTS (SELECT 1 FROM flags fl WHERE fl.site = production_records.site AND fl.subject_id = production_records.id) ORDER BY recorded_at LIMIT 50", nil, false},
		{"sign_offs/none", signList(db.SignOffFilter{}), signDeep, rawSign + "true ORDER BY id LIMIT 50", nil, false},
		{"sign_offs/record_kind", signList(db.SignOffFilter{RecordKind: "procedure"}), signDeep, rawSign + "record_kind = 'procedure' ORDER BY id LIMIT 50", nil, false},
		{"sign_offs/signed_by", signList(db.SignOffFilter{SignedBy: "E3"}), signDeep, rawSign + "signed_by = 'E3' ORDER BY id LIMIT 50", nil, false},
		{"sign_offs/record_id", signList(db.SignOffFilter{RecordID: &signed}), "",
			rawSign + "record_id = $2 ORDER BY record_revision LIMIT 50", []any{signed}, true},
	} {
		cases = append(cases, recordListCase{c.name, page(c.list, ""), c.raw, c.args})
		if !c.noDeep {
			cases = append(cases, recordListCase{c.name + "/deep", page(c.list, c.deep), c.raw, c.args})
		}
	}
	return cases
}
