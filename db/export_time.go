package db

// The export writes two or three times a line (a leaf's time, its fact's
// creation time, a record's times and dates); formatting each through
// time.Time cost more than any other step of a leaf. appendCivil writes
// the same texts from the days and microseconds PostgreSQL sends, for years
// 1 to 9999 (any other, the callers format through time.Time as before);
// TestAppendCivilMatchesTime compares them with the time package.

// pgEpochDays is pgEpoch in days since 1970-01-01.
const pgEpochDays = 10957

// civil is the proleptic Gregorian date of a day counted from 1970-01-01
// (the days-from-civil inverse of the published algorithm by H. Hinnant).
func civil(days int64) (year, month, day int64) {
	z := days + 719468
	era := z / 146097
	if z < 0 && z%146097 != 0 {
		era--
	}
	doe := z - era*146097
	yoe := (doe - doe/1460 + doe/36524 - doe/146096) / 365
	doy := doe - (365*yoe + yoe/4 - yoe/100)
	mp := (5*doy + 2) / 153
	day = doy - (153*mp+2)/5 + 1
	month = mp + 3
	if mp >= 10 {
		month = mp - 9
	}
	year = yoe + era*400
	if month <= 2 {
		year++
	}
	return year, month, day
}

// appendDigits appends n (0 <= n < 10^width) as exactly width digits.
func appendDigits(b []byte, n int64, width int) []byte {
	var buf [8]byte
	for i := width - 1; i >= 0; i-- {
		buf[i] = byte('0' + n%10)
		n /= 10
	}
	return append(b, buf[:width]...)
}

// appendDate appends a day counted from pgEpoch as 2006-01-02, or reports
// false outside years 1 to 9999.
func appendDate(b []byte, days int64) ([]byte, bool) {
	y, m, d := civil(days + pgEpochDays)
	if y < 1 || y > 9999 {
		return b, false
	}
	b = appendDigits(b, y, 4)
	b = append(b, '-')
	b = appendDigits(b, m, 2)
	b = append(b, '-')
	return appendDigits(b, d, 2), true
}

// appendCivil appends microseconds since pgEpoch as a UTC time,
// 2006-01-02T15:04:05 then six fractional digits and Z (the canonical
// text), or, with trim, as time.RFC3339Nano writes it at offset zero
// (trailing zeros of the fraction dropped, the dot too when none is left).
// It reports false outside years 1 to 9999.
func appendCivil(b []byte, us int64, trim bool) ([]byte, bool) {
	days, rem := us/86_400_000_000, us%86_400_000_000
	if rem < 0 {
		days, rem = days-1, rem+86_400_000_000
	}
	b, ok := appendDate(b, days)
	if !ok {
		return b, false
	}
	sec, frac := rem/1_000_000, rem%1_000_000
	b = append(b, 'T')
	b = appendDigits(b, sec/3600, 2)
	b = append(b, ':')
	b = appendDigits(b, sec/60%60, 2)
	b = append(b, ':')
	b = appendDigits(b, sec%60, 2)
	switch {
	case !trim:
		b = append(b, '.')
		b = appendDigits(b, frac, 6)
	case frac != 0:
		width := 6
		for frac%10 == 0 {
			frac /= 10
			width--
		}
		b = append(b, '.')
		b = appendDigits(b, frac, width)
	}
	return append(b, 'Z'), true
}

// appendExportTime appends microseconds since pgEpoch as the canonical
// timestamptz text (appendRawTime's).
func appendExportTime(b []byte, us int64) []byte {
	if out, ok := appendCivil(b, us, false); ok {
		return out
	}
	return appendRawTime(b, us)
}
