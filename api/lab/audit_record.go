package lab

import (
	"fmt"
	"net/http"
	"net/url"

	"etchlog/db"
)

// auditedRecord is one record of the record view with its sign-offs and
// its history, newest revision first.
type auditedRecord[T any] struct {
	Record   T
	SignOffs []db.SignOff
	History  []revisionView
}

// auditedCoupon is a coupon with its sections, each with its history.
type auditedCoupon struct {
	Coupon   db.Coupon
	History  []revisionView
	Sections []auditedRecord[db.Measurement]
}

// auditView is what audit-record.html shows.
type auditView struct {
	Proc     auditedRecord[db.Procedure]
	Records  []auditedRecord[db.QualificationRecord]
	Coupons  List[db.Coupon]
	Audited  []auditedCoupon
	Limit    int
	Summary  db.FlagSummary
	Flags    List[db.Flag]
	Source   string
	Subjects map[string]string // flag subject id → coupon mark, for the coupons shown
}

// auditRecordPage is the record view of one procedure.
func auditRecordPage(rq *Request) error {
	id := rq.PathValue("id")
	path := "/v1/procedures/" + url.PathEscape(id)
	v := auditView{Limit: auditCouponLimit, Subjects: map[string]string{}}
	if err := rq.API.Get(path, &v.Proc.Record); err != nil {
		return err
	}
	p := v.Proc.Record
	v.Source = fmt.Sprintf("%s rev %d", p.Code, p.Revision)
	var err error
	if v.Proc.History, err = historyOf(rq, path, p.Meta); err != nil {
		return err
	}
	if v.Proc.SignOffs, err = every[db.SignOff](rq, "/v1/sign-offs", url.Values{"record_id": {id}}); err != nil {
		return err
	}
	for _, rid := range p.SupportingRecordIDs {
		r := auditedRecord[db.QualificationRecord]{}
		rp := "/v1/qualification-records/" + rid.String()
		if err := rq.API.Get(rp, &r.Record); err != nil {
			return err
		}
		if r.History, err = historyOf(rq, rp, r.Record.Meta); err != nil {
			return err
		}
		if r.SignOffs, err = every[db.SignOff](rq, "/v1/sign-offs", url.Values{"record_id": {rid.String()}}); err != nil {
			return err
		}
		v.Records = append(v.Records, r)
	}
	q := url.Values{"procedure_id": {id}, "include_voided": {"true"}, "limit": {fmt.Sprint(auditCouponLimit)}}
	if c := rq.URL.Query().Get("cursor"); c != "" {
		q.Set("cursor", c)
	}
	if v.Coupons, err = GetList[db.Coupon](rq.API, "/v1/coupons", q); err != nil {
		return err
	}
	for _, c := range v.Coupons.Items {
		ac, err := auditCoupon(rq, c)
		if err != nil {
			return err
		}
		v.Audited = append(v.Audited, ac)
		v.Subjects[c.ID.String()] = c.CouponMark
	}
	if err := rq.API.Get(path+"/flag-summary", &v.Summary); err != nil {
		return err
	}
	if v.Flags, err = GetList[db.Flag](rq.API, "/v1/flags", url.Values{"procedure_id": {id}, "limit": {fmt.Sprint(pageLimit)}}); err != nil {
		return err
	}
	return rq.Render(http.StatusOK, "audit-record.html", "Record view: "+v.Source, v)
}

// auditCoupon reads a coupon's history and its sections with theirs.
func auditCoupon(rq *Request, c db.Coupon) (auditedCoupon, error) {
	ac := auditedCoupon{Coupon: c}
	cp := "/v1/coupons/" + c.ID.String()
	var err error
	if ac.History, err = historyOf(rq, cp, c.Meta); err != nil {
		return ac, err
	}
	secs, err := every[db.Measurement](rq, cp+"/measurements", url.Values{"include_voided": {"true"}})
	if err != nil {
		return ac, err
	}
	for _, m := range secs {
		s := auditedRecord[db.Measurement]{Record: m}
		if s.History, err = historyOf(rq, "/v1/measurements/"+m.ID.String(), m.Meta); err != nil {
			return ac, err
		}
		ac.Sections = append(ac.Sections, s)
	}
	return ac, nil
}
