package db

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// The procedures list pages in log order through procedure_list (migration
// 000046): one row per logged procedure with its latest logged revision,
// that revision's log index and the columns the list filters on (process,
// status, void mark), each filter with an index (site, <column>,
// leaf_index). The sequencer rewrites a procedure's row in the transaction
// that gives one of its leaves its index (queueProcedureList), so the table
// agrees with the log a reader sees and a client following the cursor sees
// every procedure revision exactly once, as with the PQRs list.

// procedureListColumns are procedure_list's columns, named.
const procedureListColumns = "site, id, revision, leaf_index, voided, process, status"

// procedureListRefresh writes the procedure_list rows of the procedures $2
// at site $1 (an id may repeat), each read by its key (keyRefresh).
var procedureListRefresh = keyRefresh("procedure_list", procedureListColumns)

// queueProcedureList adds to the sequencer's batch of writes the rewrite of
// the procedure_list rows of the procedures among the pass's leaves (out);
// none, no statement.
func queueProcedureList(b *pgx.Batch, site string, out *leafRows) {
	queueKeyRewrite(b, site, out, procedures.entity, "procedure_list", procedureListRefresh)
}

// Procedures lists current procedures after the cursor in log order: the
// page's keys walked in log order through the filter's index of
// procedure_list (the page size written into the statement), then each
// revision read by its key with its sign-off, in one statement.
func (s *Store) Procedures(ctx context.Context, site string, pf ProcedureFilter, cursor string, limit int) (Page[Procedure], error) {
	return logPage(procedures.name, procedures.entity, cursor, limit, func(from int64, limit int) ([]Procedure, int64, error) {
		f := newFilter()
		f.args[0], f.args[1] = site, from
		if !pf.IncludeVoided {
			f.add("NOT k.voided")
		}
		if pf.Process != "" {
			f.add("k.process = ?", pf.Process)
		}
		if pf.Status != "" {
			f.add("k.status = ?", pf.Status)
		}
		sql := `SELECT ` + prefixed("p.", procedures.columns()) + `, ` + signedColumns + `, k.leaf_index
		FROM (` + keyWalk("procedure_list", "k.id, k.revision, k.leaf_index", f.conds, pageLimit(limit)) + `) k
		` + revisionByKey(procedures, "p") + `
		` + signedJoin(SignProcedure, "k") + `
		ORDER BY k.leaf_index`
		return readSigned[Procedure](ctx, s, site, sql, f.args)
	})
}

// RecheckProcedureList compares the site's procedure_list with
// procedure_list_derived (the same rows computed from the procedures and
// the log) and returns each difference; none means the list key is derived
// exactly.
func (s *Store) RecheckProcedureList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "procedure_list", "procedure_list_derived", procedureListColumns, "procedure")
}
