package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// SignOff is an engineer's statement that one revision of a record is right:
// who, when, what they state, and the leaf hash under which exactly that
// revision entered the site's record log (SignedHashOf "log_leaf"; an
// inclusion proof of the revision shows the same hash). It belongs to that
// revision only: a correction is a new revision with no sign-off until an
// engineer signs it again.
type SignOff struct {
	Site           string    `db:"site" json:"site"`
	ID             uuid.UUID `db:"id" json:"id"`
	RecordKind     string    `db:"record_kind" json:"record_kind"`
	RecordID       uuid.UUID `db:"record_id" json:"record_id"`
	RecordRevision int       `db:"record_revision" json:"record_revision"`
	Statement      string    `db:"statement" json:"statement"`
	SignedHash     []byte    `db:"signed_hash" json:"signed_hash"`
	SignedHashOf   string    `db:"signed_hash_of" json:"signed_hash_of"`
	SignedBy       string    `db:"signed_by" json:"signed_by"`
	SignerRole     string    `db:"signer_role" json:"signer_role"`
	SignedAt       time.Time `db:"signed_at" json:"signed_at"`
}

// Kinds of record an engineer signs off.
const (
	SignQualificationRecord = "qualification_record"
	SignProcedure           = "procedure"
	SignCalibration         = "calibration"
)

// signKinds maps a kind to its table; calibrations have no voided column
// (they are never corrected or voided: a new fit is a new calibration).
var signKinds = map[string]struct {
	t      table
	voided string
}{
	SignQualificationRecord: {qualificationRecords, "voided"},
	SignProcedure:           {procedures, "voided"},
	SignCalibration:         {table{name: "calibrations", entity: "calibration"}, "false"},
}

var signOffTable = table{name: "sign_offs", entity: "sign_off"}

func init() {
	RegisterLeafKind(LeafKind{Kind: "sign_off", Version: 1, Table: "sign_offs", Columns: []string{
		"site", "id", "record_kind", "record_id", "record_revision", "statement", "signed_hash",
		"signed_hash_of", "signed_by", "signer_role", "signed_at"}})
}

const signOffColumns = `site, id, record_kind, record_id, record_revision, statement, signed_hash,
	signed_hash_of, signed_by, signer_role, signed_at`

// SignOffRequest is what an engineer signs: the revision they reviewed (it
// must be the record's current one) and their statement.
type SignOffRequest struct {
	Revision  int
	Statement string
}

// SignOffRecord stores an engineer's sign-off of the current revision of a
// record of the given kind, with the log hash of that revision, and appends
// the sign-off to the log, in one transaction. It refuses a revision that is
// not the current one or is voided (ErrConflict, ErrVoided), a revision
// signed already (DuplicateError naming that sign-off), and any role but
// engineer (ErrForbidden).
func (s *Store) SignOffRecord(ctx context.Context, a Actor, kind string, id uuid.UUID, r SignOffRequest) (SignOff, error) {
	k, ok := signKinds[kind]
	switch {
	case !ok:
		return SignOff{}, &FieldError{Field: "record_kind", Reason: "want qualification_record, procedure or calibration"}
	case a.Role != RoleEngineer:
		return SignOff{}, fmt.Errorf("db: sign off: role %s: %w", a.Role, ErrForbidden)
	case strings.TrimSpace(r.Statement) == "":
		return SignOff{}, &FieldError{Field: "statement", Reason: "say what you sign: the statement must not be empty"}
	case r.Revision < 1:
		return SignOff{}, &FieldError{Field: "revision", Reason: "the revision you reviewed (1 or more)"}
	}
	sid, err := uuid.NewV7()
	if err != nil {
		return SignOff{}, err
	}
	so := SignOff{Site: a.Site, ID: sid, RecordKind: kind, RecordID: id, RecordRevision: r.Revision,
		Statement: r.Statement, SignedHashOf: "log_leaf", SignedBy: a.Name, SignerRole: a.Role, SignedAt: s.now()}
	err = s.write(ctx, "sign off "+kind+" "+id.String(),
		func(tx pgx.Tx) error { return checkSignable(ctx, tx, k.t, k.voided, a.Site, id, r.Revision) },
		func(tx pgx.Tx) (err error) {
			so.SignedHash, err = revisionLeafHash(ctx, tx, a.Site, k.t.entity, id, r.Revision)
			return err
		},
		func(tx pgx.Tx) error {
			var held uuid.UUID
			err := tx.QueryRow(ctx, `SELECT id FROM sign_offs WHERE site = $1 AND record_kind = $2 AND record_id = $3 AND record_revision = $4`,
				a.Site, kind, id, r.Revision).Scan(&held)
			if err == nil {
				return &DuplicateError{Field: "revision", ExistingID: held,
					Reason: fmt.Sprintf("%s %s revision %d is signed off already (sign-off %s)", kind, id, r.Revision, held)}
			}
			if !errors.Is(err, pgx.ErrNoRows) {
				return err
			}
			_, err = tx.Exec(ctx, `INSERT INTO sign_offs (`+signOffColumns+`) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`,
				so.Site, so.ID, so.RecordKind, so.RecordID, so.RecordRevision, so.Statement, so.SignedHash,
				so.SignedHashOf, so.SignedBy, so.SignerRole, so.SignedAt)
			return mapError(err)
		},
		s.logged(ctx, signOffTable, Meta{Site: a.Site, ID: sid, Revision: 1, CreatedAt: so.SignedAt, CreatedBy: a.Name}, actionCreate),
	)
	if err != nil {
		return SignOff{}, err
	}
	return so, nil
}

// revisionLeafHash is the leaf hash under which a record revision entered the
// site's log: from its leaf, or its pending leaf before the sequencer has
// integrated it. A revision stored before the log existed may wait as a
// pending leaf without a hash; it is encoded from the stored row with the
// pending leaf's version, exactly as the sequencer will.
func revisionLeafHash(ctx context.Context, tx pgx.Tx, site, kind string, id uuid.UUID, rev int) ([]byte, error) {
	var h []byte
	var version int
	err := tx.QueryRow(ctx, `
		SELECT leaf_hash, version FROM log_leaves WHERE `+leafOfRevision+`
		UNION ALL
		SELECT leaf_hash, version FROM log_pending WHERE site = $1 AND kind = $2 AND record_id = $3 AND revision = $4
		UNION ALL
		SELECT substring(leaf_hashes FROM 32 * (array_position(record_ids, $3::uuid) - 1) + 1 FOR 32), version
		FROM log_pending WHERE site = $1 AND kind = $2 AND revision = $4 AND $3::uuid = ANY (record_ids)
		LIMIT 1`, site, kind, id, rev).Scan(&h, &version)
	switch {
	case errors.Is(err, pgx.ErrNoRows):
		return nil, fmt.Errorf("%w: %s %s revision %d is not in the log", ErrConflict, kind, id, rev)
	case err != nil || h != nil:
		return h, err
	}
	k, err := leafKind(kind, version)
	if err != nil {
		return nil, err
	}
	rows, _ := tx.Query(ctx, k.selectRow(), site, id, rev)
	defer rows.Close()
	if !rows.Next() {
		return nil, fmt.Errorf("%s %s revision %d: %w", kind, id, rev, ErrNotFound)
	}
	f, err := factOf(k, rows)
	if err != nil {
		return nil, err
	}
	return f.LeafHash(), nil
}

// checkSignable locks the record against corrections and checks that rev is
// its current, non-voided revision.
func checkSignable(ctx context.Context, tx pgx.Tx, t table, voided, site string, id uuid.UUID, rev int) error {
	if err := lockRecord(ctx, tx, id); err != nil {
		return err
	}
	var latest int
	var isVoided bool
	err := tx.QueryRow(ctx, `SELECT revision, `+voided+` FROM `+t.name+`
		WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1`, site, id).Scan(&latest, &isVoided)
	switch {
	case errors.Is(err, pgx.ErrNoRows):
		return fmt.Errorf("%s %s: %w", t.entity, id, ErrNotFound)
	case err != nil:
		return err
	case isVoided:
		return fmt.Errorf("%s %s: %w", t.entity, id, ErrVoided)
	case rev != latest:
		return fmt.Errorf("%w: %s %s is at revision %d; sign the current revision, not %d", ErrConflict, t.entity, id, latest, rev)
	}
	return nil
}

// SignOffByID reads one sign-off.
func (s *Store) SignOffByID(ctx context.Context, site string, id uuid.UUID) (SignOff, error) {
	rows, _ := s.pool.Query(ctx, `SELECT `+signOffColumns+` FROM sign_offs WHERE site = $1 AND id = $2`, site, id)
	so, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[SignOff])
	if errors.Is(err, pgx.ErrNoRows) {
		return so, fmt.Errorf("db: sign-off %s: %w", id, ErrNotFound)
	}
	return so, err
}

// SignOffFilter selects sign-offs; zero fields do not filter.
type SignOffFilter struct {
	RecordKind string
	RecordID   *uuid.UUID
	SignedBy   string
}

// prefixed qualifies each column of a comma-separated list with p.
func prefixed(p, columns string) string {
	cols := strings.Split(columns, ",")
	for i, c := range cols {
		cols[i] = p + strings.TrimSpace(c)
	}
	return strings.Join(cols, ", ")
}

// signable is a record revision that shows its sign-off: qualification
// records, procedures and calibrations.
type signable interface {
	signOffSlot() (kind string, id uuid.UUID, rev int, slot **SignOff)
}

// attachSignOffs fills the sign-off of each item that is signable, from one
// query; items of other kinds are left alone.
func attachSignOffs[T any](ctx context.Context, q querier, site string, items []T) error {
	if len(items) == 0 {
		return nil
	}
	if _, ok := any(&items[0]).(signable); !ok {
		return nil
	}
	kind, _, _, _ := any(&items[0]).(signable).signOffSlot()
	ids := make([]uuid.UUID, len(items))
	for i := range items {
		_, ids[i], _, _ = any(&items[i]).(signable).signOffSlot()
	}
	rows, _ := q.Query(ctx, `SELECT `+signOffColumns+` FROM sign_offs
		WHERE site = $1 AND record_kind = $2 AND record_id = ANY($3)`, site, kind, ids)
	found, err := pgx.CollectRows(rows, pgx.RowToStructByName[SignOff])
	if err != nil {
		return fmt.Errorf("db: read sign-offs: %w", err)
	}
	type key struct {
		id  uuid.UUID
		rev int
	}
	by := make(map[key]*SignOff, len(found))
	for i := range found {
		by[key{found[i].RecordID, found[i].RecordRevision}] = &found[i]
	}
	for i := range items {
		_, id, rev, slot := any(&items[i]).(signable).signOffSlot()
		*slot = by[key{id, rev}]
	}
	return nil
}

// signedColumns are the columns of a signed list key (procedure_list,
// qualification_list) that a page of signable records reads before each
// row's log index: the logged sign-off of the row's revision, null when it
// is unsigned (migration 000057).
const signedColumns = "sign_off_id, sign_off_statement, sign_off_hash, sign_off_hash_of, sign_off_by, sign_off_role, sign_off_at"

// readSigned reads one page of signable records with readPage, each row
// ending with signedColumns and its log index, and returns the items, each
// with its sign-off, and the last one's index: the page and its sign-offs
// in one statement.
func readSigned[T any, P interface {
	*T
	signable
}](ctx context.Context, s *Store, site string, kinds listKinds, limit int, sql string, args []any) ([]T, int64, error) {
	var (
		id                      *uuid.UUID
		statement, of, by, role *string
		hash                    []byte
		at                      *time.Time
	)
	signed := func(item *T) {
		kind, rid, rev, slot := P(item).signOffSlot()
		if id == nil {
			*slot = nil
			return
		}
		*slot = &SignOff{Site: site, ID: *id, RecordKind: kind, RecordID: rid, RecordRevision: rev, Statement: *statement,
			SignedHash: hash, SignedHashOf: *of, SignedBy: *by, SignerRole: *role, SignedAt: *at}
	}
	var items []T
	var last int64
	err := s.readPage(ctx, site, kinds, limit, sql, args, func(rows pgx.Rows) (n int, err error) {
		items, last, err = collectTail[T](rows, signed, &id, &statement, &hash, &of, &by, &role, &at)
		return len(items), err
	})
	return items, last, err
}

func (p *Procedure) signOffSlot() (string, uuid.UUID, int, **SignOff) {
	return SignProcedure, p.ID, p.Revision, &p.SignOff
}

func (q *QualificationRecord) signOffSlot() (string, uuid.UUID, int, **SignOff) {
	return SignQualificationRecord, q.ID, q.Revision, &q.SignOff
}

func (c *Calibration) signOffSlot() (string, uuid.UUID, int, **SignOff) {
	return SignCalibration, c.ID, 1, &c.SignOff
}

// signOffKey names one signed revision.
type signOffKey struct {
	kind string
	id   uuid.UUID
	rev  int
}

// signOffsOf reads every sign-off of a site, by the revision it signs.
func signOffsOf(ctx context.Context, q querier, site string) (map[signOffKey]*SignOff, error) {
	rows, _ := q.Query(ctx, `SELECT `+signOffColumns+` FROM sign_offs WHERE site = $1`, site)
	found, err := pgx.CollectRows(rows, pgx.RowToStructByName[SignOff])
	if err != nil {
		return nil, fmt.Errorf("db: read sign-offs: %w", err)
	}
	m := make(map[signOffKey]*SignOff, len(found))
	for i := range found {
		m[signOffKey{found[i].RecordKind, found[i].RecordID, found[i].RecordRevision}] = &found[i]
	}
	return m, nil
}

// RecordSignOff returns the revision's sign-off, nil when unsigned.
func (p Procedure) RecordSignOff() *SignOff { return p.SignOff }

// RecordSignOff returns the revision's sign-off, nil when unsigned.
func (q QualificationRecord) RecordSignOff() *SignOff { return q.SignOff }
