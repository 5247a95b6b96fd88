package lab

import (
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"etchlog/api/lab/chart"
	"etchlog/db"
)

func init() {
	Register(Page{Pattern: "GET " + Prefix + "/procedures/{id}/next-coupons", Roles: Engineers, Template: "next-coupons.html", Handle: nextCouponsPage})
}

// proposalsAnswer is the part of POST /v1/coupon-plans/proposals the page shows.
type proposalsAnswer struct {
	CouponsUsed    int      `json:"coupons_used"`
	ResidualSD     *float64 `json:"residual_sd"`
	Unit           string   `json:"unit"`
	StartingDesign bool     `json:"starting_design"`
	Basis          string   `json:"basis"`
	Proposals      []struct {
		N                 int      `json:"-"`
		CurrentA          float64  `json:"current_a"`
		VoltageV          float64  `json:"voltage_v"`
		TravelSpeedMMPerS float64  `json:"travel_speed_mm_s"`
		CTWDMM            *float64 `json:"ctwd_mm"`
		Coefficients      []struct {
			Term      string  `json:"term"`
			ShrinkPct float64 `json:"shrink_pct"`
		} `json:"coefficients"`
	} `json:"proposals"`
	Notes []string `json:"notes"`
}

// driftAnswer is the part of GET /v1/drift the page shows.
type driftAnswer struct {
	Model  string  `json:"model"`
	Unit   string  `json:"unit"`
	H      float64 `json:"h"`
	Charts []struct {
		Split  string `json:"split"`
		Label  string `json:"label"`
		Points []struct {
			CouponID   string  `json:"coupon_id"`
			CouponMark string  `json:"coupon_mark"`
			Residual   float64 `json:"residual"`
			Upper      float64 `json:"cusum_upper"`
			Lower      float64 `json:"cusum_lower"`
		} `json:"points"`
		Signal *struct {
			SinceMark string  `json:"since_coupon_mark"`
			SinceDay  string  `json:"since_welded_on"`
			Direction string  `json:"direction"`
			Shift     float64 `json:"shift"`
		} `json:"signal"`
		Advice      string `json:"advice"`
		ExplainedBy string `json:"explained_by"`
	} `json:"charts"`
}

// driftFigure is one split's chart with its words.
type driftFigure struct {
	figure
	Signal string
	Advice string
}

// nextCouponsView is what next-coupons.html shows.
type nextCouponsView struct {
	Proc       db.Procedure
	Form       *Form
	JointTypes []string
	Models     []string
	Answer     *proposalsAnswer
	DriftNote  string
	Drift      []driftFigure
}

// nextCouponsPage asks the API for the next coupons of the procedure's
// calibration group (a read: the form is sent with GET) and for the
// group's drift charts, and shows both.
func nextCouponsPage(rq *Request) error {
	id := rq.PathValue("id")
	v := nextCouponsView{JointTypes: mustEnum("joint_type").Values, Models: []string{"jackson_free", "jackson_fixed"}}
	if err := rq.API.Get("/v1/procedures/"+url.PathEscape(id), &v.Proc); err != nil {
		return err
	}
	q := rq.URL.Query()
	for k, def := range map[string]string{"joint_type": "fillet", "model": "jackson_free", "count": "3",
		"current_step_a": "5", "voltage_step_v": "0.5", "travel_speed_step_mm_s": "0.5"} {
		if strings.TrimSpace(q.Get(k)) == "" {
			q.Set(k, def)
		}
	}
	v.Form = &Form{Values: q}
	title := "Next coupons and drift for " + v.Proc.Code
	in := map[string]any{"procedure_id": id, "joint_type": q.Get("joint_type"), "model": q.Get("model")}
	for _, f := range []string{"count", "current_step_a", "voltage_step_v", "travel_speed_step_mm_s"} {
		x, err := strconv.ParseFloat(strings.TrimSpace(q.Get(f)), 64)
		if err != nil {
			v.Form.Problem = &Problem{Status: http.StatusUnprocessableEntity, Title: "Not a number",
				Fields: map[string]string{f: fmt.Sprintf("%q is not a number", q.Get(f))}, Order: []string{f}}
			return rq.Render(http.StatusUnprocessableEntity, "next-coupons.html", title, v)
		}
		in[f] = x
	}
	var ans proposalsAnswer
	if err := rq.API.Post("/v1/coupon-plans/proposals", in, &ans); err != nil {
		var p *Problem
		if !errors.As(err, &p) {
			return err
		}
		v.Form.Problem = p
	} else {
		for i := range ans.Proposals {
			ans.Proposals[i].N = i + 1
		}
		v.Answer = &ans
	}
	if err := v.drift(rq, q.Get("joint_type")); err != nil {
		return err
	}
	status := http.StatusOK
	if v.Form.Problem != nil {
		status = v.Form.Problem.Status
	}
	return rq.Render(status, "next-coupons.html", title, v)
}

// drift reads the group's drift charts and draws one figure per split.
func (v *nextCouponsView) drift(rq *Request, joint string) error {
	q := url.Values{"process": {v.Proc.Process}, "wire_diameter_mm": {strconv.FormatFloat(v.Proc.WireDiameterMM, 'g', -1, 64)},
		"shielding_gas": {v.Proc.ShieldingGas}, "joint_type": {joint}}
	var d driftAnswer
	if err := rq.API.Get("/v1/drift?"+q.Encode(), &d); err != nil {
		var p *Problem
		if errors.As(err, &p) && p.Status == http.StatusNotFound {
			v.DriftNote = "No penetration calibration is in use for this group, so there is nothing to chart drift against."
			return nil
		}
		return err
	}
	if len(d.Charts) == 0 || len(d.Charts[0].Points) == 0 {
		v.DriftNote = "No coupon of this group has been measured since its calibration in use was fitted."
	}
	for i, c := range d.Charts {
		if len(c.Points) == 0 {
			continue
		}
		pts := make([]chart.DriftPoint, len(c.Points))
		for j, p := range c.Points {
			pts[j] = chart.DriftPoint{Name: p.CouponMark, Href: "/lab/coupons/" + p.CouponID, Upper: p.Upper, Lower: p.Lower,
				Residual: p.Residual, Out: p.Upper > d.H || p.Lower > d.H}
		}
		heading := "Drift of " + c.Label
		svg, err := chart.Drift(heading, d.Unit, d.H, pts)
		if err != nil {
			return err
		}
		f := driftFigure{figure: figure{ID: fmt.Sprintf("drift-%d", i), Heading: heading, SVG: template.HTML(svg),
			Caption: fmt.Sprintf("%d coupons against the %s calibration in use; centre line 0, limits ±%g σ.", len(c.Points), d.Model, d.H)},
			Advice: c.Advice}
		if s := c.Signal; s != nil {
			f.Signal = fmt.Sprintf("Out of control: since %s (welded %s) the coupons come out %+.3g %s %s the calibration.",
				s.SinceMark, s.SinceDay, s.Shift, d.Unit, s.Direction)
		}
		v.Drift = append(v.Drift, f)
	}
	return nil
}
