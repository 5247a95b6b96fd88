package db

import (
	"context"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// Subject kinds a flag can be about.
const (
	SubjectCoupon           = "coupon"
	SubjectProductionRecord = "production_record"
)

// Flag is one stored validation flag: a coupon or production record whose
// variable lies outside its procedure's qualified range (kind range), could
// not be checked (not_checkable), or breaks a model-based limit (model).
// Flags are derived data, rewritten whenever what they derive from changes.
type Flag struct {
	SubjectKind   string    `db:"subject_kind" json:"subject_kind"`
	SubjectID     uuid.UUID `db:"subject_id" json:"subject_id"`
	SubjectAt     time.Time `db:"subject_at" json:"subject_at"`
	ProcedureID   uuid.UUID `db:"procedure_id" json:"procedure_id"`
	RangesVersion int       `db:"ranges_version" json:"ranges_revision"`
	Kind          string    `db:"kind" json:"kind"`
	Variable      string    `db:"variable" json:"variable"`
	Unit          string    `db:"unit" json:"unit,omitempty"`
	Value         *float64  `db:"value" json:"value,omitempty"`
	ValueText     *string   `db:"value_text" json:"value_text,omitempty"`
	Min           *float64  `db:"min" json:"min,omitempty"`
	Max           *float64  `db:"max" json:"max,omitempty"`
	Allowed       []string  `db:"allowed" json:"allowed,omitempty"`
	Direction     *string   `db:"direction" json:"direction,omitempty"`
	Excess        *float64  `db:"excess" json:"excess,omitempty"`
	ExcessPct     *float64  `db:"excess_pct" json:"excess_pct,omitempty"`
	Detail        string    `db:"detail" json:"detail"`
	ComputedAt    time.Time `db:"computed_at" json:"computed_at"`
}

var flagColumns = []string{"site", "subject_kind", "subject_id", "subject_at", "procedure_id", "ranges_version",
	"kind", "variable", "unit", "value", "value_text", "min", "max", "allowed", "direction", "excess",
	"excess_pct", "detail", "computed_at"}

// subject is one record to evaluate: what it is, when it was welded and its values.
type subject struct {
	kind       string
	id         uuid.UUID
	at         time.Time
	obs        predict.Observation
	model      *predict.PenetrationCheck // nil: no active calibration
	measuredMM *float64                  // mean section penetration, nil: none
	sections   []predict.Section         // current sections (coupons only)
	reqs       []predict.Requirement     // minimum penetrations its documents state
	predicted  *float64                  // the model's median penetration, nil: none
}

// flagWriter evaluates subjects against one procedure's ranges and collects
// the flags to copy into the flags table.
type flagWriter struct {
	site    string
	now     time.Time
	ranges  ProcedureRanges
	checker *predict.Checker
	flags   []Flag
	scratch []predict.Flag
}

func newFlagWriter(site string, now time.Time, pr ProcedureRanges) *flagWriter {
	return &flagWriter{site: site, now: now, ranges: pr, checker: predict.NewChecker(pr.Ranges)}
}

// add evaluates one subject and queues its flags.
func (w *flagWriter) add(s *subject) {
	// Requirements first: a section below what a document requires is a
	// finding, not an estimate.
	w.scratch = predict.CheckRequirements(s.sections, s.reqs, w.scratch[:0])
	w.scratch = predict.SuspectUnits(s.sections, s.predicted, w.scratch)
	w.scratch = w.checker.Evaluate(&s.obs, w.scratch)
	if s.model != nil {
		w.scratch = s.model.Evaluate(&s.obs, s.measuredMM, w.scratch)
	}
	w.queue(s)
}

// calibratedFlags is the SQL condition (on flags) that holds exactly for the
// flags addCalibrated writes: those a change of the group's calibration can
// change (the model's own, its not_checkable, and suspect units, which
// compare with the model's prediction). TestCalibratedFlagsCondition checks
// it against add.
const calibratedFlags = `(kind IN ('model', 'suspect_units') OR (kind = 'not_checkable' AND variable = 'predicted_penetration_mm'))`

// addCalibrated queues only the flags of s that depend on its model check
// (calibratedFlags): what add would queue of them, in the same order.
func (w *flagWriter) addCalibrated(s *subject) {
	w.scratch = predict.SuspectUnits(s.sections, s.predicted, w.scratch[:0])
	if s.model != nil {
		w.scratch = s.model.Evaluate(&s.obs, s.measuredMM, w.scratch)
	}
	w.queue(s)
}

// queue turns the evaluated flags in w.scratch into rows of subject s.
func (w *flagWriter) queue(s *subject) {
	for _, f := range w.scratch {
		if w.ranges.Stale != "" && (f.Kind == predict.FlagRange || f.Kind == predict.FlagNotCheckable) {
			f.Detail += " (the ranges are stale: " + w.ranges.Stale + ")"
		}
		var text, dir *string
		if f.ValueText != "" {
			text = &f.ValueText
		}
		if f.Direction != "" {
			d := string(f.Direction)
			dir = &d
		}
		w.flags = append(w.flags, Flag{SubjectKind: s.kind, SubjectID: s.id, SubjectAt: s.at, ProcedureID: w.ranges.ProcedureID,
			RangesVersion: w.ranges.Version, Kind: string(f.Kind), Variable: string(f.Variable), Unit: f.Unit, Value: f.Value,
			ValueText: text, Min: f.Min, Max: f.Max, Allowed: f.Allowed, Direction: dir, Excess: f.Excess,
			ExcessPct: f.ExcessPct, Detail: f.Detail, ComputedAt: w.now})
	}
}

// flush copies the queued flags into the table and reports how many it wrote.
func (w *flagWriter) flush(ctx context.Context, tx pgx.Tx) (int, error) {
	if len(w.flags) == 0 {
		return 0, nil
	}
	if _, ok := tx.(*pipeTx); ok && len(w.flags) <= flagsPerInsert {
		return w.insert(ctx, tx)
	}
	i := 0
	src := pgx.CopyFromFunc(func() ([]any, error) {
		if i == len(w.flags) {
			return nil, nil
		}
		f := &w.flags[i]
		i++
		// Ids as [16]byte, pgx's direct encoding of a uuid (a uuid.UUID
		// takes its slower driver.Valuer path).
		return []any{w.site, f.SubjectKind, [16]byte(f.SubjectID), f.SubjectAt, [16]byte(f.ProcedureID), f.RangesVersion, f.Kind,
			f.Variable, f.Unit, f.Value, f.ValueText, f.Min, f.Max, f.Allowed, f.Direction, f.Excess, f.ExcessPct,
			f.Detail, f.ComputedAt}, nil
	})
	n, err := tx.CopyFrom(ctx, pgx.Identifier{"flags"}, flagColumns, src)
	w.flags = w.flags[:0]
	if err != nil {
		return 0, fmt.Errorf("write flags: %w", mapError(err))
	}
	return int(n), nil
}

// flagsOf reads the flags of the given subjects, grouped by subject id.
func flagsOf(ctx context.Context, q querier, site string, ids []uuid.UUID) (map[uuid.UUID][]Flag, error) {
	out := map[uuid.UUID][]Flag{}
	if len(ids) == 0 {
		return out, nil
	}
	rows, _ := q.Query(ctx, `SELECT `+strings.Join(flagColumns[1:], ", ")+` FROM flags
		WHERE site = $1 AND subject_id = ANY($2) ORDER BY subject_id, kind <> 'requirement', variable, kind`, site, ids)
	flags, err := pgx.CollectRows(rows, pgx.RowToStructByName[Flag])
	if err != nil {
		return nil, fmt.Errorf("read flags: %w", err)
	}
	for _, f := range flags {
		out[f.SubjectID] = append(out[f.SubjectID], f)
	}
	return out, nil
}

// flagsPerInsert is the most flags one coupon's write queues as an INSERT
// (leaving with the write's next statements) instead of a COPY.
const flagsPerInsert = 32

// insert queues the flags as one INSERT on a pipelined write.
func (w *flagWriter) insert(ctx context.Context, tx pgx.Tx) (int, error) {
	var sql strings.Builder
	sql.WriteString("INSERT INTO flags (" + strings.Join(flagColumns, ", ") + ") VALUES ")
	args := make([]any, 0, len(w.flags)*len(flagColumns))
	for i := range w.flags {
		f := &w.flags[i]
		if i > 0 {
			sql.WriteString(", ")
		}
		sql.WriteByte('(')
		for j := range flagColumns {
			if j > 0 {
				sql.WriteString(", ")
			}
			fmt.Fprintf(&sql, "$%d", len(args)+j+1)
		}
		sql.WriteByte(')')
		args = append(args, w.site, f.SubjectKind, f.SubjectID, f.SubjectAt, f.ProcedureID, f.RangesVersion, f.Kind,
			f.Variable, f.Unit, f.Value, f.ValueText, f.Min, f.Max, f.Allowed, f.Direction, f.Excess, f.ExcessPct,
			f.Detail, f.ComputedAt)
	}
	n := len(w.flags)
	w.flags = w.flags[:0]
	if err := queueExec(ctx, tx, sql.String(), args...); err != nil {
		return 0, fmt.Errorf("write flags: %w", err)
	}
	return n, nil
}
