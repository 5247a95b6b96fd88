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
	paths := map[string][]int{}
	var walk func(t reflect.Type, prefix []int)
	walk = func(t reflect.Type, prefix []int) {
		for i := range t.NumField() {
			f := t.Field(i)
			path := append(append([]int{}, prefix...), i)
			tag, ok := f.Tag.Lookup("db")
			switch {
			case tag == "-":
			case f.Anonymous && !ok && f.Type.Kind() == reflect.Struct:
				walk(f.Type, path)
			case f.IsExported():
				name := strings.Split(tag, ",")[0]
				if name == "" {
					name = strings.ToLower(f.Name)
				}
				if _, dup := paths[name]; !dup {
					paths[name] = path
				}
			}
		}
	}
	walk(reflect.TypeFor[T](), nil)
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
