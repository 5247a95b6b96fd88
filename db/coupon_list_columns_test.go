package db

import (
	"context"
	"fmt"
	"reflect"
)

// CouponListColumns returns, for a coupons page with filter cf, the names
// of the statement's columns as the server describes them, in order; the
// db names of listedCoupon's fields in order (embedded structs flattened,
// fields tagged "-" left out); and, for each of those fields, whether
// listedCoupon.targets holds its address in the same place. The test of
// the list's scan by position compares them.
func CouponListColumns(ctx context.Context, s *Store, site string, cf CouponFilter) (columns, fields []string, targeted []bool, err error) {
	sql, args, err := couponListQuery(site, cf, 0, 50)
	if err != nil {
		return nil, nil, nil, err
	}
	rows, err := s.pool.Query(ctx, sql, args...)
	if err != nil {
		return nil, nil, nil, err
	}
	defer rows.Close()
	for _, d := range rows.FieldDescriptions() {
		columns = append(columns, d.Name)
	}
	var c listedCoupon
	targets := c.targets()
	var walk func(v reflect.Value)
	walk = func(v reflect.Value) {
		for i := range v.NumField() {
			f := v.Type().Field(i)
			switch tag := f.Tag.Get("db"); {
			case f.Anonymous && f.Type.Kind() == reflect.Struct:
				walk(v.Field(i))
			case f.PkgPath != "" || tag == "-":
			default:
				n := len(fields)
				fields = append(fields, tag)
				targeted = append(targeted, n < len(targets) &&
					reflect.ValueOf(targets[n]).Pointer() == v.Field(i).Addr().Pointer() &&
					reflect.TypeOf(targets[n]).Elem() == f.Type)
			}
		}
	}
	walk(reflect.ValueOf(&c).Elem())
	if len(targets) != len(fields) {
		targeted = append(targeted, false)
	}
	return columns, fields, targeted, rows.Err()
}

// CouponListRawScan reads a coupons page with filter cf twice over the same
// rows: each row decoded by scanRaw and scanned by pgx. It returns how many
// rows scanRaw took whole, and each row's two results where they differ.
func CouponListRawScan(ctx context.Context, s *Store, site string, cf CouponFilter) (rows, taken int, diffs []string, err error) {
	sql, args, err := couponListQuery(site, cf, 0, 50)
	if err != nil {
		return 0, 0, nil, err
	}
	rs, err := s.pool.Query(ctx, sql, args...)
	if err != nil {
		return 0, 0, nil, err
	}
	defer rs.Close()
	for rs.Next() {
		var raw, scanned listedCoupon
		rows++
		if scanRaw(rs.FieldDescriptions(), rs.RawValues(), raw.targets()) {
			taken++
		}
		if err := rs.Scan(scanned.targets()...); err != nil {
			return rows, taken, diffs, err
		}
		if !reflect.DeepEqual(raw, scanned) {
			diffs = append(diffs, fmt.Sprintf("%+v\n  pgx: %+v", raw, scanned))
		}
	}
	return rows, taken, diffs, rs.Err()
}
