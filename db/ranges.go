package db

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// ProcedureRanges is one version of a procedure's qualified ranges: derived
// from the supporting records of procedure revision ProcedureRevision under a
// rule set version, or narrowed from the previous version with a reason.
// FlagsWritten (not stored) counts the flags rewritten by the change.
type ProcedureRanges struct {
	RowID             uuid.UUID               `db:"id" json:"-"`
	Site              string                  `db:"site" json:"-"`
	ProcedureID       uuid.UUID               `db:"procedure_id" json:"procedure_id"`
	ProcedureRevision int                     `db:"procedure_revision" json:"procedure_revision"`
	Version           int                     `db:"version" json:"revision"`
	Action            string                  `db:"action" json:"action"`
	RuleSetSite       string                  `db:"rule_set_site" json:"-"`
	RuleSetID         string                  `db:"rule_set_id" json:"rule_set_id"`
	RuleSetVersion    int                     `db:"rule_set_version" json:"rule_set_revision"`
	Reason            string                  `db:"reason" json:"reason"`
	Ranges            predict.QualifiedRanges `db:"ranges" json:"ranges"`
	CreatedAt         time.Time               `db:"created_at" json:"created_at"`
	CreatedBy         string                  `db:"created_by" json:"created_by"`
	FlagsWritten      int                     `db:"-" json:"flags_written"`
	// CurrentProcedureRevision (not stored, filled on read) is the procedure's
	// latest revision; when it is newer than ProcedureRevision the ranges were
	// derived from an older revision and may need deriving again.
	CurrentProcedureRevision int  `db:"-" json:"current_procedure_revision,omitempty"`
	DerivedFromOlderRevision bool `db:"-" json:"derived_from_older_revision"`
	// Stale (not stored, filled on read) says why the ranges no longer
	// follow their evidence: a supporting qualification record corrected
	// or voided after they were derived. Empty when they do; flags carry it
	// until an engineer derives the ranges again.
	Stale string `db:"-" json:"stale,omitempty"`
}

const rangesColumns = `id, site, procedure_id, procedure_revision, version, action, rule_set_site,
	rule_set_id, rule_set_version, reason, ranges, created_at, created_by`

// DeriveRanges derives a procedure's qualified ranges from its supporting
// qualification records (current, non-voided revisions) under a rule set
// version (0: latest), stores them as the next version and recomputes every
// flag of the procedure, all in one transaction.
func (s *Store) DeriveRanges(ctx context.Context, a Actor, procedureID uuid.UUID, ruleSetID string, ruleSetVersion int) (ProcedureRanges, error) {
	pr := ProcedureRanges{Site: a.Site, ProcedureID: procedureID, Action: "derive", CreatedAt: s.now(), CreatedBy: a.Name}
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := lockProcedures(ctx, tx, a.Site, []uuid.UUID{procedureID}, true); err != nil {
			return err
		}
		p, err := getRecord[Procedure](ctx, tx, procedures, a.Site, procedureID, 0)
		if err != nil {
			return err
		}
		if p.Voided {
			return fmt.Errorf("procedure %s: %w", procedureID, ErrVoided)
		}
		rs, err := ruleSet(ctx, tx, a.Site, ruleSetID, ruleSetVersion)
		if err != nil {
			return &FieldError{Field: "rule_set_id", Reason: fmt.Sprintf("no rule set %q (version %d) at this site or built in", ruleSetID, ruleSetVersion)}
		}
		if rs.Process != p.Process {
			return &FieldError{Field: "rule_set_id", Reason: fmt.Sprintf("rule set %s is for %s, the procedure is %s", rs.RuleSetID, rs.Process, p.Process)}
		}
		pqrs, err := supportingValues(ctx, tx, a.Site, p)
		if err != nil {
			return err
		}
		if pr.Ranges, err = predict.Derive(rs.Rules, pqrs); err != nil {
			return &FieldError{Field: "rule_set_id", Reason: err.Error()}
		}
		pr.ProcedureRevision, pr.RuleSetSite, pr.RuleSetID, pr.RuleSetVersion = p.Revision, rs.Site, rs.RuleSetID, rs.Version
		return s.storeRanges(ctx, tx, &pr)
	})
	if err != nil {
		return ProcedureRanges{}, fmt.Errorf("db: derive ranges of procedure %s: %w", procedureID, err)
	}
	return pr, nil
}

// NarrowRanges tightens the latest ranges (which must be version
// baseVersion, else ErrConflict) and recomputes the procedure's flags, in
// one transaction. predict.Narrow refuses anything that would widen.
func (s *Store) NarrowRanges(ctx context.Context, a Actor, procedureID uuid.UUID, baseVersion int, reason string, changes []predict.Narrowing) (ProcedureRanges, error) {
	var pr ProcedureRanges
	err := s.tx(ctx, func(tx pgx.Tx) error {
		if err := lockProcedures(ctx, tx, a.Site, []uuid.UUID{procedureID}, true); err != nil {
			return err
		}
		cur, err := latestRanges(ctx, tx, a.Site, procedureID, 0)
		if err != nil {
			return err
		}
		if cur.Version != baseVersion {
			return fmt.Errorf("%w: the ranges of procedure %s are at version %d, the narrowing is based on version %d",
				ErrConflict, procedureID, cur.Version, baseVersion)
		}
		narrowed, err := predict.Narrow(cur.Ranges, changes, reason)
		if err != nil {
			return err
		}
		pr = cur
		pr.Action, pr.Reason, pr.Ranges, pr.CreatedAt, pr.CreatedBy = "narrow", reason, narrowed, s.now(), a.Name
		return s.storeRanges(ctx, tx, &pr)
	})
	if err != nil {
		return ProcedureRanges{}, fmt.Errorf("db: narrow ranges of procedure %s: %w", procedureID, err)
	}
	return pr, nil
}

// storeRanges inserts pr as the procedure's next version, appends its audit
// event and recomputes the procedure's flags under it.
func (s *Store) storeRanges(ctx context.Context, tx pgx.Tx, pr *ProcedureRanges) error {
	id, err := uuid.NewV7()
	if err != nil {
		return err
	}
	pr.RowID = id
	if err := tx.QueryRow(ctx, `SELECT coalesce(max(version), 0) + 1 FROM procedure_ranges WHERE site = $1 AND procedure_id = $2`,
		pr.Site, pr.ProcedureID).Scan(&pr.Version); err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `INSERT INTO procedure_ranges (`+rangesColumns+`)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13)`,
		pr.RowID, pr.Site, pr.ProcedureID, pr.ProcedureRevision, pr.Version, pr.Action, pr.RuleSetSite,
		pr.RuleSetID, pr.RuleSetVersion, pr.Reason, pr.Ranges, pr.CreatedAt, pr.CreatedBy); err != nil {
		return mapError(err)
	}
	if err := s.AppendLeaf(ctx, tx, LeafEntry{Kind: "procedure_ranges", Site: pr.Site, ID: pr.RowID, Revision: 1,
		Actor: pr.CreatedBy, Action: pr.Action, Reason: pr.Reason, At: pr.CreatedAt}); err != nil {
		return err
	}
	pr.FlagsWritten, err = recomputeProcedure(ctx, tx, pr.CreatedAt, *pr)
	return err
}

// ProcedureRanges reads version ver of a procedure's ranges, or the latest when ver is 0.
func (s *Store) ProcedureRanges(ctx context.Context, site string, procedureID uuid.UUID, ver int) (ProcedureRanges, error) {
	pr, err := latestRanges(ctx, s.pool, site, procedureID, ver)
	if err != nil {
		return ProcedureRanges{}, fmt.Errorf("db: %w", err)
	}
	p, err := readOne[Procedure](ctx, s, procedures, site, procedureID, 0)
	if err != nil {
		return ProcedureRanges{}, err
	}
	pr.CurrentProcedureRevision = p.Revision
	pr.DerivedFromOlderRevision = p.Revision > pr.ProcedureRevision
	return pr, nil
}

// latestRanges reads version ver (0: the latest) of a procedure's ranges.
func latestRanges(ctx context.Context, q querier, site string, procedureID uuid.UUID, ver int) (ProcedureRanges, error) {
	rows, _ := q.Query(ctx, `SELECT `+rangesColumns+` FROM procedure_ranges
		WHERE site = $1 AND procedure_id = $2 AND ($3 = 0 OR version = $3)
		ORDER BY version DESC LIMIT 1`, site, procedureID, ver)
	pr, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[ProcedureRanges])
	if errors.Is(err, pgx.ErrNoRows) {
		return ProcedureRanges{}, fmt.Errorf("ranges of procedure %s (version %d; derive them first): %w", procedureID, ver, ErrNotFound)
	}
	if err != nil {
		return pr, err
	}
	pr.Stale, err = rangesStale(ctx, q, pr)
	return pr, err
}

// rangesStale names the supporting qualification records (of the procedure
// revision the ranges were derived from) corrected or voided after the
// latest derivation, or "" when none was.
func rangesStale(ctx context.Context, q querier, pr ProcedureRanges) (string, error) {
	rows, _ := q.Query(ctx, staleSQL(`SELECT $2::uuid AS procedure_id, $3::integer AS version, $4::integer AS procedure_revision`),
		pr.Site, pr.ProcedureID, pr.Version, pr.ProcedureRevision)
	return readStale(rows)
}

// staleSQL is the statement rangesStale runs for the ranges that ranges (a
// SELECT of procedure_id, version and procedure_revision, at most one row)
// names; $1 is the site.
func staleSQL(ranges string) string {
	return `
		WITH pr AS (` + ranges + `),` + staleCTEs + `
		SELECT record_number, revision, voided FROM stale ORDER BY id`
}

// staleCTEs are the common table expressions, after pr (the ranges: at most
// one row with procedure_id, version and procedure_revision), that end in
// stale: each supporting qualification record of the procedure revision
// the ranges were derived from that was corrected or voided after their
// latest derivation, at its latest revision, in id order. $1 is the site.
const staleCTEs = `
		derived AS (
			SELECT max(d.created_at) AS at FROM procedure_ranges d, pr
			WHERE d.site = $1 AND d.procedure_id = pr.procedure_id AND d.action = 'derive' AND d.version <= pr.version),
		support AS (
			SELECT unnest(p.supporting_record_ids) AS id FROM procedures p, pr
			WHERE p.site = $1 AND p.id = pr.procedure_id AND p.revision = pr.procedure_revision),
		stale AS (
			SELECT DISTINCT ON (r.id) r.id, r.record_number, r.revision, r.voided
			FROM qualification_records r JOIN support s ON s.id = r.id, derived d
			WHERE r.site = $1 AND r.created_at > d.at
			ORDER BY r.id, r.revision DESC)`

// rangesWithStaleSQL reads the latest ranges of procedure proc (an SQL
// expression; $1 is the site) and, in the same row, what staleCTEs finds
// for them: no row when the procedure has no ranges.
func rangesWithStaleSQL(proc string) string {
	return `
		WITH pr AS (SELECT ` + rangesColumns + ` FROM procedure_ranges
			WHERE site = $1 AND procedure_id = ` + proc + ` ORDER BY version DESC LIMIT 1),` + staleCTEs + `
		SELECT pr.*, st.stale_numbers, st.stale_revisions, st.stale_voided FROM pr,
			(SELECT array_agg(record_number ORDER BY id) AS stale_numbers, array_agg(revision ORDER BY id) AS stale_revisions,
			        array_agg(voided ORDER BY id) AS stale_voided FROM stale) st`
}

// rangesWithStale is a row of rangesWithStaleSQL.
type rangesWithStale struct {
	ProcedureRanges
	StaleNumbers   []string `db:"stale_numbers"`
	StaleRevisions []int    `db:"stale_revisions"`
	StaleVoided    []bool   `db:"stale_voided"`
}

// readRangesWithStale reads at most one row of rangesWithStaleSQL: the
// ranges with Stale filled, or nil when there are none.
func readRangesWithStale(dst **ProcedureRanges) func(pgx.Rows) error {
	return func(rows pgx.Rows) error {
		var r *rangesWithStale
		if err := optionalRow(&r)(rows); err != nil || r == nil {
			return err
		}
		cs := make([]staleRecord, len(r.StaleNumbers))
		for i := range cs {
			cs[i] = staleRecord{r.StaleNumbers[i], r.StaleRevisions[i], r.StaleVoided[i]}
		}
		r.ProcedureRanges.Stale = staleWords(cs)
		*dst = &r.ProcedureRanges
		return nil
	}
}

// staleRecord is a supporting qualification record changed after the
// ranges were derived: its number and latest revision.
type staleRecord struct {
	number   string
	revision int
	voided   bool
}

// readStale reads the rows of staleSQL into rangesStale's answer.
func readStale(rows pgx.Rows) (string, error) {
	cs, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (staleRecord, error) {
		var c staleRecord
		return c, r.Scan(&c.number, &c.revision, &c.voided)
	})
	if err != nil {
		return "", err
	}
	return staleWords(cs), nil
}

// staleWords says why ranges are stale, or "" when no record changed.
func staleWords(cs []staleRecord) string {
	if len(cs) == 0 {
		return ""
	}
	parts := make([]string, len(cs))
	for i, c := range cs {
		what := fmt.Sprintf("corrected (now revision %d)", c.revision)
		if c.voided {
			what = "voided"
		}
		parts[i] = "qualification record " + c.number + " was " + what
	}
	return strings.Join(parts, "; ") + " after the ranges were derived: derive them again"
}

// supportingValues reads the current revisions of a procedure's supporting
// qualification records as derivation input; a voided one is refused.
func supportingValues(ctx context.Context, q querier, site string, p Procedure) ([]predict.PQRValues, error) {
	if len(p.SupportingRecordIDs) == 0 {
		return nil, &FieldError{Field: "supporting_record_ids", Reason: "the procedure names no supporting qualification record to derive ranges from"}
	}
	out := make([]predict.PQRValues, 0, len(p.SupportingRecordIDs))
	for _, id := range p.SupportingRecordIDs {
		r, err := getRecord[QualificationRecord](ctx, q, qualificationRecords, site, id, 0)
		if err != nil {
			return nil, err
		}
		if r.Voided {
			return nil, &FieldError{Field: "supporting_record_ids", Reason: fmt.Sprintf("qualification record %s is voided; correct the procedure first", r.RecordNumber)}
		}
		out = append(out, predict.PQRValues{Label: r.RecordNumber, Values: pqrObservation(r.QualificationRecordData)})
	}
	return out, nil
}
