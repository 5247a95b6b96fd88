package lab

import (
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/predict"
)

func init() {
	Register(
		Page{Pattern: "GET " + Prefix + "/coupons/new", Roles: Recorders, Nav: "Enter a coupon", NavOrder: 20,
			Template: "coupon-form.html", Handle: newCouponPage},
		Page{Pattern: "POST " + Prefix + "/coupons", Roles: Recorders, Template: "coupon-form.html", Handle: createCoupon},
		Page{Pattern: "GET " + Prefix + "/coupons/{id}/correct", Roles: Recorders, Template: "coupon-form.html", Handle: correctCouponPage},
		Page{Pattern: "POST " + Prefix + "/coupons/{id}/correct", Roles: Recorders, Template: "coupon-form.html", Handle: correctCoupon},
		Page{Pattern: "POST " + Prefix + "/coupons/{id}/void", Roles: Recorders, Template: "coupon.html", Handle: voidCoupon},
	)
}

// couponForm is the data of the coupon entry and correction form.
type couponForm struct {
	Form       *Form
	Groups     []fieldGroup
	Procedures []db.Procedure
	Procedure  *db.Procedure     // the chosen one, whose values filled the defaults
	Hints      map[string]string // by field: the qualified range, or the value left to the procedure
	JointTypes []string
	Polarities []string
	Action     string
	Correcting *db.Coupon // the revision being corrected
}

// newCouponPage shows the entry form; with ?procedure_id the procedure's
// values fill the defaults.
func newCouponPage(rq *Request) error {
	f := &Form{Values: url.Values{}}
	if id := rq.URL.Query().Get("procedure_id"); id != "" {
		f.Values.Set("procedure_id", id)
	}
	return rq.showCouponForm(http.StatusOK, f, nil, true)
}

// showCouponForm draws the form; defaults fills empty fields from the
// chosen procedure.
func (rq *Request) showCouponForm(status int, f *Form, correcting *db.Coupon, defaults bool) error {
	ps := newProcedures(rq.API)
	list, err := ps.all()
	if err != nil {
		return err
	}
	d := couponForm{Form: f, Groups: groups(couponFields), Procedures: list, Action: Prefix + "/coupons",
		JointTypes: enumValues("joint_type"), Polarities: enumValues("polarity"), Correcting: correcting, Hints: map[string]string{}}
	if id, err := uuid.Parse(f.Value("procedure_id")); err == nil {
		if pr, err := ps.get(id); err == nil {
			d.Procedure = &pr
			if defaults {
				for k, v := range procedureDefaults(pr, rq.Units) {
					if f.Values.Get(k) == "" {
						f.Values[k] = v
					}
				}
			}
			d.Hints = rq.qualifiedRanges(id)
		}
	}
	if correcting != nil {
		d.Action = Prefix + "/coupons/" + correcting.ID.String() + "/correct"
		for _, name := range correcting.Inherited {
			if v := inheritedValue(rq.Units, *correcting, name); v != "" {
				d.Hints[name] = "left out: taken from the procedure (" + v + ")"
			}
		}
	}
	title := "Enter a coupon"
	if correcting != nil {
		title = "Correct coupon " + correcting.CouponMark
	}
	return rq.Render(status, "coupon-form.html", title, d)
}

// inheritedValue is what a coupon takes from its procedure for a field it leaves out.
func inheritedValue(u Units, c db.Coupon, name string) string {
	switch name {
	case "wire_diameter_mm":
		return FormatQuantity(u, name, c.WireDiameterMM)
	case "polarity":
		if c.Polarity != nil {
			return *c.Polarity
		}
	case "shielding_gas":
		return c.ShieldingGas
	}
	return ""
}

// enumValues lists a registered word's allowed values.
func enumValues(name string) []string {
	e, _ := predict.LookupEnum(name)
	return e.Values
}

// qualifiedRanges returns the procedure's qualified range of each numeric
// variable in words ("qualified 160–220 A"), by field, as a hint beside the
// field; none when the procedure has no ranges.
func (rq *Request) qualifiedRanges(id uuid.UUID) map[string]string {
	var r db.ProcedureRanges
	out := map[string]string{}
	if err := rq.API.Get("/v1/procedures/"+id.String()+"/ranges", &r); err != nil {
		return out
	}
	for _, v := range r.Ranges.Variables {
		if len(v.Bands) == 0 {
			continue
		}
		var parts []string
		for _, b := range v.Bands {
			parts = append(parts, bounds(rq.Units, db.Flag{Variable: string(v.Variable), Min: finite(b.Min), Max: finite(b.Max)}))
		}
		out[string(v.Variable)] = "qualified " + strings.Join(parts, " or ")
	}
	return out
}

// finite returns x, or nil for an unbounded side.
func finite(x float64) *float64 {
	if math.IsInf(x, 0) {
		return nil
	}
	return &x
}

// createCoupon sends the form to the API; on success it shows the saved
// coupon with its flags, on refusal the form again with the reasons.
func createCoupon(rq *Request) error {
	if err := rq.ParseForm(); err != nil {
		return err
	}
	b := body(rq.PostForm, couponFields, rq.Units)
	if id := strings.TrimSpace(rq.PostForm.Get("procedure_id")); id != "" {
		b["procedure_id"] = id
	}
	var saved db.Coupon
	err := rq.API.Post("/v1/coupons", b, &saved)
	if p, refused := err.(*Problem); refused {
		return rq.showCouponForm(p.Status, &Form{Values: rq.PostForm, Problem: p}, nil, false)
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/coupons/" + saved.ID.String() + "?saved=" + strconv.Itoa(saved.Revision))
}

// readCoupon reads the coupon of the page's path.
func (rq *Request) readCoupon() (db.Coupon, error) {
	var c db.Coupon
	id, err := uuid.Parse(rq.PathValue("id"))
	if err != nil {
		return c, &Problem{Status: http.StatusNotFound, Title: "No such coupon", Detail: "There is no coupon " + rq.PathValue("id") + "."}
	}
	return c, rq.API.Get("/v1/coupons/"+id.String(), &c)
}

// correctCouponPage shows the form filled with the coupon's current
// revision; a field the coupon inherits stays empty, showing the
// procedure's value beside it.
func correctCouponPage(rq *Request) error {
	c, err := rq.readCoupon()
	if err != nil {
		return err
	}
	v := formValues(c, couponFields, rq.Units, c.Inherited)
	if c.ProcedureID != nil {
		v.Set("procedure_id", c.ProcedureID.String())
	}
	v.Set("base_revision", strconv.Itoa(c.Revision))
	return rq.showCouponForm(http.StatusOK, &Form{Values: v}, &c, false)
}

// correctCoupon sends the correction (a new revision with its reason).
func correctCoupon(rq *Request) error {
	c, err := rq.readCoupon()
	if err != nil {
		return err
	}
	if err := rq.ParseForm(); err != nil {
		return err
	}
	b := body(rq.PostForm, couponFields, rq.Units)
	b["procedure_id"] = strings.TrimSpace(rq.PostForm.Get("procedure_id"))
	if c.QualificationRecordID != nil {
		b["qualification_record_id"] = c.QualificationRecordID.String()
	}
	if b["procedure_id"] == "" {
		delete(b, "procedure_id")
	}
	addChange(b, rq.PostForm)
	var saved db.Coupon
	err = rq.API.Put("/v1/coupons/"+c.ID.String(), b, &saved)
	if p, refused := err.(*Problem); refused {
		return rq.showCouponForm(p.Status, &Form{Values: rq.PostForm, Problem: p}, &c, false)
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/coupons/" + saved.ID.String() + "?saved=" + strconv.Itoa(saved.Revision))
}

// addChange puts a correction's or void's base revision and reason into b.
func addChange(b map[string]any, form url.Values) {
	if n, err := strconv.Atoi(form.Get("base_revision")); err == nil {
		b["base_revision"] = n
	} else if s := form.Get("base_revision"); s != "" {
		b["base_revision"] = s
	}
	if r := strings.TrimSpace(form.Get("reason")); r != "" {
		b["reason"] = r
	}
}

// voidCoupon voids the coupon with the reason given; a refusal is shown on
// the coupon's page next to the reason field.
func voidCoupon(rq *Request) error {
	c, err := rq.readCoupon()
	if err != nil {
		return err
	}
	if err := rq.ParseForm(); err != nil {
		return err
	}
	b := map[string]any{}
	addChange(b, rq.PostForm)
	var saved db.Coupon
	err = rq.API.Post("/v1/coupons/"+c.ID.String()+"/void", b, &saved)
	if p, refused := err.(*Problem); refused {
		return rq.showCoupon(p.Status, c, couponForms{Void: &Form{Values: rq.PostForm, Problem: p}})
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/coupons/" + saved.ID.String() + "?saved=" + strconv.Itoa(saved.Revision))
}
