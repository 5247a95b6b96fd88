package db

import (
	"context"

	"github.com/jackc/pgx/v5"
)

// The procedures list pages in log order through procedure_list (migration
// 000046): one row per logged procedure with its latest logged revision
// whole, that revision's log index and its logged sign-off (migration
// 000057), each filter (process, status, void mark) with an index (site,
// <column>, leaf_index). The sequencer rewrites a procedure's row in the
// transaction that gives one of its leaves, or a sign-off of it, its index
// (queueProcedureList), so the table
// agrees with the log a reader sees and a client following the cursor sees
// every procedure revision exactly once, as with the PQRs list.

// procedureListColumns are procedure_list's columns, named, in the order a
// page reads them (readSigned): the revision's, its sign-off's and its log
// index (migration 000057).
var procedureListColumns = procedures.columns() + ", " + signedColumns + ", leaf_index"

// procedureList is procedure_list, which the sequencer rewrites for a
// procedure's leaves and its sign-offs' (each row read by its key from
// procedure_list_derived, keyRefresh).
var procedureList = newSignedKey("procedure_list", SignProcedure, procedureListColumns)

// queueProcedureList adds to the sequencer's batch of writes the rewrite of
// the procedure_list rows of the procedures among the pass's leaves (out),
// and of those its sign-offs sign; none, no statement.
func queueProcedureList(b *pgx.Batch, site string, out *leafRows) { procedureList.queue(b, site, out) }

// Procedures lists current procedures after the cursor in log order: the
// page walked in log order through the filter's index of procedure_list
// (the page size written into the statement), each entry with its
// revision and sign-off.
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
		// The page is one walk of the key: each entry carries its row.
		sql := keyWalk("procedure_list", prefixed("k.", procedureListColumns), f.conds, pageLimit(limit))
		return readSigned[Procedure](ctx, s, site, procedureList.kinds, limit, sql, f.args)
	})
}

// RecheckProcedureList compares the site's procedure_list with
// procedure_list_derived (the same rows computed from the procedures and
// the log) and returns each difference; none means the list key is derived
// exactly.
func (s *Store) RecheckProcedureList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "procedure_list", "procedure_list_derived", procedureListColumns, "procedure")
}
