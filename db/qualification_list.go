package db

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// The PQRs list pages in log order through qualification_list (migration
// 000045): one row per logged PQR with its latest logged revision, that
// revision's log index and the columns the list filters on (process,
// welder, outcome, welding day and month, void mark), each filter with an
// index (site, <column>, leaf_index). The sequencer rewrites a PQR's row in
// the transaction that gives one of its leaves its index
// (queueQualificationList), so the table agrees with the log a reader sees
// and a client following the cursor sees every PQR revision exactly once,
// as with the sections list.

// qualificationListColumns are qualification_list's columns, named.
const qualificationListColumns = "site, id, revision, leaf_index, voided, process, welder_id, outcome, welded_on, welded_month"

// qualificationListRefresh writes the qualification_list rows of the PQRs
// $2 at site $1 (an id may repeat): each PQR read from
// qualification_list_derived by its key, one seek per id, whatever the
// statistics say of the site (keyRefresh).
var qualificationListRefresh = keyRefresh("qualification_list", qualificationListColumns)

// queueQualificationList adds to the sequencer's batch of writes the
// rewrite of the qualification_list rows of the PQRs among the pass's
// leaves (out); none, no statement.
func queueQualificationList(b *pgx.Batch, site string, out *leafRows) {
	queueKeyRewrite(b, site, out, qualificationRecords.entity, "qualification_list", qualificationListRefresh)
}

// listQualificationRecords returns one page of current PQRs matching qf in
// log order from index from: the page's keys walked in log order through
// the filter's index of qualification_list (the page size written into the
// statement), then each revision read by its key with its sign-off, in one
// statement. A welding-day range
// without a welder walks each day of the range (of its partial months when
// it spans more than maxDayWalk days) and each whole month between, up to a
// page each, and merges the heads: at most (days + months) × limit index
// entries, none outside the range, whatever the page depth.
func (s *Store) listQualificationRecords(ctx context.Context, site string, qf QualificationRecordFilter, from int64, limit int) ([]QualificationRecord, int64, error) {
	f := newFilter()
	f.args[0], f.args[1] = site, from
	if !qf.IncludeVoided {
		f.add("NOT k.voided")
	}
	if qf.Process != "" {
		f.add("k.process = ?", qf.Process)
	}
	if qf.Outcome != "" {
		f.add("k.outcome = ?", qf.Outcome)
	}
	if qf.WelderID != "" {
		f.add("k.welder_id = ?", qf.WelderID)
	}
	if qf.WeldedFrom != nil {
		f.add("k.welded_on >= ?", *qf.WeldedFrom)
	}
	if qf.WeldedTo != nil {
		f.add("k.welded_on < ?", *qf.WeldedTo)
	}
	lim := pageLimit(limit)
	walk := func(conds []string) string {
		return keyWalk("qualification_list", "k.id, k.revision, k.leaf_index", conds, lim)
	}
	keys := walk(f.conds)
	if qf.WelderID == "" && (qf.WeldedFrom != nil || qf.WeldedTo != nil) {
		w := splitDays(qf.WeldedFrom, qf.WeldedTo)
		keys = f.rangeKeys(w, "qualification_list", "welded_on", "welded_month", "b.id, b.revision, b.leaf_index", lim, walk)
	}
	sql := `SELECT ` + prefixed("q.", qualificationRecords.columns()) + `, ` + signedColumns + `, k.leaf_index
		FROM (` + keys + `) k
		` + revisionByKey(qualificationRecords, "q") + `
		` + signedJoin(SignQualificationRecord, "k") + `
		ORDER BY k.leaf_index`
	return readSigned[QualificationRecord](ctx, s, site, sql, f.args)
}

// RecheckQualificationList compares the site's qualification_list with
// qualification_list_derived (the same rows computed from the PQRs and the
// log) and returns each difference; none means the list key is derived
// exactly.
func (s *Store) RecheckQualificationList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "qualification_list", "qualification_list_derived", qualificationListColumns, "PQR")
}
