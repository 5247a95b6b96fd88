package api

import (
	"encoding/json"
	"fmt"
	"net/http"
	"strings"

	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// couponPlanCreateIn is a plan request with the prefix of the marks to
// reserve (prefix-01, prefix-02...) and a note.
type couponPlanCreateIn struct {
	couponPlanIn
	MarkPrefix *string `json:"mark_prefix"`
	Note       string  `json:"note,omitempty"`
}

// plannedCouponOut is one planned coupon: its mark, the setting and, once
// welded, the coupon that carries the mark.
type plannedCouponOut struct {
	Position int    `json:"position"`
	Mark     string `json:"coupon_mark"`
	proposalOut
	CouponID *string `json:"coupon_id,omitempty"`
}

// planProgressOut compares the plan's expected standard errors with a fit
// of the group's coupons now.
type planProgressOut struct {
	Welded       int               `json:"welded"`
	CouponsNow   int               `json:"coupons_now"`
	Coefficients []progressTermOut `json:"coefficients"`
	Note         string            `json:"note"`
}

// progressTermOut is one coefficient: its SE when planned, the SE expected
// after as many planned coupons as have come back, and the SE of a fit now.
type progressTermOut struct {
	Term         string   `json:"term"`
	StdErrBefore *float64 `json:"std_err_before,omitempty"`
	StdErrPlan   *float64 `json:"std_err_expected,omitempty"`
	StdErrNow    *float64 `json:"std_err_now,omitempty"`
}

// couponPlanRecordOut is a stored plan as answered.
type couponPlanRecordOut struct {
	db.CouponPlan
	Request  json.RawMessage    `json:"request"`
	Plan     json.RawMessage    `json:"plan"`
	Coupons  []plannedCouponOut `json:"coupons"`
	Progress *planProgressOut   `json:"progress,omitempty"`
	Caution  string             `json:"caution"`
}

// handleCouponPlanCreate answers POST /v1/coupon-plans: the proposals,
// stored with a reserved mark each.
func (s *Server) handleCouponPlanCreate(c echo.Context) error {
	var in couponPlanCreateIn
	if err := bind(c, &in); err != nil {
		return err
	}
	if in.MarkPrefix == nil {
		return badRequest("mark_prefix", "is required: the planned coupons are marked mark_prefix-01, -02...")
	}
	prefix := strings.TrimSpace(*in.MarkPrefix)
	if prefix == "" || len(prefix) > 60 {
		return unprocessable(FieldIssue{"mark_prefix", "must be 1–60 characters, not blank"})
	}
	out, _, err := s.proposeCoupons(c, in.couponPlanIn)
	if err != nil {
		return err
	}
	marks := make([]string, len(out.Proposals))
	for i := range marks {
		marks[i] = fmt.Sprintf("%s-%02d", prefix, i+1)
	}
	req, err := json.Marshal(in)
	if err != nil {
		return err
	}
	plan, err := json.Marshal(out)
	if err != nil {
		return err
	}
	p, err := s.store.CreateCouponPlan(c.Request().Context(), actorOf(c), db.CouponPlan{ProcedureID: out.ProcedureID,
		Model: out.Model, CalibrationGroup: out.Group, Request: req, Plan: plan, Marks: marks, Note: in.Note})
	if err != nil {
		return err
	}
	rec, err := s.couponPlanRecord(c, p)
	if err != nil {
		return err
	}
	c.Response().Header().Set(echo.HeaderLocation, "/v1/coupon-plans/"+p.ID.String())
	return c.JSON(http.StatusCreated, rec)
}

// handleCouponPlanGet answers GET /v1/coupon-plans/{id}.
func (s *Server) handleCouponPlanGet(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	p, err := s.store.CouponPlan(c.Request().Context(), actorOf(c).Site, id)
	if err != nil {
		return err
	}
	rec, err := s.couponPlanRecord(c, p)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, rec)
}

// couponPlanRecord lists the plan's coupons with the marks that have come
// back and, once some have, compares a fit of the group now with what the
// plan expected.
func (s *Server) couponPlanRecord(c echo.Context, p db.CouponPlan) (couponPlanRecordOut, error) {
	ctx, site := c.Request().Context(), actorOf(c).Site
	out := couponPlanRecordOut{CouponPlan: p, Request: p.Request, Plan: p.Plan, Coupons: []plannedCouponOut{}, Caution: predictionCaution}
	var plan couponPlanOut
	if err := json.Unmarshal(p.Plan, &plan); err != nil {
		return out, fmt.Errorf("coupon plan %s: %w", p.ID, err)
	}
	back, err := s.store.PlannedCoupons(ctx, site, p.Marks)
	if err != nil {
		return out, err
	}
	byMark := map[string]string{}
	for _, b := range back {
		byMark[b.Mark] = b.ID.String()
	}
	for i, m := range p.Marks {
		pc := plannedCouponOut{Position: i + 1, Mark: m, proposalOut: plan.Proposals[i]}
		if id, ok := byMark[m]; ok {
			pc.CouponID = &id
		}
		out.Coupons = append(out.Coupons, pc)
	}
	if len(back) == 0 || plan.StartingDesign {
		return out, nil
	}
	var in couponPlanIn
	if err := json.Unmarshal(p.Request, &in); err != nil {
		return out, fmt.Errorf("coupon plan %s: %w", p.ID, err)
	}
	arc := 0.0
	if in.ArcLengthMM != nil {
		arc = *in.ArcLengthMM
	}
	pin := predict.PlanInput{Model: predictModels[p.Model]}
	var now couponPlanOut
	if err := s.planCoupons(ctx, site, p.CalibrationGroup, arc, &pin, &now); err != nil {
		return out, err
	}
	pr := &planProgressOut{Welded: len(back), CouponsNow: now.CouponsUsed, Coefficients: []progressTermOut{},
		Note: "std_err_expected assumes the welded coupons are the plan's first ones and σ as when planned; std_err_now is a fit of the group's coupons now"}
	nowSE := currentStdErrs(pin)
	expected := plan.Proposals[min(len(back), len(plan.Proposals))-1].Coefficients
	for j, term := range predict.CoefficientTerms(pin.Model) {
		t := progressTermOut{Term: term}
		if j < len(expected) {
			t.StdErrBefore, t.StdErrPlan = expected[j].StdErrBefore, expected[j].StdErrAfter
		}
		if nowSE != nil {
			t.StdErrNow = &nowSE[j]
		}
		pr.Coefficients = append(pr.Coefficients, t)
	}
	out.Progress = pr
	return out, nil
}

// currentStdErrs is the standard errors of a fit of the plan's model to the
// coupons in pin now, nil when they cannot be fitted.
func currentStdErrs(pin predict.PlanInput) []float64 {
	if pin.ResidualSD <= 0 {
		return nil
	}
	plan, err := predict.CoefficientStdErrs(pin.Model, pin.Coupons, pin.ResidualSD)
	if err != nil {
		return nil
	}
	return plan
}
