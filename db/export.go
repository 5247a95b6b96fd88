package db

import (
	"context"
	"encoding/json"
	"fmt"
	"reflect"
	"strings"
	"sync/atomic"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db/logfmt"
)

// ExportSummary closes an export: how many record revisions and leaves it
// held, and the size of the signed checkpoint it carries.
type ExportSummary struct {
	Records        int64  `json:"record_revisions"`
	Leaves         int64  `json:"leaves"`
	Unlogged       int64  `json:"unlogged"`
	CheckpointSize int64  `json:"checkpoint_size"`
	Root           []byte `json:"root"`
}

// Export streams, inside one repeatable-read snapshot so the parts agree: a
// header naming the site, the latest signed checkpoint, every revision of
// every record in its readable form (procedures, qualification records,
// coupons, measurements, calibrations and their activations, rule sets,
// qualified ranges, production batches and records, sign-offs; procedure, PQR
// and calibration revisions carry their sign-off), every leaf of the log
// in index order with its fact encoded again from the stored row, and every
// stored fact that is not in the log. The line kinds are in logfmt. It
// reads from the standby while one is set (UseStandby) and keeps up, else
// from the primary; NoteReadSource tells which. Each line's value is
// emit's to keep: a record (a struct, or its JSON as a json.Marshaler), a
// leaf as a logfmt.ExportLeaf, an Unlogged, the header or checkpoint.
func (s *Store) Export(ctx context.Context, site string, emit func(kind string, v any) error) (ExportSummary, error) {
	return s.export(ctx, s.longRead(ctx), site, true, exportSink{emit: emit})
}

// ExportTo writes the export Export streams to out, the same lines byte
// for byte, as the export endpoint does: the lines the export can write
// itself (coupon records, leaves) go from the rows' bytes straight into
// out's line buffer, with no value made for them. Flushing out is the
// caller's.
func (s *Store) ExportTo(ctx context.Context, site string, out *ExportWriter) (ExportSummary, error) {
	return s.export(ctx, s.longRead(ctx), site, true, exportSink{emit: out.Line, out: out})
}

// exportSink takes an export's lines: each as a value through emit, or,
// when out is set, the lines the export writes itself straight into out
// (emit then writes the others to out).
type exportSink struct {
	emit func(kind string, v any) error
	out  *ExportWriter
}

// exportHook, when set, runs between an export's records and its leaves
// (see SetExportHookForTest).
var exportHook atomic.Pointer[func(site string)]

func (s *Store) export(ctx context.Context, pool *pgxpool.Pool, site string, records bool, sink exportSink) (ExportSummary, error) {
	emit := sink.emit
	var sum ExportSummary
	tx, err := pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return sum, fmt.Errorf("db: export: %w", err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // read-only
	if err := emit(logfmt.LineHeader, logfmt.ExportHeader{Site: site, Format: 2}); err != nil {
		return sum, err
	}
	var note string
	err = tx.QueryRow(ctx, `SELECT size, root, note FROM log_checkpoints WHERE site = $1 ORDER BY size DESC LIMIT 1`, site).
		Scan(&sum.CheckpointSize, &sum.Root, &note)
	switch {
	case err == nil:
		if err := emit(logfmt.LineCheckpoint, logfmt.ExportCheckpoint{Note: note}); err != nil {
			return sum, err
		}
	case err != pgx.ErrNoRows:
		return sum, fmt.Errorf("db: export checkpoint: %w", err)
	}
	if records {
		if sum.Records, err = exportRecords(ctx, tx, site, sink); err != nil {
			return sum, err
		}
	}
	if h := exportHook.Load(); h != nil {
		(*h)(site)
	}
	var claimed map[string]*unclaimed
	if sum.Leaves, claimed, err = exportLeaves(ctx, pool, tx, site, sink); err != nil {
		return sum, fmt.Errorf("db: export leaves: %w", err)
	}
	if sum.Unlogged, err = s.exportUnlogged(ctx, tx, site, claimed, emit); err != nil {
		return sum, fmt.Errorf("db: export unlogged: %w", err)
	}
	return sum, nil
}

// exportRecords emits every revision of every record in its readable form.
func exportRecords(ctx context.Context, tx pgx.Tx, site string, sink exportSink) (int64, error) {
	emit := sink.emit
	steps := []func() (int64, error){
		func() (int64, error) { return exportTable[Procedure](ctx, tx, procedures, site, sink) },
		func() (int64, error) {
			return exportTable[QualificationRecord](ctx, tx, qualificationRecords, site, sink)
		},
		func() (int64, error) { return exportTable[Coupon](ctx, tx, coupons, site, sink) },
		func() (int64, error) { return exportTable[Measurement](ctx, tx, measurements, site, sink) },
	}
	// The remaining tables are exported as stored, one JSON object per row.
	for _, r := range []struct {
		name, kind string
		builtins   bool // also rows of the built-in site ''
	}{
		{"calibrations", "calibration", false}, {"calibration_activations", "calibration_activation", false},
		{"rule_sets", "rule_set", true}, {"procedure_ranges", "procedure_ranges", false},
		{"production_batches", "production_batch", false}, {"production_records_all", "production_record", false},
		{"sign_offs", "sign_off", false}, {"coupon_plans", "coupon_plan", false},
	} {
		steps = append(steps, func() (int64, error) { return exportRaw(ctx, tx, r.name, r.kind, site, r.builtins, emit) })
	}
	var total int64
	for _, step := range steps {
		n, err := step()
		if err != nil {
			return total, err
		}
		total += n
	}
	return total, nil
}

// exportTable emits every revision of one table's records at the site, in
// storage order: ordering by id would read the table through its index,
// one random page per row, several times the cost of the sequential read.
func exportTable[T any](ctx context.Context, tx pgx.Tx, t table, site string, sink exportSink) (int64, error) {
	emit := sink.emit
	if _, sg := any(new(T)).(signable); !sg { // a signed record carries its sign-off: read below
		if n, ok, err := exportTableCopy[T](ctx, tx, t, site, sink); ok || err != nil {
			return n, err
		}
	}
	signed, err := signOffsOf(ctx, tx, site) // read first: the connection serves one query at a time
	if err != nil {
		return 0, err
	}
	rows, err := tx.Query(ctx, "SELECT "+t.columns()+" FROM "+t.name+" WHERE site = $1", site)
	if err != nil {
		return 0, fmt.Errorf("db: export %s: %w", t.name, err)
	}
	defer rows.Close()
	scan, err := structScanner[T](rows.FieldDescriptions())
	if err != nil {
		return 0, fmt.Errorf("db: export %s: %w", t.name, err)
	}
	var enc *recordEncoder
	if _, sg := any(new(T)).(signable); !sg { // a signed record carries its sign-off: encoded as before
		enc = newRecordEncoder(reflect.TypeFor[T](), rows.FieldDescriptions())
	}
	var n int64
	for rows.Next() {
		if enc != nil {
			if b, ok := enc.append(make([]byte, 0, 512), rows.RawValues()); ok {
				if err := emit(t.entity, recordJSON(b)); err != nil {
					return n, err
				}
				n++
				continue
			}
		}
		var v T
		if err := scan(rows, &v); err != nil {
			return n, err
		}
		if sg, ok := any(&v).(signable); ok {
			kind, id, rev, slot := sg.signOffSlot()
			*slot = signed[signOffKey{kind, id, rev}]
		}
		if err := emit(t.entity, v); err != nil {
			return n, err
		}
		n++
	}
	return n, rows.Err()
}

// exportRaw emits every row of one table at the site as its stored JSON
// form, in storage order.
func exportRaw(ctx context.Context, tx pgx.Tx, name, kind, site string, builtins bool, emit func(string, any) error) (int64, error) {
	sites := []string{site}
	if builtins {
		sites = append(sites, "")
	}
	rows, err := tx.Query(ctx, "SELECT to_jsonb(r) FROM "+name+" r WHERE site = ANY($1)", sites)
	if err != nil {
		return 0, fmt.Errorf("db: export %s: %w", name, err)
	}
	defer rows.Close()
	var n int64
	for rows.Next() {
		var v json.RawMessage
		if err := rows.Scan(&v); err != nil {
			return n, err
		}
		if err := emit(kind, v); err != nil {
			return n, err
		}
		n++
	}
	return n, rows.Err()
}

// quoteLiteral quotes text for SQL (standard_conforming_strings is on).
func quoteLiteral(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }
