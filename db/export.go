package db

import (
	"context"
	"encoding/json"
	"fmt"

	"github.com/jackc/pgx/v5"
)

// ExportSummary closes an export: how many revisions and events it held and
// the hash at the head of the audit chain, so a copy can be checked later.
type ExportSummary struct {
	Records   int64  `json:"record_revisions"`
	Events    int64  `json:"audit_events"`
	ChainHead []byte `json:"chain_head"`
}

// exportedEvent is an audit event as exported: JSON encoders re-space the
// payload object, so the exact text that entered the hash travels beside it.
type exportedEvent struct {
	AuditEvent
	PayloadText string `json:"payload_text"`
}

// Export streams every revision of every record of a site (procedures,
// qualification records, coupons, measurements, calibrations and their
// activations, rule sets, qualified ranges, production batches and records,
// users and sign-offs; procedure, PQR and calibration revisions carry their sign-off),
// then the site's audit chain,
// to emit, inside one repeatable-read snapshot so the parts agree.
func (s *Store) Export(ctx context.Context, site string, emit func(kind string, v any) error) (ExportSummary, error) {
	var sum ExportSummary
	tx, err := s.long.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return sum, fmt.Errorf("db: export: %w", err)
	}
	defer tx.Rollback(ctx) //nolint:errcheck // read-only
	steps := []func() (int64, error){
		func() (int64, error) { return exportTable[Procedure](ctx, tx, procedures, site, emit) },
		func() (int64, error) {
			return exportTable[QualificationRecord](ctx, tx, qualificationRecords, site, emit)
		},
		func() (int64, error) { return exportTable[Coupon](ctx, tx, coupons, site, emit) },
		func() (int64, error) { return exportTable[Measurement](ctx, tx, measurements, site, emit) },
	}
	// The remaining tables are exported as stored, one JSON object per row.
	for _, r := range []struct {
		name, kind string
		builtins   bool // also rows of the built-in site ''
	}{
		{"calibrations", "calibration", false}, {"calibration_activations", "calibration_activation", false},
		{"rule_sets", "rule_set", true}, {"procedure_ranges", "procedure_ranges", false},
		{"production_batches", "production_batch", false}, {"production_records", "production_record", false},
		{"api_users", "user", false}, {"sign_offs", "sign_off", false},
	} {
		steps = append(steps, func() (int64, error) { return exportRaw(ctx, tx, r.name, r.kind, site, r.builtins, emit) })
	}
	for _, step := range steps {
		n, err := step()
		if err != nil {
			return sum, err
		}
		sum.Records += n
	}
	rows, err := tx.Query(ctx, `
		SELECT site, seq, at, actor, action, entity, entity_id, revision, reason, payload, prev_hash, hash
		FROM audit_events WHERE site = $1 ORDER BY seq`, site)
	if err != nil {
		return sum, fmt.Errorf("db: export audit: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		ev, err := pgx.RowToStructByName[AuditEvent](rows)
		if err != nil {
			return sum, err
		}
		if err := emit("audit_event", exportedEvent{ev, string(ev.Payload)}); err != nil {
			return sum, err
		}
		sum.Events++
		sum.ChainHead = ev.Hash
	}
	return sum, rows.Err()
}

// exportTable emits every revision of one table's records at the site, by id and revision.
func exportTable[T any](ctx context.Context, tx pgx.Tx, t table, site string, emit func(string, any) error) (int64, error) {
	signed, err := signOffsOf(ctx, tx, site) // read first: the connection serves one query at a time
	if err != nil {
		return 0, err
	}
	rows, err := tx.Query(ctx, "SELECT "+t.columns()+" FROM "+t.name+" WHERE site = $1 ORDER BY id, revision", site)
	if err != nil {
		return 0, fmt.Errorf("db: export %s: %w", t.name, err)
	}
	defer rows.Close()
	var n int64
	for rows.Next() {
		v, err := pgx.RowToStructByName[T](rows)
		if err != nil {
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

// exportRaw emits every row of one table at the site as its stored JSON form.
func exportRaw(ctx context.Context, tx pgx.Tx, name, kind, site string, builtins bool, emit func(string, any) error) (int64, error) {
	sites := []string{site}
	if builtins {
		sites = append(sites, "")
	}
	rows, err := tx.Query(ctx, "SELECT to_jsonb(r) FROM "+name+" r WHERE site = ANY($1) ORDER BY id", sites)
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
