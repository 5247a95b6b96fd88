package db

import (
	"encoding/binary"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgtype"
)

// rawCase is one raw value of a column and a fresh target for it.
type rawCase struct {
	oid    uint32
	format int16
	raw    []byte
	target func() any
}

func be32(v int32) []byte { return binary.BigEndian.AppendUint32(nil, uint32(v)) }
func be64(v int64) []byte { return binary.BigEndian.AppendUint64(nil, uint64(v)) }

// TestScanRawMatchesPgx decodes raw values with scanRaw and with pgx's own
// scan (pgtype.Map.Scan, what rows.Scan runs for each value), the
// reference: where scanRaw takes a value, both must give the same Go
// value, the time's zone included; where it does not, it must say so.
// The values: random ones of every form the lists read, the ends of the
// years 1 to 9999, infinities, NULLs, text-format numbers and wrong lengths.
func TestScanRawMatchesPgx(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 8))
	m := pgtype.NewMap()
	bin, txt := int16(pgtype.BinaryFormatCode), int16(pgtype.TextFormatCode)
	str := func() any { return new(string) }
	optStr := func() any { return new(*string) }
	i := func() any { return new(int) }
	i64 := func() any { return new(int64) }
	f := func() any { return new(float64) }
	optF := func() any { return new(*float64) }
	id := func() any { return new(uuid.UUID) }
	optID := func() any { return new(*uuid.UUID) }
	at := func() any { return new(time.Time) }
	optAt := func() any { return new(*time.Time) }
	bytes := func() any { return new([]byte) }
	day := func() any { return new(Date) }
	boolean := func() any { return new(bool) }
	us := func(t time.Time) int64 { return t.UnixMicro() - pgEpoch.UnixMicro() }
	days := func(t time.Time) int32 { return int32(t.Sub(pgEpoch).Hours() / 24) }
	first, last := time.Date(1, 1, 1, 0, 0, 0, 0, time.UTC), time.Date(9999, 12, 31, 23, 59, 59, 999999000, time.UTC)
	cases := []rawCase{
		{pgtype.TextOID, txt, []byte("plain"), str}, {pgtype.TextOID, bin, []byte("Schweißnaht \"<&>\" 溶接"), str},
		{pgtype.VarcharOID, txt, []byte(""), str}, {pgtype.TextOID, txt, []byte("x"), optStr}, {pgtype.TextOID, txt, nil, optStr},
		{pgtype.TextOID, txt, nil, str}, {pgtype.Int4OID, txt, []byte("12"), str},
		{pgtype.BoolOID, bin, []byte{1}, boolean}, {pgtype.BoolOID, bin, []byte{0}, boolean}, {pgtype.BoolOID, txt, []byte("t"), boolean},
		{pgtype.Int4OID, bin, be32(math.MaxInt32), i}, {pgtype.Int4OID, bin, be32(math.MinInt32), i}, {pgtype.Int4OID, txt, []byte("7"), i},
		{pgtype.Int8OID, bin, be64(math.MinInt64), i}, {pgtype.Int8OID, bin, be64(1 << 40), i64}, {pgtype.Int4OID, bin, be32(3), i64},
		{pgtype.Int4OID, bin, []byte{1, 2}, i}, {pgtype.Int8OID, bin, nil, i64},
		{pgtype.Float8OID, bin, be64(int64(math.Float64bits(math.NaN()))), f}, {pgtype.Float8OID, bin, be64(int64(math.Float64bits(math.Inf(-1)))), optF},
		{pgtype.Float8OID, bin, nil, optF}, {pgtype.Float8OID, txt, []byte("1.5"), f}, {pgtype.Float4OID, bin, be32(1), f},
		{pgtype.NumericOID, txt, []byte("2.5"), f},
		{pgtype.UUIDOID, bin, nil, optID}, {pgtype.UUIDOID, txt, []byte(uuid.NewString()), id}, {pgtype.UUIDOID, bin, []byte{1}, id},
		{pgtype.TimestamptzOID, bin, be64(math.MaxInt64), at}, {pgtype.TimestamptzOID, bin, be64(math.MinInt64), at},
		{pgtype.TimestamptzOID, bin, be64(us(first)), at}, {pgtype.TimestamptzOID, bin, be64(us(last)), at},
		{pgtype.TimestamptzOID, bin, be64(us(first) - 1), at}, {pgtype.TimestamptzOID, bin, be64(us(last) + 1), at},
		{pgtype.TimestamptzOID, txt, []byte("2026-01-02 03:04:05+00"), at}, {pgtype.TimestamptzOID, bin, nil, at},
		{pgtype.DateOID, bin, be32(math.MaxInt32), day}, {pgtype.DateOID, bin, be32(math.MinInt32), day},
		{pgtype.DateOID, bin, be32(days(first)), day}, {pgtype.DateOID, bin, be32(days(last)), day},
		{pgtype.DateOID, bin, be32(days(first) - 1), day}, {pgtype.DateOID, bin, be32(days(last) + 1), day},
		{pgtype.DateOID, txt, []byte("2026-03-04"), day}, {pgtype.DateOID, bin, nil, day},
		{pgtype.TimestamptzOID, bin, nil, optAt}, {pgtype.TimestamptzOID, bin, be64(us(last) + 1), optAt},
		{pgtype.TimestamptzOID, txt, []byte("2026-01-02 03:04:05+00"), optAt},
		{pgtype.ByteaOID, bin, nil, bytes}, {pgtype.ByteaOID, bin, []byte{}, bytes}, {pgtype.ByteaOID, bin, []byte{0, 255, 7}, bytes},
		{pgtype.ByteaOID, txt, []byte("\\x00ff"), bytes}, {pgtype.TextOID, bin, []byte("ab"), bytes},
	}
	lo, hi := us(first), us(last)
	for range 2000 {
		u := uuid.New()
		cases = append(cases,
			rawCase{pgtype.Int4OID, bin, be32(int32(r.Uint32())), i},
			rawCase{pgtype.Float8OID, bin, be64(int64(r.Uint64())), f},
			rawCase{pgtype.Float8OID, bin, be64(int64(math.Float64bits(r.NormFloat64() * 100))), optF},
			rawCase{pgtype.UUIDOID, bin, u[:], id}, rawCase{pgtype.UUIDOID, bin, u[:], optID},
			rawCase{pgtype.TimestamptzOID, bin, be64(lo + r.Int64N(hi-lo)), at},
			rawCase{pgtype.TimestamptzOID, bin, be64(lo + r.Int64N(hi-lo)), optAt},
			rawCase{pgtype.ByteaOID, bin, u[:r.IntN(17)], bytes},
			rawCase{pgtype.TimestamptzOID, bin, be64(r.Int64N(1e16) - 5e15), at},
			rawCase{pgtype.DateOID, bin, be32(days(first) + r.Int32N(days(last)-days(first))), day})
	}
	taken := 0
	for n, c := range cases {
		fd := []pgconn.FieldDescription{{DataTypeOID: c.oid, Format: c.format}}
		got, want := c.target(), c.target()
		ok := scanRaw(fd, [][]byte{c.raw}, []any{got})
		werr := m.Scan(c.oid, c.format, c.raw, want)
		if !ok {
			continue // rows.Scan decides
		}
		taken++
		if werr != nil {
			t.Fatalf("case %d (oid %d, format %d, %x): scanRaw took it, pgx refuses: %v", n, c.oid, c.format, c.raw, werr)
		}
		if !sameScan(got, want) {
			t.Fatalf("case %d (oid %d, format %d, %x): scanRaw %v, pgx %v", n, c.oid, c.format, c.raw,
				reflect.ValueOf(got).Elem(), reflect.ValueOf(want).Elem())
		}
	}
	if taken < 2000*10 {
		t.Errorf("scanRaw took %d of the %d random values, want all", taken, 2000*10)
	}
}

// sameScan compares two scan targets, doubles by their bits (NaN is one).
func sameScan(a, b any) bool {
	switch a := a.(type) {
	case *float64:
		return math.Float64bits(*a) == math.Float64bits(*b.(*float64))
	case **float64:
		b := *b.(**float64)
		return *a == nil && b == nil || *a != nil && b != nil && math.Float64bits(**a) == math.Float64bits(*b)
	}
	return reflect.DeepEqual(a, b)
}
