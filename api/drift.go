package api

import (
	"net/http"
	"strconv"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// driftPointOut is one coupon on a drift chart: its residual in the
// model's unit, standardised residual and both cumulative sums (σ units).
type driftPointOut struct {
	CouponID      uuid.UUID `json:"coupon_id"`
	CouponMark    string    `json:"coupon_mark"`
	WeldedOn      db.Date   `json:"welded_on"`
	PowerSourceID string    `json:"power_source_id"`
	WelderID      string    `json:"welder_id"`
	FillerLot     string    `json:"filler_lot"`
	Residual      float64   `json:"residual"`
	Z             float64   `json:"z"`
	CUSUMUpper    float64   `json:"cusum_upper"`
	CUSUMLower    float64   `json:"cusum_lower"`
}

// driftSignalOut is a chart that is out now: since which coupon, first
// crossing, direction and the estimated shift (model unit and σ).
type driftSignalOut struct {
	SinceCouponID   uuid.UUID `json:"since_coupon_id"`
	SinceCouponMark string    `json:"since_coupon_mark"`
	SinceWeldedOn   db.Date   `json:"since_welded_on"`
	SignalAtMark    string    `json:"signal_coupon_mark"`
	Direction       string    `json:"direction"`
	Shift           float64   `json:"shift"`
	ShiftSD         float64   `json:"shift_sd"`
}

// driftChartOut is one split's chart: residual points around the centre
// line 0 and the CUSUM against its decision interval ±h.
type driftChartOut struct {
	Split       string          `json:"split"`
	Value       string          `json:"value"`
	Label       string          `json:"label"`
	CentreLine  float64         `json:"centre_line"`
	UpperLimit  float64         `json:"upper_limit"`
	LowerLimit  float64         `json:"lower_limit"`
	Points      []driftPointOut `json:"points"`
	Signal      *driftSignalOut `json:"signal,omitempty"`
	Advice      string          `json:"advice,omitempty"`
	ExplainedBy string          `json:"explained_by,omitempty"`
}

// driftOut is GET /v1/drift's answer.
type driftOut struct {
	Group         db.CalibrationGroup `json:"group"`
	Family        string              `json:"family"`
	CalibrationID uuid.UUID           `json:"calibration_id"`
	Model         db.CalibrationModel `json:"model"`
	Unit          string              `json:"unit"`
	ResidualSD    float64             `json:"residual_sd"`
	Method        string              `json:"method"`
	K             float64             `json:"k"`
	H             float64             `json:"h"`
	InControlARL  float64             `json:"in_control_arl"`
	ShiftARL      float64             `json:"arl_at_1sd"`
	Charts        []driftChartOut     `json:"charts"`
	Caution       string              `json:"caution"`
}

// handleDrift answers GET /v1/drift: the charts of one group and family.
func (s *Server) handleDrift(c echo.Context) error {
	var u issues
	g := db.CalibrationGroup{Process: c.QueryParam("process"), ShieldingGas: c.QueryParam("shielding_gas"), JointType: c.QueryParam("joint_type")}
	for _, f := range []string{"process", "joint_type", "wire_diameter_mm"} {
		if c.QueryParam(f) == "" {
			u.missing(f, "names the calibration group")
		}
	}
	if err := u.err(); err != nil {
		return err
	}
	d, err := strconv.ParseFloat(c.QueryParam("wire_diameter_mm"), 64)
	if err != nil || !(d > 0) {
		return badRequest("wire_diameter_mm", "want a positive number of mm")
	}
	g.WireDiameterMM = d
	family := c.QueryParam("family")
	switch family {
	case "":
		family = "penetration"
	case "penetration", "melting":
	default:
		return badRequest("family", "want penetration or melting")
	}
	rep, err := s.store.Drift(c.Request().Context(), actorOf(c).Site, g, family)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, driftAnswer(rep))
}

// driftAnswer shapes a drift report for the API.
func driftAnswer(rep db.DriftReport) driftOut {
	out := driftOut{Group: rep.Group, Family: rep.Family, CalibrationID: rep.CalibrationID, Model: rep.Model, Unit: rep.Unit,
		ResidualSD: rep.ResidualSD, K: predict.CUSUMK, H: predict.CUSUMH, InControlARL: predict.CUSUMARL0, ShiftARL: predict.CUSUMARL1,
		Method: "two-sided tabular CUSUM of the residuals standardised by their prediction SD; k and h in σ units; " +
			"in-control average run length about 465 coupons, about 10.4 after a sustained 1σ shift (Montgomery, Introduction to Statistical Quality Control; from memory)",
		Charts: []driftChartOut{}, Caution: predictionCaution}
	for _, sr := range rep.Series {
		ch := driftChartOut{Split: sr.Field, Value: sr.Value, Label: sr.Label(), UpperLimit: sr.Chart.H, LowerLimit: -sr.Chart.H,
			Points: make([]driftPointOut, len(sr.Indices)), Advice: sr.Advice, ExplainedBy: sr.ExplainedBy}
		for j, k := range sr.Indices {
			cp, pt := rep.Coupons[k], sr.Chart.Points[j]
			ch.Points[j] = driftPointOut{CouponID: cp.ID, CouponMark: cp.Mark, WeldedOn: cp.WeldedOn, PowerSourceID: cp.PowerSourceID,
				WelderID: cp.WelderID, FillerLot: cp.FillerLot, Residual: cp.Residual, Z: pt.Z, CUSUMUpper: pt.Upper, CUSUMLower: pt.Lower}
		}
		if sig := sr.Chart.Current; sig != nil {
			since, first := rep.Coupons[sr.Indices[sig.Since]], rep.Coupons[sr.Indices[sig.Signal]]
			ch.Signal = &driftSignalOut{SinceCouponID: since.ID, SinceCouponMark: since.Mark, SinceWeldedOn: since.WeldedOn,
				SignalAtMark: first.Mark, Direction: sig.Direction, Shift: sig.ShiftSD * rep.ResidualSD, ShiftSD: sig.ShiftSD}
		}
		out.Charts = append(out.Charts, ch)
	}
	return out
}
