package db

import (
	"context"
	"reflect"
)

// CouponListColumns returns, for a coupons page with filter cf, the names
// of the statement's columns as the server describes them, in order, and
// the db names of the listedCoupon fields a scan by position fills, in
// order (embedded structs flattened, fields tagged "-" left out, as
// pgx.RowToStructByPos does), for the test that the two agree.
func CouponListColumns(ctx context.Context, s *Store, site string, cf CouponFilter) (columns, fields []string, err error) {
	sql, args, err := couponListQuery(site, cf, 0, 50)
	if err != nil {
		return nil, nil, err
	}
	rows, err := s.pool.Query(ctx, sql, args...)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	for _, d := range rows.FieldDescriptions() {
		columns = append(columns, d.Name)
	}
	var walk func(t reflect.Type)
	walk = func(t reflect.Type) {
		for i := range t.NumField() {
			f := t.Field(i)
			switch tag := f.Tag.Get("db"); {
			case f.Anonymous && f.Type.Kind() == reflect.Struct:
				walk(f.Type)
			case f.PkgPath != "" || tag == "-":
			default:
				fields = append(fields, tag)
			}
		}
	}
	walk(reflect.TypeOf(listedCoupon{}))
	return columns, fields, rows.Err()
}
