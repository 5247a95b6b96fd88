package api_test

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"strings"
	"testing"

	"etchlog/db"
)

// importHeader is every column of a metric import file.
var importHeader = []string{
	"procedure_id", "qualification_record_id", "coupon_mark", "welder_id", "power_source_id", "filler_lot",
	"welded_on", "joint_type", "thickness_mm", "pass_number", "current_a", "voltage_v", "travel_speed_mm_s",
	"wire_feed_speed_m_min", "ctwd_mm", "wire_diameter_mm", "shielding_gas", "polarity", "position",
	"preheat_c", "interpass_c",
	"section", "penetration_mm", "bead_width_mm", "reinforcement_mm", "leg1_mm", "leg2_mm", "throat_mm",
	"fused_area_mm2", "acceptance", "inspector", "remark",
}

// importRow is one file row: the fixture coupon's columns and, when section
// is given, the fixture section's, each as text.
func importRow(procedureID, mark, section string) map[string]string {
	row := map[string]string{}
	for k, v := range couponBody(procedureID, "", mark) {
		row[k] = fmt.Sprint(v)
	}
	if section != "" {
		for k, v := range measurementBody(section) {
			row[k] = fmt.Sprint(v)
		}
	}
	return row
}

// importFile writes rows under header as CSV (a column a row lacks is empty).
func importFile(tb testing.TB, header []string, rows []map[string]string) string {
	tb.Helper()
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	if err := w.Write(header); err != nil {
		tb.Fatal(err)
	}
	for _, r := range rows {
		rec := make([]string, len(header))
		for j, h := range header {
			rec[j] = r[h]
		}
		if err := w.Write(rec); err != nil {
			tb.Fatal(err)
		}
	}
	w.Flush()
	return b.String()
}

// importReport is the answer of POST /v1/coupons/import.
type importReport struct {
	Mode       string        `json:"mode"`
	Written    bool          `json:"written"`
	Rows       int           `json:"rows"`
	Coupons    int           `json:"coupons"`
	New        int           `json:"new_coupons"`
	NewSection int           `json:"new_sections"`
	Unchanged  int           `json:"unchanged_coupons"`
	Refused    int           `json:"refused_coupons"`
	Errors     []db.RowIssue `json:"errors"`
}

// importAs sends an import file in a mode and decodes the 200 report.
func (e *testEnv) importAs(tb testing.TB, mode, file string) importReport {
	tb.Helper()
	path := "/v1/coupons/import"
	if mode != "" {
		path += "?mode=" + mode
	}
	r := e.doType(http.MethodPost, path, "technician", "text/csv", file)
	if r.status != http.StatusOK {
		tb.Fatalf("import (%s) = %d %s, want 200", mode, r.status, r.body)
	}
	var rep importReport
	if err := json.Unmarshal(r.body, &rep); err != nil {
		tb.Fatal(err)
	}
	return rep
}

// couponByMark reads the current coupon with a mark (nil: none).
func (e *testEnv) couponByMark(tb testing.TB, mark string) map[string]any {
	tb.Helper()
	items := e.do(http.MethodGet, "/v1/coupons?coupon_mark="+url.QueryEscape(mark), "auditor", nil).items(tb)
	if len(items) == 0 {
		return nil
	}
	return items[0]
}

// logSize is the number of leaves the site's log holds or has pending (a
// pending entry of many leaves counts each leaf it names).
func (e *testEnv) logSize(tb testing.TB) int {
	tb.Helper()
	var n int
	if err := e.store.Pool().QueryRow(tb.Context(), `SELECT (SELECT coalesce(sum(coalesce(cardinality(record_ids), 1)), 0)
			FROM log_pending WHERE site = $1) +
		(SELECT count(*) FROM log_leaves WHERE site = $1)`, e.site).Scan(&n); err != nil {
		tb.Fatal(err)
	}
	return n
}

// TestImportDryRunThenCommit seeds a file with bad rows: the dry run names
// each exactly (row, column, reason) and writes nothing; the commit writes
// the other coupons whole, each with revision 1, its sections and a log leaf
// per record; importing the same file again writes nothing new.
func TestImportDryRunThenCommit(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	missing := "0193c2a4-0000-7000-8000-00000000dead"
	ok1, ok2, ok3 := uniq("IMP"), uniq("IMP"), uniq("IMP")
	bad := []string{uniq("IMP"), uniq("IMP"), uniq("IMP"), uniq("IMP"), uniq("IMP"), uniq("IMP"), uniq("IMP")}
	rows := []map[string]string{
		importRow(proc, ok1, "A"), // row 2
		importRow(proc, ok1, "B"), // row 3
		importRow(proc, ok2, ""),  // row 4: a coupon without sections
		importRow(proc, bad[0], "A"),
		importRow(proc, bad[1], "A"),
		importRow(proc, bad[2], "A"),
		importRow(missing, bad[3], "A"),
		importRow(proc, bad[4], "A"),
		importRow(proc, bad[4], "a "), // row 10: the same label, case and space aside
		importRow(proc, bad[5], "A"),
		importRow(proc, bad[5], "B"), // row 12: its coupon columns differ
		importRow(proc, bad[6], "A"),
		importRow(proc, ok3, "A"), // row 14
	}
	rows[3]["thickness_mm"] = "301"     // row 5
	rows[4]["acceptance"] = "maybe"     // row 6
	rows[5]["current_a"] = "180 A"      // row 7
	rows[5]["welded_on"] = "2026-13-01" // row 7
	rows[10]["welder_id"] = "W-08"      // row 12
	rows[11]["penetration_mm"] = "7"    // row 13: deeper than the 6 mm plate
	rows[12]["penetration_mm"] = "0.5"  // row 14: below the procedure's 1 mm minimum, a requirement flag
	file := importFile(t, importHeader, rows)
	// Bounds from the domain primer's plausible table (base-metal thickness
	// 0.5–300 mm); the wording is the API's 422 answers'.
	want := []db.RowIssue{
		{Row: 5, Column: "thickness_mm", Reason: "301 mm is above the plausible maximum 300 mm"},
		{Row: 6, Column: "acceptance", Reason: "must be one of: accept reject (got maybe)"},
		{Row: 7, Column: "welded_on", Reason: `want a date as YYYY-MM-DD, got "2026-13-01"`},
		{Row: 7, Column: "current_a", Reason: `wrong type: want a number (got "180 A")`},
		{Row: 8, Column: "procedure_id", Reason: "no procedure " + missing},
		{Row: 10, Column: "section", Reason: fmt.Sprintf(`"a " repeats section "A" of row 9 (labels are compared without case and surrounding space); give each section of coupon %s once`, bad[4])},
		{Row: 12, Column: "welder_id", Reason: fmt.Sprintf(`"W-08" differs from "W-07" on row 11, where coupon %s starts; the rows of a coupon repeat its columns`, bad[5])},
		{Row: 13, Column: "penetration_mm", Reason: fmt.Sprintf(
			"penetration 7 mm is greater than the coupon's base-metal thickness 6 mm (thickness_mm of coupon %s); check both values", bad[6])},
	}
	before := e.logSize(t)
	dry := e.importAs(t, "", file)
	if !slices.Equal(dry.Errors, want) {
		t.Errorf("dry run errors:\n%s\nwant:\n%s", issuesText(dry.Errors), issuesText(want))
	}
	if dry.Mode != "dry-run" || dry.Written || dry.Rows != 13 || dry.Coupons != 10 || dry.New != 3 || dry.NewSection != 3 || dry.Refused != 7 || dry.Unchanged != 0 {
		t.Errorf("dry run = %+v, want dry-run, nothing written, 13 rows, 10 coupons, 3 new with 3 sections, 7 refused", dry)
	}
	if n := e.logSize(t); n != before {
		t.Errorf("log grew by %d leaves on a dry run, want 0", n-before)
	}
	if c := e.couponByMark(t, ok1); c != nil {
		t.Errorf("a dry run stored coupon %s", ok1)
	}

	got := e.importAs(t, "commit", file)
	if !slices.Equal(got.Errors, want) {
		t.Errorf("commit errors:\n%s\nwant:\n%s", issuesText(got.Errors), issuesText(want))
	}
	if got.Mode != "commit" || !got.Written || got.New != 3 || got.NewSection != 3 || got.Refused != 7 {
		t.Errorf("commit = %+v, want 3 new coupons with 3 sections written, 7 refused", got)
	}
	// 3 coupons and 3 sections: one pending leaf each.
	if n := e.logSize(t); n != before+6 {
		t.Errorf("log grew by %d leaves, want 6 (a leaf per coupon and per section)", n-before)
	}
	for _, m := range []string{ok1, ok2, ok3} {
		c := e.couponByMark(t, m)
		if c == nil {
			t.Fatalf("coupon %s not stored", m)
		}
		if c["revision"] != 1.0 || c["created_by"] != userName("technician") {
			t.Errorf("coupon %s: revision %v by %v, want revision 1 by %s", m, c["revision"], c["created_by"], userName("technician"))
		}
		secs := e.do(http.MethodGet, "/v1/coupons/"+c["id"].(string)+"/measurements", "auditor", nil).items(t)
		wantSecs := map[string]int{ok1: 2, ok2: 0, ok3: 1}[m]
		if len(secs) != wantSecs {
			t.Errorf("coupon %s has %d sections, want %d", m, len(secs), wantSecs)
		}
	}
	for _, m := range bad {
		if c := e.couponByMark(t, m); c != nil {
			t.Errorf("refused coupon %s was stored", m)
		}
	}
	var flags int
	if err := e.store.Pool().QueryRow(t.Context(), `SELECT count(*) FROM flags WHERE site = $1 AND subject_id = $2 AND kind = 'requirement'`,
		e.site, e.couponByMark(t, ok3)["id"]).Scan(&flags); err != nil || flags != 1 {
		t.Errorf("coupon %s has %d requirement flags (%v), want 1: its section is below the procedure's minimum", ok3, flags, err)
	}
	check, err := e.store.RecheckFlags(t.Context(), e.site)
	if err != nil || !check.OK() {
		t.Errorf("flags after the import differ from a recomputation: %+v, %v", check, err)
	}
	if diffs, err := e.store.RecheckMarks(t.Context(), e.site); err != nil || len(diffs) > 0 {
		t.Errorf("current_marks after the import: %v, %v", diffs, err)
	}

	again := e.importAs(t, "commit", file)
	if again.Written || again.New != 0 || again.Unchanged != 3 || !slices.Equal(again.Errors, want) {
		t.Errorf("second import = %+v, want nothing written, 3 unchanged, the same errors", again)
	}
	if n := e.logSize(t); n != before+6 {
		t.Errorf("the second import added %d leaves, want 0", n-before-6)
	}
}

// TestImportDifferentValuesReported: a stored mark with other values in the
// file is named column by column, never written over or skipped silently.
func TestImportDifferentValuesReported(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	mark := uniq("IMP")
	first := []map[string]string{importRow(proc, mark, "A")}
	if rep := e.importAs(t, "commit", importFile(t, importHeader, first)); rep.New != 1 {
		t.Fatalf("first import = %+v, want 1 new coupon", rep)
	}
	id := e.couponByMark(t, mark)["id"].(string)
	changed := []map[string]string{importRow(proc, mark, "A"), importRow(proc, mark, "B")}
	changed[0]["current_a"], changed[1]["current_a"] = "185", "185"
	rep := e.importAs(t, "dry-run", importFile(t, importHeader, changed))
	want := []db.RowIssue{
		{Row: 2, Column: "current_a", Reason: fmt.Sprintf("coupon %s is stored (id %s) with current_a 180 A; this row has 185 A; "+
			"an import writes nothing over a stored coupon: correct it with a reason (PUT /v1/coupons/%s)", mark, id, id)},
		{Row: 3, Column: "section", Reason: fmt.Sprintf("coupon %s is stored (id %s) without a section B; add it with POST /v1/coupons/%s/measurements", mark, id, id)},
	}
	if !slices.Equal(rep.Errors, want) || rep.Refused != 1 || rep.Unchanged != 0 {
		t.Errorf("re-import with other values = %+v\nerrors:\n%s\nwant:\n%s", rep, issuesText(rep.Errors), issuesText(want))
	}
}

// TestImportUnitsConvertExactly imports every inch-pound (and mm/min)
// spelling of a coupon or section field in spellingCases, whose wanted
// values are worked by hand from NIST SP 811 (2008) Appendix B, and reads
// the stored metric value back.
func TestImportUnitsConvertExactly(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	header := slices.Clone(importHeader)
	var rows []map[string]string
	marks := map[string]spellingCase{}
	for _, c := range spellingCases {
		if c.kind != "Coupon" && c.kind != "Measurement" {
			continue
		}
		if !slices.Contains(header, c.field) {
			header = append(header, c.field)
		}
		mark := uniq("UNIT")
		section := ""
		if c.kind == "Measurement" {
			section = "A"
		}
		row := importRow(proc, mark, section)
		row["thickness_mm"] = "12" // deep enough for every section case
		if c.field == "thickness_in" {
			row["thickness_mm"] = ""
		}
		row[c.stored], row[c.field] = "", fmt.Sprint(c.value)
		rows = append(rows, row)
		marks[mark] = c
	}
	rep := e.importAs(t, "commit", importFile(t, header, rows))
	if rep.New != len(rows) || len(rep.Errors) > 0 {
		t.Fatalf("import = %+v, want %d new coupons and no errors:\n%s", rep, len(rows), issuesText(rep.Errors))
	}
	for mark, c := range marks {
		rec := e.couponByMark(t, mark)
		if c.kind == "Measurement" {
			rec = e.do(http.MethodGet, "/v1/coupons/"+rec["id"].(string)+"/measurements", "auditor", nil).items(t)[0]
		}
		if v, _ := rec[c.stored].(float64); v != answered(c.want) {
			t.Errorf("%s = %v imported: %s = %.17g, want %.17g", c.field, c.value, c.stored, v, answered(c.want))
		}
	}
}

// TestImportRefusalsInTheFilesUnits: a refused inch-pound value is named by
// its column, in inches, with the stored bound beside it (300 mm is
// 11.81 in to four digits: 300 / 25.4, NIST SP 811 Appendix B).
func TestImportRefusalsInTheFilesUnits(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	header := append(slices.Clone(importHeader), "thickness_in")
	row := importRow(e.procedure(), uniq("IMP"), "")
	row["thickness_mm"], row["thickness_in"] = "", "12"
	rep := e.importAs(t, "dry-run", importFile(t, header, []map[string]string{row}))
	want := []db.RowIssue{{Row: 2, Column: "thickness_in", Reason: "12 in is above the plausible maximum 11.81 in (300 mm)"}}
	if !slices.Equal(rep.Errors, want) {
		t.Errorf("errors:\n%s\nwant:\n%s", issuesText(rep.Errors), issuesText(want))
	}
}

// TestImportRefusesAsTheAPI: a refused value in an import file is named by
// the same field with the same reason as in the answer of POST /v1/coupons
// (or of a section's POST) carrying the same value in the same spelling:
// the import keeps no rules or words of its own. The bounds are the
// registry's (predict/quantity_table.go), themselves from the domain primer's
// plausible table. A word outside its list and a malformed day are refused
// by the JSON API before its validator, by the request check against the
// OpenAPI document and in the document's words; a file has no such
// document, so the import names the same field in the validator's words
// (doc: only the field is compared).
func TestImportRefusesAsTheAPI(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.procedure()
	coupon := e.coupon()
	for _, c := range []struct {
		field   string
		json    any    // the value in a JSON body
		cell    string // the same value in a file
		section bool
		doc     int // the JSON API's status when the document check refuses it (0: its validator does)
	}{
		{"current_a", 1850.0, "1850", false, 0},               // above 1000 A
		{"voltage_v", 4.5, "4.5", false, 0},                   // below 5 V
		{"thickness_in", 12.0, "12", false, 0},                // above 300 mm, worded in inches
		{"preheat_f", 700.0, "700", false, 0},                 // above 350 °C, worded in °F
		{"joint_type", "tee", "tee", false, 422},              // not an allowed word
		{"polarity", "dcep", "dcep", false, 422},              // words are case-sensitive
		{"welder_id", "   ", "   ", false, 0},                 // a blank identifier
		{"welded_on", "2026-13-01", "2026-13-01", false, 400}, // no 13th month
		{"welded_on", "1899-12-31", "1899-12-31", false, 0},   // before the plausible first day
		{"penetration_mm", 51.0, "51", true, 0},               // above 50 mm
		{"penetration_in", 2.5, "2.5", true, 0},               // above 50 mm, worded in inches
		{"acceptance", "maybe", "maybe", true, 422},
		{"bead_width_mm", 0.0, "0", true, 0},       // not above 0
		{"inspector", "QC\x01", "QC\x01", true, 0}, // a control character
	} {
		var body map[string]any
		path := "/v1/coupons"
		mark := uniq("REF")
		if c.section {
			body, path = measurementBody("A"), "/v1/coupons/"+coupon+"/measurements"
		} else {
			body = couponBody(proc, "", mark)
		}
		body[c.field] = c.json
		if q := stored(c.field); q != c.field {
			delete(body, q)
		}
		status := http.StatusUnprocessableEntity
		if c.doc != 0 {
			status = c.doc
		}
		p := wantProblem(t, c.field, e.do(http.MethodPost, path, "technician", body), status, c.field)
		var api []db.RowIssue
		for _, is := range p.Errors {
			api = append(api, db.RowIssue{Row: 2, Column: is.Field, Reason: is.Reason})
		}
		header := slices.Clone(importHeader)
		if !slices.Contains(header, c.field) {
			header = append(header, c.field)
		}
		section := ""
		if c.section {
			section = "A"
		}
		row := importRow(proc, mark, section)
		row[stored(c.field)], row[c.field] = "", c.cell
		rep := e.importAs(t, "dry-run", importFile(t, header, []map[string]string{row}))
		if c.doc != 0 {
			for i := range api {
				api[i].Reason = ""
			}
			for i := range rep.Errors {
				rep.Errors[i].Reason = ""
			}
		}
		if !slices.Equal(rep.Errors, api) {
			t.Errorf("%s = %q: import names\n%sthe API names\n%s", c.field, c.cell, issuesText(rep.Errors), issuesText(api))
		}
	}
}

// stored is the stored spelling of a field name.
func stored(field string) string {
	for _, in := range []string{"_in", "_f"} {
		if strings.HasSuffix(field, in) {
			base := strings.TrimSuffix(field, in)
			return base + map[string]string{"_in": "_mm", "_f": "_c"}[in]
		}
	}
	return field
}

// TestImportFileShape: a header the import cannot read is the request's
// shape (400), naming the column; so is a body that is not text/csv.
func TestImportFileShape(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, c := range []struct {
		name, ctype, body, field string
	}{
		{"UnknownColumn", "text/csv", "coupon_mark,thickness_cm\nC-1,6\n", "thickness_cm"},
		{"RepeatedColumn", "text/csv", "coupon_mark,coupon_mark\nC-1,C-1\n", "coupon_mark"},
		{"NoMarkColumn", "text/csv", "welder_id\nW-1\n", "coupon_mark"},
		{"Empty", "text/csv", "\n", "body"},
		{"OwnedColumn", "text/csv", "coupon_mark,coupon_id\nC-1,x\n", "coupon_id"},
		{"JSONBody", "application/json", `{"coupon_mark":"C-1"}`, "Content-Type"},
	} {
		t.Run(c.name, func(t *testing.T) {
			r := e.doType(http.MethodPost, "/v1/coupons/import", "technician", c.ctype, c.body)
			wantProblem(t, c.name, r, http.StatusBadRequest, c.field)
		})
	}
	r := e.doType(http.MethodPost, "/v1/coupons/import?mode=apply", "technician", "text/csv", "coupon_mark\nC-1\n")
	wantProblem(t, "mode=apply", r, http.StatusUnprocessableEntity, "mode")
	r = e.doType(http.MethodPost, "/v1/coupons/import", "auditor", "text/csv", "coupon_mark\nC-1\n")
	if r.status != http.StatusForbidden {
		t.Errorf("an auditor's import = %d, want 403", r.status)
	}
}

// issuesText lists issues one a line for a failure message.
func issuesText(v []db.RowIssue) string {
	var b strings.Builder
	for _, is := range v {
		fmt.Fprintf(&b, "  row %d, %s: %s\n", is.Row, is.Column, is.Reason)
	}
	return b.String()
}
