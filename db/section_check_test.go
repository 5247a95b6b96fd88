package db_test

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// insertSections writes one statement of sections (coupon, label) for the
// site on q and returns their ids in order.
func insertSections(ctx context.Context, q interface {
	Exec(context.Context, string, ...any) (pgconn.CommandTag, error)
}, site string, rows [][2]any) ([]uuid.UUID, error) {
	var sql strings.Builder
	sql.WriteString(`INSERT INTO measurements (site, id, revision, created_at, created_by, coupon_id, section,
		penetration_mm, bead_width_mm, reinforcement_mm, acceptance, inspector) VALUES `)
	args := []any{site, time.Now().UTC()}
	ids := make([]uuid.UUID, len(rows))
	for i, r := range rows {
		ids[i] = uuid.Must(uuid.NewV7())
		if i > 0 {
			sql.WriteString(", ")
		}
		n := len(args)
		fmt.Fprintf(&sql, "($1, $%d, 1, $2, 'tester', $%d, $%d, 1.8, 7.5, 1.2, 'accept', 'QC-3')", n+1, n+2, n+3)
		args = append(args, ids[i], r[0], r[1])
	}
	_, err := q.Exec(ctx, sql.String(), args...)
	return ids, err
}

// sectionConflict reports the existing section a refused write names.
func sectionConflict(t *testing.T, what string, err error) uuid.UUID {
	t.Helper()
	var pg *pgconn.PgError
	if !errors.As(err, &pg) || pg.Code != "23505" || pg.ConstraintName != "measurements_section_per_coupon" {
		t.Fatalf("%s: %v, want the one-section-per-label refusal", what, err)
	}
	id, perr := uuid.Parse(pg.Detail)
	if perr != nil {
		t.Fatalf("%s: detail %q is not the existing section's id", what, pg.Detail)
	}
	return id
}

// TestSectionCheckPerStatement: a coupon keeps one current, non-voided
// section per label (trimmed, without case) whether its sections arrive one
// by one or many in one statement; the refusal names the other section; a
// voided section frees its label; two writers racing for one label on one
// coupon cannot both pass. (The rule is the project's; common practice, no
// source: a macro-etch section label names one cut of one coupon.)
func TestSectionCheckPerStatement(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	proc := mustProcedure(t, s, site)
	var cs []uuid.UUID
	for i := range 100 {
		c, err := s.CreateCoupon(ctx, actor(site), couponData(proc.ID, fmt.Sprintf("SC-%s-%d", uuid.NewString()[:6], i)))
		if err != nil {
			t.Fatal(err)
		}
		cs = append(cs, c.ID)
	}
	pool := s.Pool()

	// Many coupons, three labels each, in one statement: all pass.
	var rows [][2]any
	for _, c := range cs {
		for _, l := range []string{"A", "B", "C"} {
			rows = append(rows, [2]any{c, l})
		}
	}
	ids, err := insertSections(ctx, pool, site, rows)
	if err != nil {
		t.Fatalf("300 distinct sections in one statement: %v", err)
	}

	// One label twice for one coupon within one statement: refused, naming
	// the other new section; nothing of the statement is kept.
	twice, err := insertSections(ctx, pool, site, [][2]any{{cs[1], "D"}, {cs[2], "D"}, {cs[1], " d "}})
	if other := sectionConflict(t, "D and ' d ' in one statement", err); other != twice[0] && other != twice[2] {
		t.Errorf("refusal names %s, want one of the two D sections %s, %s", other, twice[0], twice[2])
	}
	var n int
	if err := pool.QueryRow(ctx, `SELECT count(*) FROM measurements WHERE site = $1 AND section IN ('D', ' d ')`, site).Scan(&n); err != nil || n != 0 {
		t.Errorf("sections D after the refused statement: %d (%v), want 0", n, err)
	}

	// A new section beside a stored one of the same label, among others.
	_, err = insertSections(ctx, pool, site, [][2]any{{cs[3], "E"}, {cs[0], "b"}})
	if other := sectionConflict(t, "b beside the stored B", err); other != ids[1] {
		t.Errorf("refusal names %s, want the stored B %s", other, ids[1])
	}

	// A voided section frees its label.
	if _, err := pool.Exec(ctx, `INSERT INTO measurements (site, id, revision, created_at, created_by, reason, voided, coupon_id,
			section, penetration_mm, bead_width_mm, reinforcement_mm, acceptance, inspector)
		SELECT site, id, 2, now(), 'tester', 'section re-cut', true, coupon_id, section, penetration_mm, bead_width_mm,
			reinforcement_mm, acceptance, inspector FROM measurements WHERE site = $1 AND id = $2`, site, ids[1]); err != nil {
		t.Fatalf("void B: %v", err)
	}
	if _, err := insertSections(ctx, pool, site, [][2]any{{cs[0], "B"}}); err != nil {
		t.Errorf("B after the first B was voided: %v", err)
	}

	// Two writers, one coupon, one label: the second waits for the first
	// and is refused once it commits.
	tx1, err := pool.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx1.Rollback(ctx) //nolint:errcheck // no-op after Commit
	first, err := insertSections(ctx, tx1, site, [][2]any{{cs[5], "F"}})
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() {
		err := pgx.BeginFunc(ctx, pool, func(tx2 pgx.Tx) error {
			_, err := insertSections(ctx, tx2, site, [][2]any{{cs[6], "F"}, {cs[5], "f"}})
			return err
		})
		done <- err
	}()
	select {
	case err := <-done:
		t.Fatalf("second writer finished before the first committed: %v", err)
	case <-time.After(300 * time.Millisecond):
	}
	if err := tx1.Commit(ctx); err != nil {
		t.Fatal(err)
	}
	if other := sectionConflict(t, "second writer of F", <-done); other != first[0] {
		t.Errorf("second writer's refusal names %s, want the first writer's F %s", other, first[0])
	}

	// The store maps the refusal to the section field, naming the section.
	_, err = s.CreateMeasurement(ctx, actor(site), measurementData(cs[5], "F", "accept"))
	var dup *db.DuplicateError
	if !errors.As(err, &dup) || dup.Field != "section" || dup.ExistingID != first[0] {
		t.Errorf("CreateMeasurement of a second F: %v, want a duplicate naming %s", err, first[0])
	}
}
