package lab

import (
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"etchlog/db"
)

func init() {
	Register(Page{Pattern: "GET " + Prefix + "/coupons", Roles: Everyone, Nav: "Coupons", NavOrder: 10,
		Template: "coupons.html", Handle: couponList})
}

// couponFilters are the list's filters, each passed to the API as it is.
var couponFilters = []string{"procedure_id", "welder_id", "coupon_mark", "acceptance", "welded_from", "welded_to", "include_voided"}

// couponListRow is one row of the coupon list.
type couponListRow struct {
	Coupon     db.Coupon
	Procedure  string
	Sections   string // "A, B, C" or "none"
	Acceptance string // "2 accepted, 1 rejected" or "no sections"
	Rejected   bool
}

// couponListView is the coupon list's data.
type couponListView struct {
	Rows       []couponListRow
	Items      []db.Coupon
	NextCursor string
	Limit      int
	Filter     url.Values
	Procedures []db.Procedure
	Accept     []string
	Recorder   bool
}

// couponList shows one page of coupons, newest in the log last, with each
// coupon's procedure, sections and acceptance; the filters go to the API.
func couponList(rq *Request) error {
	q := url.Values{"limit": {strconv.Itoa(couponPageLimit)}}
	filter := url.Values{}
	for _, name := range couponFilters {
		if v := strings.TrimSpace(rq.URL.Query().Get(name)); v != "" {
			q.Set(name, v)
			filter.Set(name, v)
		}
	}
	if c := rq.URL.Query().Get("cursor"); c != "" {
		q.Set("cursor", c)
	}
	page, err := GetList[db.Coupon](rq.API, "/v1/coupons", q)
	if err != nil {
		return err
	}
	ps := newProcedures(rq.API)
	all, err := ps.all()
	if err != nil {
		return err
	}
	v := couponListView{Items: page.Items, NextCursor: page.NextCursor, Limit: couponPageLimit, Filter: filter,
		Procedures: all, Accept: enumValues("acceptance"), Recorder: rq.User.Role != db.RoleAuditor}
	for _, c := range page.Items {
		secs, err := allPages[db.Measurement](rq.API, "/v1/coupons/"+c.ID.String()+"/measurements", nil)
		if err != nil {
			return err
		}
		v.Rows = append(v.Rows, sectionSummary(couponListRow{Coupon: c, Procedure: ps.name(c.ProcedureID)}, secs))
	}
	return rq.Render(http.StatusOK, "coupons.html", "Coupons", v)
}

// sectionSummary fills a row's sections and acceptance in words.
func sectionSummary(r couponListRow, secs []db.Measurement) couponListRow {
	if len(secs) == 0 {
		r.Sections, r.Acceptance = "none", "no sections"
		return r
	}
	var labels []string
	accepted, rejected := 0, 0
	for _, s := range secs {
		labels = append(labels, s.Section)
		if s.Acceptance == "reject" {
			rejected++
		} else {
			accepted++
		}
	}
	r.Sections = strings.Join(labels, ", ")
	var parts []string
	if accepted > 0 {
		parts = append(parts, strconv.Itoa(accepted)+" accepted")
	}
	if rejected > 0 {
		parts = append(parts, strconv.Itoa(rejected)+" rejected")
		r.Rejected = true
	}
	r.Acceptance = strings.Join(parts, ", ")
	return r
}
