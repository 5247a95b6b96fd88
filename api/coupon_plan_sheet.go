package api

import (
	"encoding/json"
	"fmt"
	"net/http"
	"strings"
	"text/tabwriter"

	"github.com/labstack/echo/v4"
)

// handleCouponPlanSheet answers GET /v1/coupon-plans/{id}/sheet: the plan
// as plain text to print and take to the booth: marks, settings, what each
// coupon is for, and the caution.
func (s *Server) handleCouponPlanSheet(c echo.Context) error {
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
	var plan couponPlanOut
	if err := json.Unmarshal(p.Plan, &plan); err != nil {
		return err
	}
	var b strings.Builder
	fmt.Fprintf(&b, "Coupon plan %s\n", p.ID)
	fmt.Fprintf(&b, "Planned %s by %s for a %s calibration of %s %.4g mm %s %s\n", p.CreatedAt.Format("2006-01-02 15:04 MST"),
		p.CreatedBy, p.Model, p.Process, p.WireDiameterMM, p.ShieldingGas, p.JointType)
	fmt.Fprintf(&b, "Procedure %s; %s\n", p.ProcedureID, plan.Basis)
	if p.Note != "" {
		fmt.Fprintf(&b, "Note: %s\n", p.Note)
	}
	b.WriteString("\n")
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "#\tmark\tcurrent A\tvoltage V\ttravel mm/s\tCTWD mm\twelded as")
	for _, pc := range rec.Coupons {
		ctwd, welded := "-", "-"
		if pc.CTWDMM != nil {
			ctwd = fmt.Sprintf("%g", *pc.CTWDMM)
		}
		if pc.CouponID != nil {
			welded = *pc.CouponID
		}
		fmt.Fprintf(tw, "%d\t%s\t%g\t%g\t%g\t%s\t%s\n", pc.Position, pc.Mark, pc.CurrentA, pc.VoltageV, pc.TravelSpeedMMPerS, ctwd, welded)
	}
	tw.Flush()
	b.WriteString("\nStamp each coupon with its mark and record it with that coupon_mark; cut and etch it as the procedure says.\n")
	b.WriteString("\nCAUTION: " + predictionCaution + "\n")
	return c.Blob(http.StatusOK, "text/plain; charset=utf-8", []byte(b.String()))
}
