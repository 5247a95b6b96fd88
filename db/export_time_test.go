package db

import (
	"math/rand/v2"
	"testing"
	"time"
)

// appendCivil and appendDate against the Go standard library's time
// package, which wrote these texts before: every day boundary of the first
// and last years and of leap days, and random instants over years 1 to
// 9999, at whole seconds and with every fraction length.
func TestAppendCivilMatchesTime(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 11))
	micros := func(t time.Time) int64 { return t.UnixMicro() - pgEpoch.UnixMicro() }
	lo := micros(time.Date(1, 1, 1, 0, 0, 0, 0, time.UTC))
	hi := micros(time.Date(9999, 12, 31, 23, 59, 59, 999999000, time.UTC))
	var us []int64
	for _, d := range []time.Time{time.Date(1, 1, 1, 0, 0, 0, 0, time.UTC), time.Date(1, 12, 31, 0, 0, 0, 0, time.UTC),
		time.Date(1600, 2, 29, 0, 0, 0, 0, time.UTC), time.Date(1900, 2, 28, 0, 0, 0, 0, time.UTC),
		time.Date(1969, 12, 31, 0, 0, 0, 0, time.UTC), time.Date(1970, 1, 1, 0, 0, 0, 0, time.UTC),
		time.Date(1999, 12, 31, 0, 0, 0, 0, time.UTC), time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC),
		time.Date(2000, 2, 29, 0, 0, 0, 0, time.UTC), time.Date(2024, 2, 29, 0, 0, 0, 0, time.UTC),
		time.Date(9999, 12, 31, 0, 0, 0, 0, time.UTC)} {
		base := micros(d)
		us = append(us, base-1, base, base+1, base+86_400_000_000-1)
	}
	for range 300000 {
		x := lo + r.Int64N(hi-lo+1)
		switch r.IntN(4) {
		case 0:
			x -= x % 1_000_000
		case 1:
			x -= x % 1000
		}
		us = append(us, x)
	}
	for _, x := range us {
		if x < lo || x > hi {
			continue
		}
		tm := time.UnixMicro(x + pgEpoch.UnixMicro()).UTC()
		want := tm.Format("2006-01-02T15:04:05.000000Z")
		if got, ok := appendCivil(nil, x, false); !ok || string(got) != want {
			t.Fatalf("%d µs: %q %v, time %q", x, got, ok, want)
		}
		want = tm.Format(time.RFC3339Nano)
		if got, ok := appendCivil(nil, x, true); !ok || string(got) != want {
			t.Fatalf("%d µs trimmed: %q %v, time %q", x, got, ok, want)
		}
		days := x / 86_400_000_000
		if x < 0 && x%86_400_000_000 != 0 {
			days--
		}
		want = pgEpoch.AddDate(0, 0, int(days)).Format(time.DateOnly)
		if got, ok := appendDate(nil, days); !ok || string(got) != want {
			t.Fatalf("day %d: %q %v, time %q", days, got, ok, want)
		}
	}
	for _, x := range []int64{lo - 1, hi + 1} {
		if _, ok := appendCivil(nil, x, false); ok {
			t.Errorf("%d µs: written, want refused (outside years 1 to 9999)", x)
		}
	}
}
