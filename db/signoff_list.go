package db

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// The sign-offs list pages in log order through sign_off_list (migration
// 000044): one row per logged sign-off with its log index and the columns
// the list filters on (kind of record, record, signer), each with an index
// (site, <column>, leaf_index). A sign-off is one revision with one leaf:
// the sequencer writes its row in the transaction that gives the leaf its
// index (queueSignOffList), so the table agrees with the log a reader sees
// and a client following the cursor sees every sign-off exactly once.

// signOffListColumns are sign_off_list's columns, named.
const signOffListColumns = "site, id, leaf_index, record_kind, record_id, signed_by"

// SignOffListRefresh writes the sign_off_list rows of the sign-offs $2 at
// site $1, logged at the indexes $3; each sign-off is read by its key.
const SignOffListRefresh = `INSERT INTO sign_off_list (` + signOffListColumns + `)
	SELECT s.site, s.id, l.leaf_index, s.record_kind, s.record_id, s.signed_by
	FROM unnest($2::uuid[], $3::bigint[]) AS l(id, leaf_index)
	JOIN sign_offs s ON s.site = $1 AND s.id = l.id`

// queueSignOffList adds to the sequencer's batch of writes the rows of the
// sign-offs among the pass's leaves (out, from index size on); none, no
// statement.
func queueSignOffList(b *pgx.Batch, site string, out *leafRows, size uint64) {
	if ids, at := out.ofKind("sign_off", size); len(ids) > 0 {
		b.Queue(SignOffListRefresh, site, ids, at)
	}
}

// SignOffs lists a site's logged sign-offs in log order after the cursor:
// the page's keys walked in log order through the filter's index of
// sign_off_list (the page size written into the statement), then each
// sign-off read by its key.
func (s *Store) SignOffs(ctx context.Context, site string, f SignOffFilter, cursor string, limit int) (Page[SignOff], error) {
	return logPage("sign-offs", "sign-offs", cursor, limit, func(from int64, limit int) ([]SignOff, int64, error) {
		fl := newFilter()
		fl.args[0], fl.args[1] = site, from
		if f.RecordKind != "" {
			fl.add("k.record_kind = ?", f.RecordKind)
		}
		if f.RecordID != nil {
			fl.add("k.record_id = ?", *f.RecordID)
		}
		if f.SignedBy != "" {
			fl.add("k.signed_by = ?", f.SignedBy)
		}
		sql := `SELECT ` + prefixed("s.", signOffColumns) + `, k.leaf_index
		FROM (` + keyWalk("sign_off_list", "k.id, k.leaf_index", fl.conds, pageLimit(limit)) + `) k
		` + rowByID("sign_offs", signOffColumns, "s", "k") + `
		ORDER BY k.leaf_index`
		return readIndexed[SignOff](ctx, s, site, listKinds{signOffTable.entity}, limit, sql, fl.args)
	})
}

// RecheckSignOffList compares the site's sign_off_list with
// sign_off_list_derived (the same rows computed from the sign-offs and the
// log) and returns each difference; none means the list key is derived
// exactly.
func (s *Store) RecheckSignOffList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "sign_off_list", "sign_off_list_derived", signOffListColumns, "sign-off")
}
