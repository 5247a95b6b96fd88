package lab

import (
	"fmt"
	"math"
	"net/http"
	"net/url"
	"strings"

	"etchlog/db"
	"etchlog/predict"
)

func init() {
	Register(
		Page{Pattern: "GET " + Prefix + "/procedures", Roles: Everyone, Nav: "Procedures", NavOrder: 30,
			Template: "procedures.html", Handle: procedureList},
		Page{Pattern: "GET " + Prefix + "/procedures/{id}", Roles: Everyone, Template: "procedure.html", Handle: procedurePage},
		Page{Pattern: "GET " + Prefix + "/procedures/{id}/flags", Roles: Everyone, Template: "procedure-flags.html", Handle: procedureFlags},
	)
}

// pageLimit is how many rows a list page asks the API for.
const pageLimit = 25

// rangeRow is one qualified range as the procedure page shows it.
type rangeRow struct {
	Label, Range, Rule, From string
}

// qualificationRecord is the part of a qualification record the procedure page shows.
type qualificationRecord struct {
	ID           string    `json:"id"`
	RecordNumber string    `json:"record_number"`
	WeldedOn     string    `json:"welded_on"`
	Outcome      string    `json:"outcome"`
	Voided       bool      `json:"voided"`
	SignOff      *struct{} `json:"sign_off"`
}

// couponRow is the part of a coupon the procedure page lists.
type couponRow struct {
	ID          string   `json:"id"`
	Mark        string   `json:"coupon_mark"`
	WeldedOn    string   `json:"welded_on"`
	JointType   string   `json:"joint_type"`
	CurrentA    *float64 `json:"current_a"`
	VoltageV    *float64 `json:"voltage_v"`
	TravelSpeed *float64 `json:"travel_speed_mm_s"`
	Voided      bool     `json:"voided"`
}

// flagCount is one line of the flag summary: a kind and a variable in words.
type flagCount struct {
	Kind, Label string
	Count       int
}

// procedureView is what procedure.html shows.
type procedureView struct {
	Proc         db.Procedure
	Ranges       *db.ProcedureRanges
	RangeRows    []rangeRow
	NoRanges     string
	Records      []qualificationRecord
	Coupons      List[couponRow]
	Limit        int
	Summary      db.FlagSummary
	Counts       []flagCount
	Requirements List[db.Flag]
	Source       string
}

// procedurePage shows a procedure: its values, its qualified ranges and
// where each came from, the records that support it, its coupons a page
// at a time and its flags, requirement flags first.
func procedurePage(rq *Request) error {
	id := url.PathEscape(rq.PathValue("id"))
	v := procedureView{Limit: pageLimit}
	if err := rq.API.Get("/v1/procedures/"+id, &v.Proc); err != nil {
		return err
	}
	v.Source = fmt.Sprintf("%s rev %d", v.Proc.Code, v.Proc.Revision)
	var pr db.ProcedureRanges
	switch err := rq.API.Get("/v1/procedures/"+id+"/ranges", &pr); {
	case err == nil:
		v.Ranges, v.RangeRows = &pr, rangeRows(rq.Units, pr)
	case isStatus(err, http.StatusNotFound):
		v.NoRanges = "No qualified ranges have been derived for this procedure yet."
	default:
		return err
	}
	for _, rid := range v.Proc.SupportingRecordIDs {
		var r qualificationRecord
		if err := rq.API.Get("/v1/qualification-records/"+rid.String(), &r); err != nil {
			return err
		}
		v.Records = append(v.Records, r)
	}
	q := url.Values{"procedure_id": {rq.PathValue("id")}, "limit": {fmt.Sprint(pageLimit)}}
	if c := rq.URL.Query().Get("cursor"); c != "" {
		q.Set("cursor", c)
	}
	var err error
	if v.Coupons, err = GetList[couponRow](rq.API, "/v1/coupons", q); err != nil {
		return err
	}
	if err := rq.API.Get("/v1/procedures/"+id+"/flag-summary", &v.Summary); err != nil {
		return err
	}
	for _, c := range v.Summary.ByVariable { // the API lists requirement flags first
		v.Counts = append(v.Counts, flagCount{Kind: c.Kind, Label: VariableLabel(c.Variable), Count: c.Count})
	}
	if v.Requirements, err = GetList[db.Flag](rq.API, "/v1/flags", url.Values{"procedure_id": {rq.PathValue("id")},
		"kind": {"requirement"}, "limit": {"10"}}); err != nil {
		return err
	}
	return rq.Render(http.StatusOK, "procedure.html", v.Proc.Code+" rev "+fmt.Sprint(v.Proc.Revision), v)
}

// isStatus reports whether err is the API's refusal with status.
func isStatus(err error, status int) bool {
	p, ok := err.(*Problem)
	return ok && p.Status == status
}

// rangeRows words each qualified range in units u with its rule and sources.
func rangeRows(u Units, pr db.ProcedureRanges) []rangeRow {
	var rows []rangeRow
	for _, r := range pr.Ranges.Variables {
		name := string(r.Variable)
		row := rangeRow{Label: VariableLabel(name), Rule: strings.ReplaceAll(string(r.Rule), "_", " ")}
		switch {
		case r.Unavailable != "":
			row.Range = "none: " + r.Unavailable
		case len(r.Allowed) > 0:
			row.Range = strings.Join(r.Allowed, ", ")
		default:
			var bands []string
			for _, b := range r.Bands {
				bands = append(bands, bandWords(u, name, b))
			}
			row.Range = strings.Join(bands, "; ")
		}
		row.From = strings.Join(r.Sources, ", ")
		if r.NarrowReason != "" {
			row.From += " (narrowed: " + r.NarrowReason + ")"
		}
		rows = append(rows, row)
	}
	return rows
}

// bandWords writes a band in units u: "157.5–192.5 A", "at least 4 °C".
func bandWords(u Units, name string, b predict.Band) string {
	switch lo, hi := !math.IsInf(b.Min, -1), !math.IsInf(b.Max, 1); {
	case lo && hi:
		low := FormatQuantity(u, name, b.Min)
		if unit := UnitLabel(u, name); unit != "" {
			low = strings.TrimSuffix(low, " "+unit)
		}
		return low + "–" + FormatQuantity(u, name, b.Max)
	case lo:
		return "at least " + FormatQuantity(u, name, b.Min)
	case hi:
		return "at most " + FormatQuantity(u, name, b.Max)
	}
	return "any"
}

// procedureList lists the site's procedures a page at a time.
func procedureList(rq *Request) error {
	q := url.Values{"limit": {fmt.Sprint(pageLimit)}}
	if c := rq.URL.Query().Get("cursor"); c != "" {
		q.Set("cursor", c)
	}
	l, err := GetList[db.Procedure](rq.API, "/v1/procedures", q)
	if err != nil {
		return err
	}
	return rq.Render(http.StatusOK, "procedures.html", "Procedures", struct {
		List[db.Procedure]
		Limit int
	}{l, pageLimit})
}

// procedureFlags lists a procedure's flags of one kind (all kinds when
// none is chosen) in sentences, a page at a time.
func procedureFlags(rq *Request) error {
	id := rq.PathValue("id")
	var p db.Procedure
	if err := rq.API.Get("/v1/procedures/"+url.PathEscape(id), &p); err != nil {
		return err
	}
	q := url.Values{"procedure_id": {id}, "limit": {fmt.Sprint(pageLimit)}}
	kind := rq.URL.Query().Get("kind")
	for _, k := range []string{"kind", "cursor"} {
		if v := rq.URL.Query().Get(k); v != "" {
			q.Set(k, v)
		}
	}
	l, err := GetList[db.Flag](rq.API, "/v1/flags", q)
	if err != nil {
		return err
	}
	title := "Flags of " + p.Code
	if kind != "" {
		title = strings.ReplaceAll(kind, "_", " ") + " flags of " + p.Code
		title = strings.ToUpper(title[:1]) + title[1:]
	}
	return rq.Render(http.StatusOK, "procedure-flags.html", title, struct {
		List[db.Flag]
		Limit        int
		Proc         db.Procedure
		Source, Kind string
	}{l, pageLimit, p, fmt.Sprintf("%s rev %d", p.Code, p.Revision), kind})
}
