package lab

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"time"

	"etchlog/db"
)

// The auditor's pages: a start page listing the procedures and every list
// of the site as a CSV download, and a record view per procedure: its
// revision, its qualification records, its coupons with their sections,
// flags, sign-offs and every record's history, field by field, with links
// to the printed records (PDF) and the CSV lists.

func init() {
	Register(
		Page{Pattern: "GET " + Prefix + "/audit", Roles: Auditors, Nav: "Audit", NavOrder: 60, Template: "audit.html", Handle: auditStart},
		Page{Pattern: "GET " + Prefix + "/audit/procedures/{id}", Roles: Auditors, Template: "audit-record.html", Handle: auditRecordPage},
	)
}

// auditCouponLimit is how many coupons, each with its sections and
// history, the record view shows per page.
const auditCouponLimit = 10

// revisionView is one revision in a record's history: who wrote it, when
// and why, and what it changed from the revision before.
type revisionView struct {
	Revision int
	At       time.Time
	By       string
	Reason   string
	Voided   bool
	Changes  []FieldChange
}

// revisionMeta is the bookkeeping every revision carries.
type revisionMeta struct {
	Revision  int       `json:"revision"`
	CreatedAt time.Time `json:"created_at"`
	CreatedBy string    `json:"created_by"`
	Reason    string    `json:"reason"`
	Voided    bool      `json:"voided"`
}

// history reads a record's revisions (path is the record's API path) and
// words each one's changes from the one before, newest first.
func history(rq *Request, path string) ([]revisionView, error) {
	var revs struct {
		Items []json.RawMessage `json:"items"`
	}
	if err := rq.API.Get(path+"/revisions", &revs); err != nil {
		return nil, err
	}
	out := make([]revisionView, 0, len(revs.Items))
	for i, raw := range revs.Items {
		var m revisionMeta
		if err := json.Unmarshal(raw, &m); err != nil {
			return nil, fmt.Errorf("lab: revision of %s: %w", path, err)
		}
		v := revisionView{Revision: m.Revision, At: m.CreatedAt, By: m.CreatedBy, Reason: m.Reason, Voided: m.Voided}
		if i > 0 {
			ch, err := Diff(rq.Units, revs.Items[i-1], raw)
			if err != nil {
				return nil, err
			}
			v.Changes = ch
		}
		out = append(out, v)
	}
	for i, j := 0, len(out)-1; i < j; i, j = i+1, j-1 {
		out[i], out[j] = out[j], out[i]
	}
	return out, nil
}

// firstOnly is the history of a record with one revision, from the record
// itself (no second request).
func firstOnly(m db.Meta) []revisionView {
	return []revisionView{{Revision: m.Revision, At: m.CreatedAt, By: m.CreatedBy, Reason: m.Reason, Voided: m.Voided}}
}

// historyOf is history for a record that has more than one revision, and
// firstOnly for one that has not.
func historyOf(rq *Request, path string, m db.Meta) ([]revisionView, error) {
	if m.Revision <= 1 {
		return firstOnly(m), nil
	}
	return history(rq, path)
}

// every reads a whole list, page by page (lists that are short in practice:
// a record's sign-offs, a coupon's sections).
func every[T any](rq *Request, path string, q url.Values) ([]T, error) {
	var all []T
	q.Set("limit", fmt.Sprint(db.MaxPageSize))
	for {
		l, err := GetList[T](rq.API, path, q)
		if err != nil {
			return nil, err
		}
		all = append(all, l.Items...)
		if len(l.Items) < db.MaxPageSize {
			return all, nil
		}
		q.Set("cursor", l.NextCursor)
	}
}

// auditStart lists the procedures a page at a time, each linked to its
// record view, and every list of the site as a CSV download.
func auditStart(rq *Request) error {
	q := url.Values{"limit": {fmt.Sprint(pageLimit)}, "include_voided": {"true"}}
	if c := rq.URL.Query().Get("cursor"); c != "" {
		q.Set("cursor", c)
	}
	l, err := GetList[db.Procedure](rq.API, "/v1/procedures", q)
	if err != nil {
		return err
	}
	return rq.Render(http.StatusOK, "audit.html", "Audit", struct {
		List[db.Procedure]
		Limit int
		Lists []csvLink
	}{l, pageLimit, siteLists})
}
