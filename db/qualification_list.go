package db

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// The PQRs list pages in log order through qualification_list (migration
// 000045): one row per logged PQR with its latest logged revision whole,
// that revision's log index and logged sign-off (migration 000057) and its
// welding month, each filter (process, welder, outcome, welding day and
// month, void mark) with an index (site, <column>, leaf_index). The
// sequencer rewrites a PQR's row in the transaction that gives one of its
// leaves, or a sign-off of it, its index
// (queueQualificationList), so the table agrees with the log a reader sees
// and a client following the cursor sees every PQR revision exactly once,
// as with the sections list.

// qualificationListColumns are qualification_list's columns, named, in the
// order a page reads them (readSigned): the revision's, its sign-off's and
// its log index (migration 000057); the table also has the welding month
// its day walks use (qualificationKeyColumns).
var qualificationListColumns = qualificationRecords.columns() + ", " + signedColumns + ", leaf_index"

// qualificationList is qualification_list, which the sequencer rewrites for
// a PQR's leaves and its sign-offs' (each row read by its key from
// qualification_list_derived, whatever the statistics say of the site:
// keyRefresh).
var qualificationList = newSignedKey("qualification_list", SignQualificationRecord, qualificationKeyColumns)

// qualificationKeyColumns are all of qualification_list's columns, named.
var qualificationKeyColumns = qualificationListColumns + ", welded_month"

// queueQualificationList adds to the sequencer's batch of writes the
// rewrite of the qualification_list rows of the PQRs among the pass's
// leaves (out), and of those its sign-offs sign; none, no statement.
func queueQualificationList(b *pgx.Batch, site string, out *leafRows) {
	qualificationList.queue(b, site, out)
}

// listQualificationRecords returns one page of current PQRs matching qf in
// log order from index from: the page walked in log order through the
// filter's index of qualification_list (the page size written into the
// statement), each entry with its revision and sign-off. A welding-day range
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
	// A walk of one index is the page: each entry carries its row. A
	// merge of walks reads each head's key alone, then the page's rows by
	// key.
	sql := keyWalk("qualification_list", prefixed("k.", qualificationListColumns), f.conds, lim)
	if qf.WelderID == "" && (qf.WeldedFrom != nil || qf.WeldedTo != nil) {
		walk := func(conds []string) string {
			return keyWalk("qualification_list", "k.id, k.revision, k.leaf_index", conds, lim)
		}
		w := splitDays(qf.WeldedFrom, qf.WeldedTo)
		keys := f.rangeKeys(w, "qualification_list", "welded_on", "welded_month", "b.id, b.revision, b.leaf_index", lim, walk)
		sql = `SELECT ` + prefixed("q.", qualificationListColumns) + ` FROM (` + keys + `) k
		` + rowByID("qualification_list", qualificationListColumns, "q", "k") + `
		ORDER BY k.leaf_index`
	}
	return readSigned[QualificationRecord](ctx, s, site, qualificationList.kinds, limit, sql, f.args)
}

// RecheckQualificationList compares the site's qualification_list with
// qualification_list_derived (the same rows computed from the PQRs and the
// log) and returns each difference; none means the list key is derived
// exactly.
func (s *Store) RecheckQualificationList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "qualification_list", "qualification_list_derived", qualificationKeyColumns, "PQR")
}
