package api

import (
	"math"
	"reflect"
	"strings"
	"testing"
	"time"

	"etchlog/db"
)

// streamGoodRow is a plain production record as weld-monitoring equipment
// sends it (fixture values).
const streamGoodRow = `{"procedure_id":"0193c2a4-0000-7000-8000-00000000beef","weld_id":"R1-17","welder_id":"W-07",` +
	`"recorded_at":"2026-03-04T06:17:00Z","current_a":280,"voltage_v":29,"travel_speed_mm_s":6,` +
	`"wire_feed_speed_m_min":9.5,"ctwd_mm":19}`

// streamRowValues are the values a field of a row may hold, as JSON text:
// every shape JSON has, numbers in every grammar (and out of it), at and
// beyond the registry's bounds and float64's, strings with escapes,
// control characters (raw and escaped, C0 and C1), blank, at and over
// their length in bytes and in characters, ids in every form uuid reads
// and times in every form time reads, good and bad.
var streamRowValues = []string{
	`0`, `-0`, `1`, `-1`, `1.5`, `01`, `.5`, `5.`, `+5`, `1e3`, `1E+3`, `1e-3`, `1e400`, `-1e400`, `1e-400`, `0x10`,
	`280`, `280.0000000001`, `1000`, `1000.5`, `0.5`, `0.4999`, `9.5`, `19`, `14`, `0.75`, `374`, `600`, `2000`, `1e20`,
	`-280`, `9007199254740993`, `5e-324`, `1.7976931348623157e308`, `1.8e308`, `28 0`, `2-8`, `1e`, `1e+`, `-`, `--1`,
	`null`, `true`, `false`, `[]`, `[280]`, `{}`, `{"min":1}`, `""`, `" "`, `"280"`, `"1e3"`,
	`"W-07"`, `"  W-1  "`, `"Ø-7"`, `"\u00d8-7"`, `"a\tb"`, `"a\nb"`, `"\u0001"`, "\"\x01\"", "\"\u0085\"", `"\u0085"`,
	"\"\x7f\"", `"\""`, `"\\"`, `"\/"`, "\"\xff\xfe\"", `"` + strings.Repeat("x", 64) + `"`, `"` + strings.Repeat("x", 65) + `"`,
	`"` + strings.Repeat("é", 64) + `"`, `"` + strings.Repeat("é", 65) + `"`,
	`"0193c2a4-0000-7000-8000-00000000beef"`, `"0193C2A4-0000-7000-8000-00000000BEEF"`,
	`"{0193c2a4-0000-7000-8000-00000000beef}"`, `"urn:uuid:0193c2a4-0000-7000-8000-00000000beef"`,
	`"0193c2a400007000800000000000beef"`, `"0193c2a4-0000-7000-8000-00000000bee"`, `"00000000-0000-0000-0000-000000000000"`,
	`"2026-03-04T06:17:00Z"`, `"2026-03-04T06:17:00.123456789Z"`, `"2026-03-04T06:17:00+02:00"`, `"2026-03-04T06:17:00-23:59"`,
	`"2026-03-04t06:17:00z"`, `"2026-03-04 06:17:00Z"`, `"2026-03-04"`, `"2026-02-30T06:17:00Z"`, `"2026-03-04T24:00:00Z"`,
	`"2026-12-31T23:59:60Z"`, `"1899-12-31T23:59:59Z"`, `"1900-01-01T00:00:00Z"`, `"3000-01-01T00:00:00Z"`,
	`"2026-03-04T06:17:00.Z"`, `"2026-03-04T06:17:00,5Z"`, `"+2026-03-04T06:17:00Z"`,
}

// streamRowKeys are the keys a row may carry: every field, the spellings
// the rewrite converts, and keys the JSON path treats in its own ways.
var streamRowKeys = []string{
	"procedure_id", "weld_id", "welder_id", "recorded_at", "current_a", "voltage_v", "travel_speed_mm_s",
	"travel_speed_in_min", "travel_speed_mm_min", "wire_feed_speed_m_min", "wire_feed_speed_in_min", "ctwd_mm", "ctwd_in",
	"Current_A", "WELD_ID", "current_a ", "unknown", "site", "id", `current\u005fa`,
}

// sameRecord reports whether two bound records hold the same values:
// numbers bit for bit, times at the same instant and offset.
func sameRecord(a, b db.ProductionRecordData) bool {
	va, vb := reflect.ValueOf(a), reflect.ValueOf(b)
	for i := range va.NumField() {
		x, y := va.Field(i).Interface(), vb.Field(i).Interface()
		switch x := x.(type) {
		case float64:
			if math.Float64bits(x) != math.Float64bits(y.(float64)) {
				return false
			}
		case *float64:
			y := y.(*float64)
			if (x == nil) != (y == nil) || x != nil && math.Float64bits(*x) != math.Float64bits(*y) {
				return false
			}
		case time.Time:
			_, xo := x.Zone()
			_, yo := y.(time.Time).Zone()
			if !x.Equal(y.(time.Time)) || xo != yo {
				return false
			}
		default:
			if !reflect.DeepEqual(x, y) {
				return false
			}
		}
	}
	return true
}

// checkFastRead fails t when the direct reading takes line and the JSON
// path refuses it or binds other values.
func checkFastRead(t *testing.T, s *Server, line string) (taken bool) {
	t.Helper()
	var fast db.ProductionRecordData
	if !productionRows().read(s, []byte(line), &fast) {
		return false
	}
	slow, err := s.streamRowJSON([]byte(line))
	if err != nil {
		t.Errorf("direct reading takes %s\nthe JSON path refuses it: %v", line, err)
	} else if !sameRecord(fast, slow) {
		t.Errorf("direct reading of %s\n= %+v\nJSON path  = %+v", line, fast, slow)
	}
	return true
}

// TestStreamFastReadMatches puts every value of streamRowValues into every
// field and spelling of a good row (replacing it, and beside it), drops
// each field, and varies the row's frame (white space, trailing data,
// other shapes), and reads each line directly and by the JSON body's path:
// whenever the direct reading takes a line, the JSON path takes it too,
// with the very same values. A plain good row, in metric and in
// inch-pound spellings, is taken directly. So the direct reading never
// decides anything the JSON path would decide otherwise.
func TestStreamFastReadMatches(t *testing.T) {
	t.Parallel()
	s := &Server{validate: newValidator()}
	if productionRows() == nil {
		t.Fatal("no direct reading of production records")
	}
	inch := strings.NewReplacer(`"travel_speed_mm_s":6`, `"travel_speed_in_min":14`,
		`"wire_feed_speed_m_min":9.5`, `"wire_feed_speed_in_min":374`, `"ctwd_mm":19`, `"ctwd_in":0.75`).Replace(streamGoodRow)
	for _, good := range []string{streamGoodRow, inch, " \t" + streamGoodRow + "\r\n",
		strings.NewReplacer(`":`, `" : `, `,"`, " ,\n \"", "{", "{ ", "}", "\t}").Replace(streamGoodRow)} {
		if !checkFastRead(t, s, good) {
			t.Errorf("a good row is not taken directly: %s", good)
		}
	}
	taken, lines := 0, 0
	try := func(line string) {
		lines++
		if checkFastRead(t, s, line) {
			taken++
		}
	}
	body := strings.TrimSuffix(strings.TrimPrefix(streamGoodRow, "{"), "}")
	fields := strings.Split(body, `,"`)
	for i := range fields {
		if i > 0 {
			fields[i] = `"` + fields[i]
		}
	}
	for i, f := range fields {
		key := f[:strings.Index(f, ":")]
		rest := func(with string) string {
			out := append(append([]string{}, fields[:i]...), fields[i+1:]...)
			if with != "" {
				out = append(out, with)
			}
			return "{" + strings.Join(out, ",") + "}"
		}
		try(rest(""))
		for _, k := range streamRowKeys {
			for _, v := range streamRowValues {
				try(rest(`"` + k + `":` + v))
				if `"`+k+`"` != key {
					try(rest(f + `,"` + k + `":` + v))
				}
			}
		}
	}
	for _, frame := range []string{"", "{", "}", "[]", "null", "280", `"row"`, streamGoodRow + streamGoodRow,
		streamGoodRow + ",", streamGoodRow + " x", "[" + streamGoodRow + "]", strings.Replace(streamGoodRow, "}", ",}", 1),
		strings.Replace(streamGoodRow, ",", ",,", 1), strings.Replace(streamGoodRow, ":", "", 1),
		strings.Replace(streamGoodRow, `"W-07"`, `"W-07""`, 1), strings.Replace(streamGoodRow, "{", "{\x00", 1),
		strings.Replace(streamGoodRow, "\"weld_id\"", "'weld_id'", 1), strings.Replace(streamGoodRow, " ", "\u00a0", 1),
		strings.Replace(streamGoodRow, ",", "\u00a0,", 1), streamGoodRow[:len(streamGoodRow)-1]} {
		try(frame)
	}
	if taken < 100 {
		t.Errorf("the direct reading takes %d of %d lines; it should take the plain good ones", taken, lines)
	}
	t.Logf("%d lines, %d taken directly", lines, taken)
}

// FuzzStreamFastRead: for any line, when the direct reading takes it, the
// JSON path takes it with the same values.
func FuzzStreamFastRead(f *testing.F) {
	f.Add(streamGoodRow)
	f.Add(strings.Replace(streamGoodRow, `"ctwd_mm":19`, `"ctwd_in":0.75`, 1))
	f.Add(strings.Replace(streamGoodRow, `280`, `2.8e2`, 1))
	f.Add(strings.Replace(streamGoodRow, `"W-07"`, `"W\u002d07"`, 1))
	s := &Server{validate: newValidator()}
	f.Fuzz(func(t *testing.T, line string) {
		checkFastRead(t, s, line)
	})
}
