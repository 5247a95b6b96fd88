package db

import (
	"fmt"
	"reflect"
	"strings"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// structScanner maps a result's columns to the fields of T by their db tags
// (embedded structs included, "-" skipped) once, and returns a function that
// scans the current row into a T. pgx.RowToStructByName finds the fields
// again for every row, which an export of a million rows feels.
func structScanner[T any](fds []pgconn.FieldDescription) (func(pgx.Rows, *T) error, error) {
	cols, err := structPaths[T](fds)
	if err != nil {
		return nil, err
	}
	dst := make([]any, len(fds))
	return func(rows pgx.Rows, v *T) error {
		rv := reflect.ValueOf(v).Elem()
		for i, p := range cols {
			dst[i] = rv.FieldByIndex(p).Addr().Interface()
		}
		return rows.Scan(dst...)
	}, nil
}

// structPaths maps each column of a result to the index path of its field in T.
func structPaths[T any](fds []pgconn.FieldDescription) ([][]int, error) {
	paths, _ := fieldPaths(reflect.TypeFor[T]())
	cols := make([][]int, len(fds))
	for i, fd := range fds {
		p, ok := paths[fd.Name]
		if !ok {
			return nil, fmt.Errorf("column %s has no field in %v", fd.Name, reflect.TypeFor[T]())
		}
		cols[i] = p
	}
	return cols, nil
}

// fieldPaths is the index path of each exported field of struct t by its
// column: its db tag, or its name in lower case when untagged; an embedded
// untagged struct's fields count as t's own, a field tagged "-" has none,
// and of two fields of one column the first is kept. exact reports that
// each field has a tag of its own, as pgx.RowToStructByName pairs them
// (none untagged, embedded by pointer or repeated).
func fieldPaths(t reflect.Type) (paths map[string][]int, exact bool) {
	paths, exact = map[string][]int{}, true
	var walk func(t reflect.Type, prefix []int)
	walk = func(t reflect.Type, prefix []int) {
		for i := range t.NumField() {
			f := t.Field(i)
			path := append(append([]int{}, prefix...), i)
			tag, ok := f.Tag.Lookup("db")
			name, _, _ := strings.Cut(tag, ",")
			switch {
			case name == "-":
			case f.Anonymous && !ok && f.Type.Kind() == reflect.Struct:
				walk(f.Type, path)
			case f.IsExported():
				if name == "" {
					name, exact = strings.ToLower(f.Name), false
				}
				if _, dup := paths[name]; dup || f.Anonymous {
					exact = false
				}
				if _, dup := paths[name]; !dup {
					paths[name] = path
				}
			}
		}
	}
	walk(t, nil)
	return paths, exact
}
