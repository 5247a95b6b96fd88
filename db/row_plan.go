package db

import (
	"reflect"
	"strings"
	"sync"
	"sync/atomic"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// A page's rows are scanned by position into their struct: the field of
// each column is found once per struct type and column list (rowPlan), by
// the column's name and the fields' db tags as pgx.RowToStructByName finds
// it, the fields' addresses once per page, and each row is then decoded
// from its raw values (scanRaw) or, where scanRaw declines a value, by
// rows.Scan into the same targets. pgx's scan by name looked every field up
// again for each row: reading a page of 50 PQRs took about 0.5 ms of CPU
// that way. TestCollectTailMatchesByName compares the two over stored rows
// of every list.

// rowPlan is the field path of each of a statement's columns in a struct.
type rowPlan struct{ paths [][]int }

type rowPlanKey struct {
	t    reflect.Type
	cols string
}

var rowPlans sync.Map // rowPlanKey → *rowPlan, nil when a column has no field

// scanByName makes collectRows scan every row by name, for the test that
// compares the two.
var scanByName atomic.Bool

// positionRows counts the rows collectRows has scanned by position, for the
// same test.
var positionRows atomic.Int64

// planRows returns the plan of the columns fds into t, or nil when the
// columns and t's fields do not pair one to one by tag (a column with no
// field, a tagged field with no column, an untagged or repeated one): the
// caller then scans by name, which decides as before.
func planRows(t reflect.Type, fds []pgconn.FieldDescription) *rowPlan {
	names := make([]string, len(fds))
	for i, fd := range fds {
		names[i] = fd.Name
	}
	key := rowPlanKey{t, strings.Join(names, "\x00")}
	if p, ok := rowPlans.Load(key); ok {
		return p.(*rowPlan)
	}
	fields, exact := fieldPaths(t)
	var p *rowPlan
	if exact && len(fields) == len(names) {
		p = &rowPlan{paths: make([][]int, len(names))}
		for i, n := range names {
			path, ok := fields[n]
			if !ok {
				p = nil
				break
			}
			p.paths[i] = path
		}
	}
	rowPlans.Store(key, p)
	return p
}

// targets are the addresses of the fields of *item (a struct of the plan's
// type) in the plan's column order.
func (p *rowPlan) targets(item any) []any {
	v := reflect.ValueOf(item).Elem()
	out := make([]any, len(p.paths))
	for i, path := range p.paths {
		out[i] = v.FieldByIndex(path).Addr().Interface()
	}
	return out
}

// collectTail reads rows into T whose last columns are tail's and then the
// log index, calling each (when set) after each row with the row's item,
// tail scanned; it returns the index of the last row.
func collectTail[T any](rows pgx.Rows, each func(*T), tail ...any) ([]T, int64, error) {
	var last int64 = -1
	items, err := collectRows(rows, each, append(tail, &last)...)
	return items, last, err
}

// collectRows reads rows into T whose last columns, if any, are tail's,
// calling each (when set) after each row with the row's item, tail
// scanned: by position where the columns and T's fields pair by tag
// (planRows), else by pgx's scan by name.
func collectRows[T any](rows pgx.Rows, each func(*T), tail ...any) ([]T, error) {
	defer rows.Close()
	fds := rows.FieldDescriptions()
	n := len(fds) - len(tail)
	var plan *rowPlan
	if n >= 0 && !scanByName.Load() {
		plan = planRows(reflect.TypeFor[T](), fds[:n])
	}
	if plan == nil {
		return collectByName(rows, each, tail)
	}
	items := []T{}
	// Every row is scanned into item, whose fields' addresses are found
	// once; a row's item is copied out and item set to zero again.
	var item, zero T
	targets := append(plan.targets(&item), tail...)
	for rows.Next() {
		if !scanRaw(fds, rows.RawValues(), targets) {
			if err := rows.Scan(targets...); err != nil {
				return nil, err
			}
		}
		if each != nil {
			each(&item)
		}
		items = append(items, item)
		item = zero
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	positionRows.Add(int64(len(items)))
	return items, nil
}

// collectByName is collectRows by pgx's scan by name.
func collectByName[T any](rows pgx.Rows, each func(*T), tail []any) ([]T, error) {
	return pgx.CollectRows(rows, func(row pgx.CollectableRow) (T, error) {
		item, err := pgx.RowToStructByName[T](tailRow{row, tail})
		if err == nil && each != nil {
			each(&item)
		}
		return item, err
	})
}
