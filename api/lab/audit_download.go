package lab

import (
	"html/template"
	"net/http"
	"net/url"
	"regexp"
	"slices"
)

// Downloads for auditors: the API's CSV lists and printed records, passed
// through as the signed-in user (Client.Download). Only the lists below
// and the filters they name are offered, so the routes are no general
// door into the API.

func init() {
	Register(
		Page{Pattern: "GET " + Prefix + "/audit/csv/{list}", Roles: Auditors, Handle: auditCSV},
		Page{Pattern: "GET " + Prefix + "/audit/revisions/{kind}/{id}", Roles: Auditors, Handle: auditRevisionsCSV},
		Page{Pattern: "GET " + Prefix + "/audit/printed/{id}", Roles: Auditors, Handle: auditPrinted},
	)
}

// csvList is one list an auditor may download: its API path and the
// filters the page passes on.
type csvList struct {
	path    string
	filters []string
}

// csvLists are the lists offered, by the name in the page's URL.
var csvLists = map[string]csvList{
	"procedures":            {"/v1/procedures", []string{"include_voided"}},
	"qualification-records": {"/v1/qualification-records", []string{"include_voided"}},
	"coupons":               {"/v1/coupons", []string{"procedure_id", "qualification_record_id", "include_voided"}},
	"measurements":          {"/v1/measurements", []string{"coupon_id", "include_voided"}},
	"flags":                 {"/v1/flags", []string{"procedure_id"}},
	"sign-offs":             {"/v1/sign-offs", []string{"record_id"}},
	"calibrations":          {"/v1/calibrations", nil},
	"production-records":    {"/v1/production-records", []string{"procedure_id"}},
	"audit-events":          {"/v1/audit/events", []string{"entity_id"}},
	"rule-sets":             {"/v1/rule-sets", nil},
}

// csvLink is one download link of the audit start page: the list's name
// and the query it is asked with.
type csvLink struct{ Name, Query, Label string }

// Href is the link's address (built here from fixed parts, so the
// template keeps its query as written).
func (l csvLink) Href() template.URL {
	h := Prefix + "/audit/csv/" + l.Name
	if l.Query != "" {
		h += "?" + l.Query
	}
	return template.URL(h)
}

// siteLists are the whole-site downloads, in the order the start page lists them.
var siteLists = []csvLink{
	{"procedures", "include_voided=true", "Procedures (WPS), voided ones included"},
	{"qualification-records", "include_voided=true", "Qualification records (PQR), voided ones included"},
	{"coupons", "include_voided=true", "Coupons, voided ones included"},
	{"measurements", "include_voided=true", "Macro-etch sections, voided ones included"},
	{"flags", "", "Flags"},
	{"sign-offs", "", "Sign-offs"},
	{"calibrations", "", "Calibrations"},
	{"production-records", "", "Production records"},
	{"audit-events", "", "The log: who did what, when and why"},
	{"rule-sets", "", "Rule sets"},
}

// noUnits are the lists whose operations take no units parameter.
var noUnits = []string{"sign-offs", "audit-events", "rule-sets"}

// auditCSV downloads one list as CSV for a spreadsheet, in the display units.
func auditCSV(rq *Request) error {
	name := rq.PathValue("list")
	l, ok := csvLists[name]
	if !ok {
		return &Problem{Status: http.StatusNotFound, Title: "No such list", Detail: "There is no list called " + name + " to download."}
	}
	q := url.Values{"format": {"csv"}, "spreadsheet": {"true"}}
	for _, f := range l.filters {
		if v := rq.URL.Query().Get(f); v != "" {
			q.Set(f, v)
		}
	}
	if !slices.Contains(noUnits, name) {
		q.Set("units", string(rq.Units))
	}
	return rq.API.Download(rq.W, l.path+"?"+q.Encode())
}

// revisionKinds are the record kinds whose revisions download as CSV.
var revisionKinds = []string{"procedures", "qualification-records", "coupons", "measurements"}

// recordID is the shape of a record id in a download path.
var recordID = regexp.MustCompile(`^[0-9a-fA-F-]{36}$`)

// auditRevisionsCSV downloads every revision of one record as CSV.
func auditRevisionsCSV(rq *Request) error {
	kind, id := rq.PathValue("kind"), rq.PathValue("id")
	if !slices.Contains(revisionKinds, kind) || !recordID.MatchString(id) {
		return &Problem{Status: http.StatusNotFound, Title: "No such record", Detail: "There is no " + kind + " " + id + " to download."}
	}
	q := url.Values{"format": {"csv"}, "spreadsheet": {"true"}, "units": {string(rq.Units)}}
	return rq.API.Download(rq.W, "/v1/"+kind+"/"+id+"/revisions?"+q.Encode())
}

// auditPrinted downloads a qualification record printed as PDF, in the
// display units (the latest revision, or ?revision=N).
func auditPrinted(rq *Request) error {
	id := rq.PathValue("id")
	if !recordID.MatchString(id) {
		return &Problem{Status: http.StatusNotFound, Title: "No such record", Detail: "There is no qualification record " + id + "."}
	}
	q := url.Values{"format": {"pdf"}, "units": {string(rq.Units)}}
	if r := rq.URL.Query().Get("revision"); r != "" {
		q.Set("revision", r)
	}
	return rq.API.Download(rq.W, "/v1/qualification-records/"+id+"?"+q.Encode())
}
