package db

import (
	"encoding/json"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5/pgtype"
)

// Date is a calendar day (no time of day, no zone), stored as PostgreSQL date
// and written in JSON as "YYYY-MM-DD".
type Date struct{ time.Time }

// DateOf returns the calendar day of t.
func DateOf(t time.Time) Date {
	return Date{time.Date(t.Year(), t.Month(), t.Day(), 0, 0, 0, 0, time.UTC)}
}

// ParseDate reads "YYYY-MM-DD".
func ParseDate(s string) (Date, error) {
	t, err := time.Parse(time.DateOnly, s)
	if err != nil {
		return Date{}, fmt.Errorf("want a date as YYYY-MM-DD, got %q", s)
	}
	return Date{t}, nil
}

// String formats the day as "YYYY-MM-DD".
func (d Date) String() string { return d.Format(time.DateOnly) }

// MarshalJSON writes "YYYY-MM-DD".
func (d Date) MarshalJSON() ([]byte, error) { return json.Marshal(d.String()) }

// UnmarshalJSON reads "YYYY-MM-DD".
func (d *Date) UnmarshalJSON(b []byte) error {
	var s string
	if err := json.Unmarshal(b, &s); err != nil {
		return err
	}
	v, err := ParseDate(s)
	if err != nil {
		return err
	}
	*d = v
	return nil
}

// ScanDate lets pgx read a date column.
func (d *Date) ScanDate(v pgtype.Date) error {
	if !v.Valid {
		*d = Date{}
		return nil
	}
	*d = Date{v.Time}
	return nil
}

// DateValue lets pgx write a date column.
func (d Date) DateValue() (pgtype.Date, error) {
	return pgtype.Date{Time: d.Time, Valid: !d.IsZero()}, nil
}

// EarliestDay is the first day a weld may be recorded on; an earlier date is
// a typing error, not a record.
var EarliestDay = Date{time.Date(1900, 1, 1, 0, 0, 0, 0, time.UTC)}

// LatestDay is the last plausible day for a weld recorded at now: one day
// ahead, so a clock in any time zone east of UTC may still write "today".
func LatestDay(now time.Time) Date { return DateOf(now.UTC().AddDate(0, 0, 1)) }

// PlausibleDay reports whether t falls between EarliestDay and LatestDay(now), inclusive.
func PlausibleDay(t, now time.Time) bool {
	d := DateOf(t.UTC())
	return !d.Before(EarliestDay.Time) && !d.After(LatestDay(now).Time)
}
