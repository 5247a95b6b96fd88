package lab

import (
	"errors"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"sync"

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
	secs, err := sectionsOf(rq.API, page.Items)
	if err != nil {
		return err
	}
	for i, c := range page.Items {
		v.Rows = append(v.Rows, sectionSummary(couponListRow{Coupon: c, Procedure: ps.name(c.ProcedureID)}, secs[i]))
	}
	return rq.Render(http.StatusOK, "coupons.html", "Coupons", v)
}

// sectionReaders is how many of a page's section lists are read at once:
// half of what the API admits of one user at a time (api.DefaultPerUser 8).
const sectionReaders = 4

// sectionsOf reads the sections of each coupon, a few coupons at a time.
func sectionsOf(c *Client, coupons []db.Coupon) ([][]db.Measurement, error) {
	out := make([][]db.Measurement, len(coupons))
	errs := make([]error, len(coupons))
	next := make(chan int)
	var wg sync.WaitGroup
	for range sectionReaders {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				out[i], errs[i] = allPages[db.Measurement](c, "/v1/coupons/"+coupons[i].ID.String()+"/measurements", nil)
			}
		}()
	}
	for i := range coupons {
		next <- i
	}
	close(next)
	wg.Wait()
	return out, errors.Join(errs...)
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
