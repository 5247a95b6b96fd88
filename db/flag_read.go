package db

import (
	"context"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// FlagFilter selects flags; zero fields do not filter. From and To bound the
// subject's time (a coupon's welding day, a production record's recorded_at),
// From inclusive, To exclusive.
type FlagFilter struct {
	SubjectKind string
	Kind        string
	Variable    string
	ProcedureID *uuid.UUID
	SubjectID   *uuid.UUID // one coupon's or production record's flags
	From, To    *time.Time
}

// flagCursor is the keyset position (subject id, variable, kind): stable
// across recomputes, which rewrite rows but not their keys.
type flagCursor struct {
	subject  uuid.UUID
	variable string
	kind     string
}

func (c flagCursor) String() string {
	return EncodeCursor("flags", c.subject.String(), c.variable, c.kind)
}

func parseFlagCursor(s string) (flagCursor, error) {
	parts, err := DecodeCursor(s, "flags", 3)
	if err != nil {
		return flagCursor{}, fmt.Errorf("db: list flags: %w", err)
	}
	id, err := uuid.Parse(parts[0])
	if err != nil {
		return flagCursor{}, fmt.Errorf("db: list flags: cursor %q: %w", s, ErrBadCursor)
	}
	return flagCursor{id, parts[1], parts[2]}, nil
}

// Flags lists a site's current flags ordered by subject (creation order),
// variable and kind, after the cursor.
func (s *Store) Flags(ctx context.Context, site string, ff FlagFilter, cursor string, limit int) (Page[Flag], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	var after *flagCursor
	if cursor != "" {
		c, err := parseFlagCursor(cursor)
		if err != nil {
			return Page[Flag]{}, err
		}
		after = &c
	}
	f := filter{args: []any{site}}
	if after != nil {
		f.add("(subject_id, variable, kind) > (?, ?, ?)", after.subject, after.variable, after.kind)
	}
	for _, c := range []struct{ col, v string }{{"subject_kind", ff.SubjectKind}, {"kind", ff.Kind}, {"variable", ff.Variable}} {
		if c.v != "" {
			f.add(c.col+" = ?", c.v)
		}
	}
	if ff.ProcedureID != nil {
		f.add("procedure_id = ?", *ff.ProcedureID)
	}
	if ff.SubjectID != nil {
		f.add("subject_id = ?", *ff.SubjectID)
	}
	if ff.From != nil {
		f.add("subject_at >= ?", *ff.From)
	}
	if ff.To != nil {
		f.add("subject_at < ?", *ff.To)
	}
	where := "site = $1"
	if len(f.conds) > 0 {
		where += " AND " + strings.Join(f.conds, " AND ")
	}
	// The page size is written into the statement (pageLimit): bound, the
	// generic plan of the prepared statement does not know a page is small.
	cols, order, lim := strings.Join(flagColumns[1:], ", "), " ORDER BY subject_id, variable, kind", pageLimit(limit+1)
	sql := `SELECT ` + cols + ` FROM flags WHERE ` + where + order + lim
	if from, to, ok := flagDays(ff); ok {
		// A short time range walks each of its UTC days through flags_day
		// in the list's order, a page each, and merges the heads: at most
		// days × (limit + 1) flags read, not every flag of the range.
		f.args = append(f.args, from, to)
		sql = `SELECT ` + cols + ` FROM generate_series($` + strconv.Itoa(len(f.args)-1) + `::date, $` + strconv.Itoa(len(f.args)) + `::date, interval '1 day') d(day)
		CROSS JOIN LATERAL (SELECT ` + cols + ` FROM flags WHERE ` + where + ` AND ` + flagDay + ` = d.day::date` + order + lim + `) b` + order + lim
	}
	rows, _ := s.pool.Query(ctx, sql, f.args...)
	items, err := collectRows[Flag](rows, nil)
	if err != nil {
		return Page[Flag]{}, fmt.Errorf("db: list flags: %w", mapError(err))
	}
	p := Page[Flag]{Items: items}
	if len(items) > limit {
		last := items[limit-1]
		p.Items, p.Next = items[:limit], flagCursor{last.SubjectID, last.Variable, last.Kind}.String()
	}
	return p, nil
}

// flagDay is a flag's UTC day, as the index flags_day (migration 000049)
// holds it.
const flagDay = "(subject_at AT TIME ZONE 'UTC')::date"

// flagDays is the first and last UTC day of ff's time range when the list
// walks it day by day: both ends bounded, at most maxDayWalk days, and no
// procedure or subject, whose own keys read fewer flags.
func flagDays(ff FlagFilter) (first, last Date, ok bool) {
	if ff.From == nil || ff.To == nil || ff.ProcedureID != nil || ff.SubjectID != nil || !ff.To.After(*ff.From) {
		return first, last, false
	}
	first, last = DateOf(ff.From.UTC()), DateOf(ff.To.UTC().Add(-time.Nanosecond))
	return first, last, !last.After(first.AddDate(0, 0, maxDayWalk-1))
}

// FlagCount is how many flags of one kind a variable has.
type FlagCount struct {
	Variable string `db:"variable" json:"variable"`
	Kind     string `db:"kind" json:"kind"`
	Count    int    `db:"count" json:"count"`
}

// FlagSummary sums up a procedure's current flags: per variable and kind
// (requirement flags first: they are findings, the rest estimates), and how many coupons and production records carry at least one.
type FlagSummary struct {
	ProcedureID           uuid.UUID   `json:"procedure_id"`
	RangesVersion         *int        `json:"ranges_revision,omitempty"`
	Total                 int         `json:"total"`
	FlaggedCoupons        int         `json:"flagged_coupons"`
	FlaggedProductionRecs int         `json:"flagged_production_records"`
	ByVariable            []FlagCount `json:"by_variable"`
}

// FlagSummary counts a procedure's flags. The procedure must exist at the site.
func (s *Store) FlagSummary(ctx context.Context, site string, procedureID uuid.UUID) (FlagSummary, error) {
	sum := FlagSummary{ProcedureID: procedureID, ByVariable: []FlagCount{}}
	if _, err := getRecord[Procedure](ctx, s.pool, procedures, site, procedureID, 0); err != nil {
		return sum, err
	}
	if pr, err := latestRanges(ctx, s.pool, site, procedureID, 0); err == nil {
		sum.RangesVersion = &pr.Version
	}
	rows, _ := s.pool.Query(ctx, `SELECT variable, kind, count(*)::int AS count FROM flags
		WHERE site = $1 AND procedure_id = $2 GROUP BY variable, kind ORDER BY kind <> 'requirement', variable, kind`, site, procedureID)
	counts, err := pgx.CollectRows(rows, pgx.RowToStructByName[FlagCount])
	if err != nil {
		return sum, fmt.Errorf("db: flag summary: %w", err)
	}
	sum.ByVariable = append(sum.ByVariable, counts...)
	for _, c := range counts {
		sum.Total += c.Count
	}
	err = s.pool.QueryRow(ctx, `SELECT
			count(DISTINCT subject_id) FILTER (WHERE subject_kind = 'coupon'),
			count(DISTINCT subject_id) FILTER (WHERE subject_kind = 'production_record')
		FROM flags WHERE site = $1 AND procedure_id = $2`, site, procedureID).Scan(&sum.FlaggedCoupons, &sum.FlaggedProductionRecs)
	if err != nil {
		return sum, fmt.Errorf("db: flag summary: %w", err)
	}
	return sum, nil
}
