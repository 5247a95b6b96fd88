package lab

import (
	"net/http"
	"strconv"

	"github.com/google/uuid"

	"etchlog/db"
)

func init() {
	Register(
		Page{Pattern: "POST " + Prefix + "/coupons/{id}/sections", Roles: Recorders, Template: "coupon.html", Handle: addSection},
		Page{Pattern: "GET " + Prefix + "/sections/{id}/correct", Roles: Recorders, Template: "section-form.html", Handle: correctSectionPage},
		Page{Pattern: "POST " + Prefix + "/sections/{id}/correct", Roles: Recorders, Template: "section-form.html", Handle: correctSection},
		Page{Pattern: "POST " + Prefix + "/sections/{id}/void", Roles: Recorders, Template: "section-form.html", Handle: voidSection},
	)
}

// sectionFields are a macro-etch section's fields as the form lays them out.
var sectionFields = []formField{
	{"section", "Section", "Section"}, {"acceptance", "Accept or reject", "Section"},
	{"inspector", "Inspector", "Section"},
	{"penetration_mm", "Penetration", "Measured"}, {"bead_width_mm", "Bead width", "Measured"},
	{"reinforcement_mm", "Reinforcement (negative: underfill)", "Measured"},
	{"leg1_mm", "Fillet leg 1", "Measured"}, {"leg2_mm", "Fillet leg 2", "Measured"},
	{"throat_mm", "Fillet throat", "Measured"}, {"fused_area_mm2", "Fused area", "Measured"},
	{"remark", "Remark", "Measured"},
}

// addSection sends a new section of the coupon; the coupon page shows it
// with the coupon's flags as they now stand, or the form with the reasons.
func addSection(rq *Request) error {
	c, err := rq.readCoupon()
	if err != nil {
		return err
	}
	if err := rq.ParseForm(); err != nil {
		return err
	}
	b := body(rq.PostForm, sectionFields, rq.Units)
	var saved db.Measurement
	err = rq.API.Post("/v1/coupons/"+c.ID.String()+"/measurements", b, &saved)
	if p, refused := err.(*Problem); refused {
		return rq.showCoupon(p.Status, c, couponForms{Section: &Form{Values: rq.PostForm, Problem: p}})
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/coupons/" + c.ID.String() + "?section=" + saved.Section + "#sections")
}

// sectionForm is the section correction page's data.
type sectionForm struct {
	Section db.Measurement
	Coupon  db.Coupon
	Form    *Form
	Void    *Form
	Groups  []fieldGroup
	Accept  []string
}

// readSection reads the section of the page's path and its coupon.
func (rq *Request) readSection() (db.Measurement, db.Coupon, error) {
	var m db.Measurement
	var c db.Coupon
	id, err := uuid.Parse(rq.PathValue("id"))
	if err != nil {
		return m, c, &Problem{Status: http.StatusNotFound, Title: "No such section", Detail: "There is no section " + rq.PathValue("id") + "."}
	}
	if err := rq.API.Get("/v1/measurements/"+id.String(), &m); err != nil {
		return m, c, err
	}
	return m, c, rq.API.Get("/v1/coupons/"+m.CouponID.String(), &c)
}

func (rq *Request) showSectionForm(status int, m db.Measurement, c db.Coupon, f, void *Form) error {
	if void == nil {
		void = &Form{}
	}
	return rq.Render(status, "section-form.html", "Correct section "+m.Section+" of coupon "+c.CouponMark,
		sectionForm{Section: m, Coupon: c, Form: f, Void: void, Groups: groups(sectionFields), Accept: enumValues("acceptance")})
}

// correctSectionPage shows the form filled with the section's current revision.
func correctSectionPage(rq *Request) error {
	m, c, err := rq.readSection()
	if err != nil {
		return err
	}
	v := formValues(m, sectionFields, rq.Units, nil)
	v.Set("base_revision", strconv.Itoa(m.Revision))
	return rq.showSectionForm(http.StatusOK, m, c, &Form{Values: v}, nil)
}

// correctSection sends the correction with its reason.
func correctSection(rq *Request) error {
	m, c, err := rq.readSection()
	if err != nil {
		return err
	}
	if err := rq.ParseForm(); err != nil {
		return err
	}
	b := body(rq.PostForm, sectionFields, rq.Units)
	b["coupon_id"] = m.CouponID.String()
	addChange(b, rq.PostForm)
	err = rq.API.Put("/v1/measurements/"+m.ID.String(), b, nil)
	if p, refused := err.(*Problem); refused {
		return rq.showSectionForm(p.Status, m, c, &Form{Values: rq.PostForm, Problem: p}, nil)
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/coupons/" + c.ID.String() + "?section=" + m.Section + "#sections")
}

// voidSection voids the section with the reason given.
func voidSection(rq *Request) error {
	m, c, err := rq.readSection()
	if err != nil {
		return err
	}
	if err := rq.ParseForm(); err != nil {
		return err
	}
	b := map[string]any{}
	addChange(b, rq.PostForm)
	err = rq.API.Post("/v1/measurements/"+m.ID.String()+"/void", b, nil)
	if p, refused := err.(*Problem); refused {
		v := formValues(m, sectionFields, rq.Units, nil)
		v.Set("base_revision", strconv.Itoa(m.Revision))
		return rq.showSectionForm(p.Status, m, c, &Form{Values: v}, &Form{Values: rq.PostForm, Problem: p})
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/coupons/" + c.ID.String() + "#sections")
}
