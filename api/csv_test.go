package api_test

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"net/http"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi3"

	"etchlog/api"
	"etchlog/openapi"
)

// csvSite fills a site with at least one item of every list: coupons with
// sections (one remark holding a comma, quotes and a line break, one that
// a spreadsheet would take for a formula, one negative reinforcement), a
// corrected coupon, a calibration, sign-offs, ranges, a flagged production
// record. It returns the ids the lists need.
func csvSite(t *testing.T, e *testEnv) (couponID, procID string) {
	t.Helper()
	fits := e.storeFitCoupons(5, 0)
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	couponID = fits[0].id
	m := measurementBody("C")
	m["remark"] = "undercut, \"light\"\r\nsecond line"
	m["reinforcement_mm"] = -0.4
	e.create("/v1/coupons/"+couponID+"/measurements", "technician", m)
	m = measurementBody("D")
	m["remark"] = "=1+2"
	e.create("/v1/coupons/"+couponID+"/measurements", "technician", m)
	c := e.do(http.MethodGet, "/v1/coupons/"+couponID, "technician", nil).object(t)
	c["welder_id"], c["base_revision"], c["reason"] = "W-08", 1, "welder id misread from the stamp"
	if r := e.do(http.MethodPut, "/v1/coupons/"+couponID, "technician", c); r.status != http.StatusOK {
		t.Fatalf("correct coupon: %d %s", r.status, r.body)
	}
	procID = e.rangedProcedure()
	rows := []any{productionBody(procID, uniq("WELD"), 320), productionBody(procID, uniq("WELD"), 280)}
	if r := e.do(http.MethodPost, "/v1/production-records", "technician", map[string]any{"records": rows}); r.status != http.StatusCreated {
		t.Fatalf("production batch: %d %s", r.status, r.body)
	}
	stmt := map[string]any{"revision": 1, "statement": "Reviewed; accepted."}
	e.create("/v1/procedures/"+procID+"/sign-off", "engineer", stmt)
	e.create("/v1/calibrations/"+cal.ID+"/sign-off", "engineer", stmt)
	return couponID, procID
}

// TestConventionCSV reads every list as CSV with encoding/csv and compares it,
// row by row and column by column, with the same list read as JSON pages.
// The file must follow RFC 4180 (section 2: CRLF after every record, a
// header row, the same number of fields in every record, fields holding a
// comma, a double quote or a line break enclosed in double quotes and a
// double quote inside doubled) and state the unit of every quantity in its
// header, by the unit symbols of NIST SP 811 (A, V, mm, mm/s, in/min, °C,
// °F, mm², in², MPa, kg/h, lb/h). CSV reads 2 rows per page here, so every
// file crosses page boundaries.
func TestConventionCSV(t *testing.T) {
	e := newEnv(t)
	defer api.SetCSVPageSize(2)()
	couponID, procID := csvSite(t, e)
	fitProc := e.do(http.MethodGet, "/v1/coupons/"+couponID, "auditor", nil).object(t)["procedure_id"].(string)
	lists := []string{
		"/v1/procedures", "/v1/qualification-records", "/v1/coupons", "/v1/coupons?procedure_id=" + fitProc,
		"/v1/coupons/" + couponID + "/measurements", "/v1/measurements", "/v1/audit/events", "/v1/rule-sets",
		"/v1/production-records", "/v1/flags", "/v1/calibrations", "/v1/sign-offs",
		"/v1/coupons/" + couponID + "/revisions", "/v1/procedures/" + procID + "/revisions",
	}
	for _, list := range lists {
		for _, units := range []string{"", "units=inch-pound"} {
			if units != "" && (strings.Contains(list, "audit") || strings.Contains(list, "sign-offs") || strings.Contains(list, "rule-sets")) {
				continue // these take no units
			}
			t.Run(strings.TrimPrefix(list, "/v1/")+"?"+units, func(t *testing.T) {
				want := jsonAll(t, e, list, units)
				if len(want) == 0 {
					t.Fatalf("%s has no items: the fixture should fill every list", list)
				}
				r := e.do(http.MethodGet, withParams(list, units, "format=csv"), "auditor", nil)
				if r.status != http.StatusOK {
					t.Fatalf("CSV: %d %s", r.status, r.body)
				}
				if ct := r.header.Get("Content-Type"); !strings.HasPrefix(ct, "text/csv") || !strings.Contains(ct, "charset=utf-8") {
					t.Errorf("Content-Type = %q, want text/csv; charset=utf-8", ct)
				}
				checkRFC4180(t, r.body)
				header, rows := readCSV(t, r.body)
				checkUnits(t, header, want)
				compareRows(t, header, rows, want, false)
			})
		}
	}
}

// TestConventionCSVDeclared checks that every list operation of the
// document (a GET answering {items}) takes format and spreadsheet and
// declares its text/csv answer, so a new list cannot leave CSV out.
func TestConventionCSVDeclared(t *testing.T) {
	doc, err := openapi3.NewLoader().LoadFromData(openapi.Spec)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for path, item := range doc.Paths.Map() {
		op := item.Get
		if op == nil || op.Responses.Status(200) == nil {
			continue
		}
		content := op.Responses.Status(200).Value.Content
		js := content.Get("application/json")
		if js == nil || js.Schema.Value.Properties["items"] == nil {
			continue
		}
		n++
		for _, p := range []string{"format", "spreadsheet"} {
			if op.Parameters.GetByInAndName(openapi3.ParameterInQuery, p) == nil {
				t.Errorf("GET %s lists items but takes no %s parameter", path, p)
			}
		}
		if content.Get("text/csv") == nil {
			t.Errorf("GET %s lists items but declares no text/csv answer", path)
		}
	}
	if n < 15 {
		t.Errorf("%d list operations found, want at least the 15 of today", n)
	}
}

// TestCSVSpreadsheet checks spreadsheet=true: the file starts with the
// UTF-8 byte-order mark EF BB BF (The Unicode Standard, section 23.8), a
// text cell starting with = gets a leading apostrophe (the OWASP advice on
// CSV injection), and a negative number is left as it is.
func TestCSVSpreadsheet(t *testing.T) {
	e := newEnv(t)
	couponID, _ := csvSite(t, e)
	list := "/v1/coupons/" + couponID + "/measurements"
	r := e.do(http.MethodGet, list+"?format=csv&spreadsheet=true", "auditor", nil)
	if !bytes.HasPrefix(r.body, []byte{0xEF, 0xBB, 0xBF}) {
		t.Fatalf("spreadsheet CSV starts % x, want the byte-order mark EF BB BF", r.body[:min(3, len(r.body))])
	}
	plain := e.do(http.MethodGet, list+"?format=csv", "auditor", nil)
	if bytes.HasPrefix(plain.body, []byte{0xEF}) {
		t.Errorf("plain CSV starts with a byte-order mark")
	}
	header, rows := readCSV(t, r.body[3:])
	compareRows(t, header, rows, jsonAll(t, e, list, ""), true)
	found := false
	for _, row := range rows {
		for _, cell := range row {
			found = found || cell == "'=1+2"
		}
	}
	if !found {
		t.Errorf("no cell '=1+2 in %q", rows)
	}
}

// TestCSVRefusals: limit does not go with a whole-list answer, and a bad
// cursor is refused before any row is sent.
func TestCSVRefusals(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	wantProblem(t, "limit", e.do(http.MethodGet, "/v1/coupons?format=csv&limit=5", "auditor", nil), http.StatusBadRequest, "limit")
	wantProblem(t, "cursor", e.do(http.MethodGet, "/v1/coupons?format=csv&cursor=bm9wZQ", "auditor", nil), http.StatusBadRequest, "cursor")
	wantProblem(t, "format", e.do(http.MethodGet, "/v1/coupons?format=xml", "auditor", nil), http.StatusUnprocessableEntity, "format")
}

// withParams adds "name=value" parameters (skipping empty ones) to a path.
func withParams(path string, params ...string) string {
	for _, p := range params {
		if p == "" {
			continue
		}
		if strings.Contains(path, "?") {
			path += "&" + p
		} else {
			path += "?" + p
		}
	}
	return path
}

// jsonAll reads every JSON page of a list, following next_cursor until a
// page comes back empty.
func jsonAll(t *testing.T, e *testEnv, list, units string) []map[string]any {
	t.Helper()
	var all []map[string]any
	cursor := ""
	for range 1000 {
		path := withParams(list, units)
		if cursor != "" {
			path = withParams(path, "cursor="+cursor)
		}
		r := e.do(http.MethodGet, path, "auditor", nil)
		if r.status != http.StatusOK {
			t.Fatalf("GET %s: %d %s", path, r.status, r.body)
		}
		var page struct {
			Items []map[string]any `json:"items"`
			Next  string           `json:"next_cursor"`
		}
		dec := json.NewDecoder(bytes.NewReader(r.body))
		dec.UseNumber()
		if err := dec.Decode(&page); err != nil {
			t.Fatal(err)
		}
		all = append(all, page.Items...)
		if len(page.Items) == 0 || page.Next == "" {
			return all
		}
		cursor = page.Next
	}
	t.Fatalf("%s: more than 1000 pages", list)
	return nil
}

// checkRFC4180 walks the bytes: outside a quoted field every line break is
// CR LF, the file ends with one, and a quote opens a field or is doubled.
func checkRFC4180(t *testing.T, b []byte) {
	t.Helper()
	if !bytes.HasSuffix(b, []byte("\r\n")) {
		t.Errorf("file does not end with CRLF: %q", b[max(0, len(b)-20):])
	}
	quoted, fieldStart := false, true
	for i := 0; i < len(b); i++ {
		switch ch := b[i]; {
		case quoted && ch == '"' && i+1 < len(b) && b[i+1] == '"':
			i++ // an escaped quote
		case quoted && ch == '"':
			quoted = false
		case quoted:
		case ch == '"' && !fieldStart:
			t.Fatalf("byte %d: a quote inside an unquoted field", i)
		case ch == '"':
			quoted = true
		case ch == '\r' && (i+1 >= len(b) || b[i+1] != '\n'), ch == '\n' && (i == 0 || b[i-1] != '\r'):
			t.Fatalf("byte %d: a bare line break outside a quoted field", i)
		}
		fieldStart = !quoted && (b[i] == ',' || b[i] == '\n')
	}
	if quoted {
		t.Errorf("file ends inside a quoted field")
	}
}

// readCSV parses a CSV answer with encoding/csv in its strict mode (no lazy
// quotes, every record as long as the header).
func readCSV(t *testing.T, b []byte) (header []string, rows [][]string) {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("encoding/csv: %v\n%s", err, b)
	}
	if len(recs) == 0 {
		t.Fatal("no header row")
	}
	return recs[0], recs[1:]
}

// columnName is a header without its unit: "current_a (A)" → current_a.
func columnName(h string) string {
	name, _, _ := strings.Cut(h, " (")
	return name
}

// flatten spreads a JSON item the way the CSV names its columns: a nested
// object's members under dotted names, an array as one value.
func flatten(prefix string, v any, out map[string]any) {
	m, ok := v.(map[string]any)
	if !ok {
		out[prefix] = v
		return
	}
	for k, x := range m {
		name := k
		if prefix != "" {
			name = prefix + "." + k
		}
		if sub, ok := x.(map[string]any); ok && len(sub) > 0 {
			flatten(name, sub, out)
			continue
		}
		out[name] = x
	}
}

// compareRows checks that rows hold exactly the items, in order: every
// member of an item in its column, every other cell empty.
func compareRows(t *testing.T, header []string, rows [][]string, items []map[string]any, sheet bool) {
	t.Helper()
	if len(rows) != len(items) {
		t.Fatalf("CSV has %d rows, JSON %d items", len(rows), len(items))
	}
	col := map[string]int{}
	for i, h := range header {
		col[columnName(h)] = i
	}
	for i, item := range items {
		flat := map[string]any{}
		flatten("", item, flat)
		seen := map[int]bool{}
		for name, v := range flat {
			j, ok := col[name]
			if !ok && v == nil && hasPrefixed(header, name+".") {
				continue // a null object: its columns are empty
			}
			if !ok {
				t.Errorf("row %d: JSON member %s has no column in %q", i, name, header)
				continue
			}
			seen[j] = true
			if !sameCell(rows[i][j], v, sheet) {
				t.Errorf("row %d, %s: CSV %q, JSON %v", i, name, rows[i][j], v)
			}
		}
		for j, cell := range rows[i] {
			if !seen[j] && cell != "" {
				t.Errorf("row %d, %s: CSV %q where the JSON item has no member", i, header[j], cell)
			}
		}
	}
}

// sameCell compares one cell with the JSON value: text as is (after the
// spreadsheet apostrophe), numbers by value, arrays and objects as JSON.
func sameCell(cell string, v any, sheet bool) bool {
	switch x := v.(type) {
	case nil:
		return cell == ""
	case string:
		// encoding/csv reads a quoted field's CR LF as LF (its package
		// documentation says so); the raw bytes are checked by checkRFC4180.
		x = strings.ReplaceAll(x, "\r\n", "\n")
		if sheet && x != "" && strings.ContainsRune("=+-@\t\r", rune(x[0])) {
			return cell == "'"+x
		}
		return cell == x
	case bool:
		return cell == strconv.FormatBool(x)
	case json.Number:
		got, err1 := strconv.ParseFloat(cell, 64)
		want, err2 := x.Float64()
		return err1 == nil && err2 == nil && got == want
	}
	var got any
	dec := json.NewDecoder(strings.NewReader(cell))
	dec.UseNumber()
	if err := dec.Decode(&got); err != nil {
		return false
	}
	return reflect.DeepEqual(normalizeNumbers(got), normalizeNumbers(v))
}

// normalizeNumbers turns json.Numbers into float64s for comparison.
func normalizeNumbers(v any) any {
	switch x := v.(type) {
	case json.Number:
		f, _ := x.Float64()
		return f
	case []any:
		for i := range x {
			x[i] = normalizeNumbers(x[i])
		}
	case map[string]any:
		for k := range x {
			x[k] = normalizeNumbers(x[k])
		}
	}
	return v
}

// unitSymbols are the unit symbols of NIST SP 811 (sections 4 and 6,
// Table 5 for °C, Appendix B for the inch-pound units) for the suffixes
// the API writes.
var unitSymbols = []struct{ suffix, unit string }{
	{"_kg_h_a2_mm", "kg/(h·A²·mm)"}, {"_lb_h_a2_in", "lb/(h·A²·in)"}, {"_kg_h_a", "kg/(h·A)"}, {"_lb_h_a", "lb/(h·A)"},
	{"_in_min", "in/min"}, {"_m_min", "m/min"}, {"_mm_s", "mm/s"}, {"_kg_h", "kg/h"}, {"_lb_h", "lb/h"},
	{"_j_mm", "J/mm"}, {"_kj_in", "kJ/in"}, {"_mm2", "mm²"}, {"_in2", "in²"}, {"_mpa", "MPa"},
	{"_mm", "mm"}, {"_in", "in"}, {"_pct", "%"}, {"_a", "A"}, {"_v", "V"}, {"_c", "°C"}, {"_f", "°F"},
}

// checkUnits checks that every number column whose name ends in a unit
// suffix states that unit, and that the value, bounds and excess of a flag
// point to the flag's own unit column.
func checkUnits(t *testing.T, header []string, items []map[string]any) {
	t.Helper()
	numeric := map[string]bool{}
	for _, item := range items {
		flat := map[string]any{}
		flatten("", item, flat)
		for k, v := range flat {
			if _, ok := v.(json.Number); ok {
				numeric[k] = true
			}
		}
	}
	for _, h := range header {
		name := columnName(h)
		if !numeric[name] {
			continue
		}
		dot := strings.LastIndex(name, ".")
		last := name[dot+1:]
		if slicesContain([]string{"value", "min", "max", "excess"}, last) && slicesContain(header, name[:dot+1]+"unit") {
			if !strings.HasSuffix(h, "(in the row's unit)") {
				t.Errorf("header %q: a flag's %s is in the unit of its unit column; the header should say so", h, last)
			}
			continue
		}
		for _, s := range unitSymbols {
			if strings.HasSuffix(last, s.suffix) && len(last) > len(s.suffix) {
				if want := fmt.Sprintf("%s (%s)", name, s.unit); h != want {
					t.Errorf("header %q, want %q", h, want)
				}
				break
			}
		}
	}
}

func slicesContain(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// hasPrefixed reports whether a header starts with prefix.
func hasPrefixed(header []string, prefix string) bool {
	for _, h := range header {
		if strings.HasPrefix(h, prefix) {
			return true
		}
	}
	return false
}
