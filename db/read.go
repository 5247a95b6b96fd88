package db

import (
	"context"
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// MaxPageSize caps how many records one list call returns.
const MaxPageSize = 500

// Page is one page of a list. Next is the cursor to resume from, on every
// page: the last page's cursor returns nothing until more is written.
type Page[T any] struct {
	Items []T
	Next  string
}

// getRecord reads the latest revision of a record, or the given revision when rev > 0.
func getRecord[T any](ctx context.Context, q querier, t table, site string, id uuid.UUID, rev int) (T, error) {
	sql := "SELECT " + t.columns() + " FROM " + t.name + " WHERE site = $1 AND id = $2"
	args := []any{site, id}
	if rev > 0 {
		sql += " AND revision = $3"
		args = append(args, rev)
	}
	sql += " ORDER BY revision DESC LIMIT 1"
	rows, _ := q.Query(ctx, sql, args...)
	v, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[T])
	if errors.Is(err, pgx.ErrNoRows) {
		var zero T
		return zero, fmt.Errorf("db: %s %s: %w", t.entity, id, ErrNotFound)
	}
	return v, err
}

// querier is what both a pool and a transaction can do.
type querier interface {
	Query(ctx context.Context, sql string, args ...any) (pgx.Rows, error)
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

// readOne reads a record outside any write transaction.
func readOne[T any](ctx context.Context, s *Store, t table, site string, id uuid.UUID, rev int) (T, error) {
	v, err := getRecord[T](ctx, s.pool, t, site, id, rev)
	if err != nil {
		return v, err
	}
	one := []T{v}
	err = attachSignOffs(ctx, s.pool, site, one)
	return one[0], err
}

// exists checks, inside a write, that a referenced record exists at the site and
// is not voided; otherwise it names the referring field.
func exists(ctx context.Context, tx pgx.Tx, t table, site string, id uuid.UUID, field string) error {
	return queueRows(ctx, tx, func(rows pgx.Rows) error {
		if !rows.Next() {
			if rows.Err() != nil {
				return nil // the statement's own error is reported
			}
			return t.linkRefused(field, id, false, false)
		}
		var voided bool
		if err := rows.Scan(&voided); err != nil {
			return err
		}
		return t.linkRefused(field, id, true, voided)
	}, "SELECT voided FROM "+t.name+" WHERE site = $1 AND id = $2 ORDER BY revision DESC LIMIT 1", site, id)
}

// linkRefused words why a link to record id is refused: it is not at the
// site, or it is voided; nil when it is found and current.
func (t table) linkRefused(field string, id uuid.UUID, found, voided bool) error {
	switch {
	case !found:
		return &FieldError{Field: field, Reason: fmt.Sprintf("no %s %s", t.entity, id)}
	case voided:
		return &FieldError{Field: field, Reason: fmt.Sprintf("%s %s is voided", t.entity, id)}
	}
	return nil
}

// latestRead reads the latest revision of each record in ids at the site
// into out, keyed by id (an id not at the site stays absent), in one query
// (none when ids is empty).
func latestRead[T interface{ RecordID() uuid.UUID }](t table, site string, ids []uuid.UUID, out map[uuid.UUID]T) []planRead {
	if len(ids) == 0 {
		return nil
	}
	return []planRead{{"SELECT DISTINCT ON (id) " + t.columns() + " FROM " + t.name +
		" WHERE site = $1 AND id = ANY($2) ORDER BY id, revision DESC", []any{site, ids}, func(rows pgx.Rows) error {
		v, err := pgx.CollectRows(rows, pgx.RowToStructByName[T])
		if err != nil {
			return fmt.Errorf("db: read %ss: %w", t.entity, err)
		}
		for _, r := range v {
			out[r.RecordID()] = r
		}
		return nil
	}, false}}
}

// planRead is one read of a write's plan: a statement, its arguments and
// the reader of its rows.
type planRead struct {
	sql  string
	args []any
	read func(pgx.Rows) error
	// custom: outside a pipelined write, planned for its arguments
	// (QueryExecModeExec) instead of by a cached generic plan
	custom bool
}

// readTogether runs the reads in order. Inside a pipelined write they
// leave together with whatever is queued before them, in one round trip;
// elsewhere (a dry run on the pool) one after another.
func readTogether(ctx context.Context, q querier, reads ...[]planRead) error {
	tx, piped := q.(*pipeTx)
	for _, rs := range reads {
		for _, r := range rs {
			if piped {
				tx.queue(r.sql, r.args, r.read, false)
				continue
			}
			args := r.args
			if r.custom {
				args = append([]any{pgx.QueryExecModeExec}, args...)
			}
			rows, _ := q.Query(ctx, r.sql, args...)
			err := r.read(rows)
			rows.Close()
			if err := firstError(err, rows.Err()); err != nil {
				return err
			}
		}
	}
	if piped {
		return tx.flush(ctx)
	}
	return nil
}

// revisions lists every revision of one record, oldest first.
func revisions[T any](ctx context.Context, s *Store, t table, site string, id uuid.UUID) ([]T, error) {
	sql := "SELECT " + t.columns() + " FROM " + t.name + " WHERE site = $1 AND id = $2 ORDER BY revision"
	rows, _ := s.pool.Query(ctx, sql, site, id)
	v, err := pgx.CollectRows(rows, pgx.RowToStructByName[T])
	if err != nil {
		return nil, fmt.Errorf("db: %s %s revisions: %w", t.entity, id, err)
	}
	if len(v) == 0 {
		return nil, fmt.Errorf("db: %s %s: %w", t.entity, id, ErrNotFound)
	}
	return v, attachSignOffs(ctx, s.pool, site, v)
}

// filter collects WHERE conditions on the current revision ("cur") of a list.
// Placeholders $1 and $2 are reserved for the site and the cursor.
type filter struct {
	conds []string
	args  []any
}

// newFilter returns an empty filter with the site and cursor placeholders reserved.
func newFilter() filter { return filter{args: []any{nil, nil}} }

// add appends a condition; each "?" in cond becomes the next $n placeholder.
func (f *filter) add(cond string, vals ...any) {
	for _, v := range vals {
		f.args = append(f.args, v)
		cond = strings.Replace(cond, "?", "$"+strconv.Itoa(len(f.args)), 1)
	}
	f.conds = append(f.conds, cond)
}

// pageLimit is a list statement's LIMIT, the page size written in: bound as
// a parameter, the generic plan PostgreSQL switches a prepared statement to
// after five executions does not know a page is small, and hashes every
// record of the kind instead of walking the log in order (a record list's
// first page measured 140 ms at 10,000 records instead of 1-3 ms).
func pageLimit(limit int) string { return " LIMIT " + strconv.Itoa(limit) }

// listKinds are the leaf kinds a list's rows are made from: first the
// list's own records', then any whose leaves rewrite rows already listed (a
// section its coupon's verdict, a sign-off its record's).
type listKinds []string

// pageWait reads, in a page's round trip, the site's newest pending leaf
// ($1; NULL: none) and whether some pending leaf could change a row already
// listed: a leaf of one of the list's kinds ($2) that is not the first
// revision of a record of its own kind ($3). A first revision is given an
// index after every logged one, so its row comes after every listed row.
// The sequencer skips a key's deletion by the same rule (leafRows.rewrites).
const pageWait = `SELECT max(seq), coalesce(bool_or(kind = ANY($2::text[]) AND (kind <> $3 OR revision <> 1)), false)
	FROM log_pending WHERE site = $1`

// readPage reads one page of a list of kinds with read (which answers how
// many rows it read), showing every write acknowledged before it was asked
// for. The site's pending leaves are looked at in the same round trip as the
// page, and the list waits for the sequencer and reads the page again only
// when one of them could show on it: when the page is shorter than limit
// (its end is the end of what is logged, where new records will show), or
// when a pending leaf could change a row already listed (a correction, a
// void, a section of a coupon, a sign-off). A full page under pending first
// revisions alone is answered at once: they will be listed after it. A
// request let in on a kept lookup of its token (WithUserCheck) confirms its
// user first in the same round trip, so a page read for a user who no longer
// holds the token is never answered: ErrUserChanged instead.
func (s *Store) readPage(ctx context.Context, site string, kinds listKinds, limit int, sql string, args []any, read func(pgx.Rows) (int, error)) error {
	return s.readPageWith(ctx, site, kinds, limit, sql, args, read, false)
}

// readPageWith is readPage; generic reads the page with the statement's
// generic plan (plan_cache_mode, set for the page's own transaction in the
// same round trip) instead of letting PostgreSQL plan it afresh for its
// arguments. For the coupons' welding-day walk (couponListQuery) planning
// afresh, which PostgreSQL kept doing, cost more than running the plan: at
// 100,000 coupons the last tenth of the days measured 0.29-0.36x of a raw
// SELECT at 1 client with custom plans and 0.45-0.53x with the generic one
// (BenchmarkCouponListScale, the service's login set to force_generic_plan;
// other lists gained nothing or lost, so the setting is this statement's).
func (s *Store) readPageWith(ctx context.Context, site string, kinds listKinds, limit int, sql string, args []any, read func(pgx.Rows) (int, error), generic bool) error {
	b := &pgx.Batch{}
	if generic {
		b.Queue("BEGIN READ ONLY")
		b.Queue("SET LOCAL plan_cache_mode = force_generic_plan")
	}
	if c := pendingUserCheck(ctx); c != nil {
		b.Queue(userByTokenSQL, c.digest).Query(c.confirmLookup)
	}
	var pending *int64
	var changes bool
	b.Queue(pageWait, site, []string(kinds), kinds[0]).QueryRow(func(r pgx.Row) error { return r.Scan(&pending, &changes) })
	var n int
	b.Queue(sql, args...).Query(func(rows pgx.Rows) (err error) {
		n, err = read(rows)
		return err
	})
	if generic {
		b.Queue("COMMIT")
	}
	err := s.pool.SendBatch(ctx, b).Close()
	if err == nil && pending != nil && (n < limit || changes) {
		s.pageWaits.Add(1)
		s.awaitSequenced(ctx, site, *pending)
		rows, _ := s.pool.Query(ctx, sql, args...)
		_, err = read(rows)
	}
	return err
}
