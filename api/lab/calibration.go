package lab

import (
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strings"

	"etchlog/api/lab/chart"
	"etchlog/db"
	"etchlog/predict"
)

func init() {
	Register(
		Page{Pattern: "GET " + Prefix + "/calibrations", Roles: Everyone, Nav: "Calibrations", NavOrder: 40,
			Template: "calibrations.html", Handle: calibrationList},
		Page{Pattern: "GET " + Prefix + "/calibrations/{id}", Roles: Everyone, Template: "calibration.html", Handle: calibrationPage},
		Page{Pattern: "POST " + Prefix + "/calibrations/{id}/activation", Roles: Engineers, Template: "calibration.html",
			Handle: calibrationActivation},
	)
}

// calibrationAnswer is GET /v1/calibrations/{id}: the stored fit, the
// diagnostics of each coupon, the activations and the caution.
type calibrationAnswer struct {
	db.Calibration
	Diagnostics *predict.Diagnostics       `json:"diagnostics"`
	Activations []db.CalibrationActivation `json:"activations"`
	Caution     string                     `json:"caution"`
}

// figure is one chart of a page with its heading and caption.
type figure struct {
	ID, Heading, Caption string
	SVG                  template.HTML // made by package chart, which escapes every text it writes
}

// markedCoupon is a coupon the diagnostics mark, as the list under the
// charts shows it: its tag in the charts, its mark and link, and why.
type markedCoupon struct {
	Tag, Name, Href string
	Reasons         []string
}

// calibrationView is what calibration.html shows.
type calibrationView struct {
	Cal           calibrationAnswer
	Group         string
	Figures       []figure
	Marked        []markedCoupon
	ExponentWords string
	Form          *Form
	Changed       string
	MayChange     bool
}

// calibrationPage shows one calibration: its fit, charts, marked coupons,
// the test of the published exponents and the activation form.
func calibrationPage(rq *Request) error {
	v, err := calibrationOf(rq, nil)
	if err != nil {
		return err
	}
	v.Changed = rq.URL.Query().Get("changed")
	return rq.Render(http.StatusOK, "calibration.html", "Calibration", v)
}

// calibrationActivation activates or deactivates the calibration with the
// reason typed, through the API; a refusal shows the page again with the
// reason next to its field.
func calibrationActivation(rq *Request) error {
	id := rq.PathValue("id")
	action := rq.PostFormValue("action")
	if action != "activate" && action != "deactivate" {
		return &Problem{Status: http.StatusUnprocessableEntity, Title: "Unknown action", Detail: "Choose activate or deactivate."}
	}
	err := rq.API.Post("/v1/calibrations/"+url.PathEscape(id)+"/"+action, map[string]string{"reason": rq.PostFormValue("reason")}, nil)
	if p, refused := err.(*Problem); refused {
		v, err := calibrationOf(rq, &Form{Values: rq.PostForm, Problem: p})
		if err != nil {
			return err
		}
		return rq.Render(p.Status, "calibration.html", "Calibration", v)
	}
	if err != nil {
		return err
	}
	return rq.Redirect(Prefix + "/calibrations/" + url.PathEscape(id) + "?changed=" + action)
}

// calibrationOf reads the calibration and draws its charts.
func calibrationOf(rq *Request, f *Form) (calibrationView, error) {
	if f == nil {
		f = &Form{}
	}
	var cal calibrationAnswer
	if err := rq.API.Get("/v1/calibrations/"+url.PathEscape(rq.PathValue("id")), &cal); err != nil {
		return calibrationView{}, err
	}
	v := calibrationView{Cal: cal, Form: f, MayChange: rq.User.Role == db.RoleEngineer,
		Group: fmt.Sprintf("%s, %s wire, %s, %s joint", cal.Process, FormatQuantity(rq.Units, "wire_diameter_mm", cal.WireDiameterMM),
			orNone(cal.ShieldingGas), cal.JointType)}
	if cal.Fit.Penetration != nil {
		v.ExponentWords = ExponentTestWords(string(cal.Model), cal.Fit.Penetration, cal.Level)
	}
	pts, err := fitPoints(rq.Units, cal)
	if err != nil || len(pts) == 0 {
		return v, err
	}
	if v.Figures, err = fitFigures(rq.Units, cal, pts); err != nil {
		return v, err
	}
	v.Marked = markedCoupons(rq, cal, pts)
	return v, nil
}

// markedCoupons lists the coupons the diagnostics mark, with their marks
// read from the API and the reasons in words.
func markedCoupons(rq *Request, cal calibrationAnswer, pts []chart.FitPoint) []markedCoupon {
	d := cal.Diagnostics
	var out []markedCoupon
	for i, tag := range chart.Tags(pts) {
		if tag == "" {
			continue
		}
		s := d.Samples[i]
		m := markedCoupon{Tag: tag, Name: pts[i].Name, Href: pts[i].Href}
		var c struct {
			Mark string `json:"coupon_mark"`
		}
		if rq.API.Get("/v1/coupons/"+url.PathEscape(s.ID), &c) == nil && c.Mark != "" {
			m.Name = "coupon " + c.Mark
		}
		if s.HighCooksDistance {
			m.Reasons = append(m.Reasons, fmt.Sprintf("Cook's distance %.3g, above 4/n = %.3g: leaving it out moves the fit", s.CooksDistance, d.CooksDistanceCutoff))
		}
		if s.HighLeverage {
			m.Reasons = append(m.Reasons, fmt.Sprintf("leverage %.3g, above 2p/n = %.3g: its setting is far from the others'", s.Leverage, d.LeverageCutoff))
		}
		if s.OutsidePrediction {
			m.Reasons = append(m.Reasons, fmt.Sprintf("outside the %s prediction interval of the fit without it", levelPercent(d.Level)))
		}
		out = append(out, m)
	}
	return out
}

// orNone writes an empty text as "no gas recorded".
func orNone(s string) string {
	if strings.TrimSpace(s) == "" {
		return "no gas recorded"
	}
	return s
}

// calibrationList lists the site's calibrations, newest last, a page at a time.
func calibrationList(rq *Request) error {
	const limit = 25
	q := url.Values{"limit": {fmt.Sprint(limit)}}
	if c := rq.URL.Query().Get("cursor"); c != "" {
		q.Set("cursor", c)
	}
	l, err := GetList[db.Calibration](rq.API, "/v1/calibrations", q)
	if err != nil {
		return err
	}
	return rq.Render(http.StatusOK, "calibrations.html", "Calibrations", struct {
		List[db.Calibration]
		Limit int
	}{l, limit})
}
