package api

import (
	"errors"

	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// predictionCaution is sent with every prediction, inverse solve and window.
const predictionCaution = "Predictions are estimates for planning; they never replace qualification testing. " +
	"Qualification follows the governing welding code; defer to local codes, the code of record and " +
	"licensed or certified engineering and inspection practice."

// defaultLevel is the confidence level of intervals when a request gives none.
const defaultLevel = 0.95

// Where a model's coefficients came from, as reported in responses.
const (
	sourceCalibration = "calibration" // the group's active calibration
	sourceRequest     = "request"     // coefficients the caller sent
	sourceNone        = "none"        // neither: the value is not computed
)

// jacksonKIn is a Jackson coefficient as a caller sends it.
type jacksonKIn struct {
	Value float64 `json:"value" validate:"required,gt=0"`
	Units string  `json:"units" validate:"required,oneof=metric inch"`
}

func (k jacksonKIn) jackson() predict.JacksonK {
	return predict.JacksonK{Value: k.Value, Units: predict.JacksonUnits(k.Units)}
}

// lesnewichIn is a pair of Lesnewich coefficients as a caller sends them:
// α in kg/(h·A) or lb/(h·A), β in kg/(h·A²·mm) or lb/(h·A²·in), one
// spelling of each (bound in the metric one, converted exactly).
type lesnewichIn struct {
	AlphaKgPerHA   *float64 `json:"alpha_kg_h_a,omitempty" validate:"omitempty,quantity"`
	BetaKgPerHA2MM *float64 `json:"beta_kg_h_a2_mm,omitempty" validate:"omitempty,quantity"`
}

// lesnewich returns the coefficients, both required.
func (l lesnewichIn) lesnewich() (predict.Lesnewich, error) {
	u := units{prefix: "lesnewich."}
	alpha := u.req("alpha_kg_h_a", l.AlphaKgPerHA)
	beta := u.req("beta_kg_h_a2_mm", l.BetaKgPerHA2MM)
	return predict.Lesnewich{AlphaKgPerHA: alpha, BetaKgPerHA2MM: beta}, u.err()
}

// groupFields are the optional calibration-group fields of a request; with
// them the group's active calibrations are used.
type groupFields struct {
	Process      *string `json:"process" validate:"omitempty,enum"`
	ShieldingGas *string `json:"shielding_gas" validate:"omitempty,max=64"`
	JointType    *string `json:"joint_type" validate:"omitempty,enum"`
}

// metricInput is a request body that converts into metric values Q.
type metricInput[Q any] interface{ metric() (Q, error) }

// bindMetric binds the body, converts it into metric values and validates them.
func bindMetric[Q any, In metricInput[Q]](s *Server, c echo.Context) (In, Q, error) {
	var in In
	var q Q
	if err := bind(c, &in); err != nil {
		return in, q, err
	}
	q, err := in.metric()
	if err != nil {
		return in, q, err
	}
	return in, q, s.check(q)
}

// calibrationGroup validates the request's group fields and returns the group they name.
func (s *Server) calibrationGroup(g groupFields, wireDiameterMM *float64) (*db.CalibrationGroup, error) {
	if err := s.check(g); err != nil {
		return nil, err
	}
	return g.group(wireDiameterMM)
}

// group returns the calibration group named by the request, nil when none of
// process, shielding_gas and joint_type is given. With any of them, process,
// joint_type and the wire diameter are required (an absent gas is "").
func (g groupFields) group(wireDiameterMM *float64) (*db.CalibrationGroup, error) {
	if g.Process == nil && g.ShieldingGas == nil && g.JointType == nil {
		return nil, nil
	}
	var v issues // fields the group needs are required once any is given: left out is 400
	why := "is required to look up the group's active calibration"
	if g.Process == nil {
		v.missing("process", why)
	}
	if g.JointType == nil {
		v.missing("joint_type", why)
	}
	if wireDiameterMM == nil {
		v.missing("wire_diameter_mm", why+" (or give wire_diameter_in)")
	}
	if err := v.err(); err != nil {
		return nil, err
	}
	gr := db.CalibrationGroup{Process: *g.Process, WireDiameterMM: *wireDiameterMM, JointType: *g.JointType}
	if g.ShieldingGas != nil {
		gr.ShieldingGas = *g.ShieldingGas
	}
	return &gr, nil
}

// activeCalibration returns the group's active calibration of the first model
// that has one, or nil (no group, or none activated).
func (s *Server) activeCalibration(c echo.Context, g *db.CalibrationGroup, models ...db.CalibrationModel) (*db.Calibration, error) {
	if g == nil {
		return nil, nil
	}
	for _, m := range models {
		cal, err := s.store.ActiveCalibration(c.Request().Context(), actorOf(c).Site, *g, m)
		if errors.Is(err, db.ErrNotFound) {
			continue
		}
		if err != nil {
			return nil, err
		}
		return &cal, nil
	}
	return nil, nil
}

// jacksonKFor picks the Jackson K with the published exponents: the
// caller's K when given (explicit coefficients are used exactly), else the
// group's active jackson_fixed calibration, else none (nil).
func (s *Server) jacksonKFor(c echo.Context, g *db.CalibrationGroup, given *jacksonKIn) (*predict.JacksonK, *db.Calibration, error) {
	if given != nil {
		k := given.jackson()
		return &k, nil, nil
	}
	cal, err := s.activeCalibration(c, g, db.CalibrationJacksonFixed)
	if err != nil {
		return nil, nil, err
	}
	if cal != nil && cal.Fit.Penetration != nil {
		k, err := cal.Fit.Penetration.JacksonK()
		if err != nil {
			return nil, nil, err
		}
		return &k, cal, nil
	}
	if given == nil {
		return nil, nil, nil
	}
	k := given.jackson()
	return &k, nil, nil
}

// lesnewichFor picks the Lesnewich coefficients: the caller's when given,
// else the group's active calibration, else none (nil).
func (s *Server) lesnewichFor(c echo.Context, g *db.CalibrationGroup, given *lesnewichIn) (*predict.Lesnewich, *db.Calibration, error) {
	if given != nil {
		l, err := given.lesnewich()
		if err != nil {
			return nil, nil, err
		}
		return &l, nil, nil
	}
	cal, err := s.activeCalibration(c, g, db.CalibrationLesnewich)
	if err != nil {
		return nil, nil, err
	}
	if cal != nil && cal.Fit.Melting != nil {
		l := cal.Fit.Melting.Lesnewich()
		return &l, cal, nil
	}
	if given == nil {
		return nil, nil, nil
	}
	l, err := given.lesnewich()
	if err != nil {
		return nil, nil, err
	}
	return &l, nil, nil
}

// renamed turns a predict input error into a 422 naming the request field
// (names maps predict's quantity names to JSON field names); other errors
// pass through unchanged.
func renamed(err error, names map[string]string) error {
	var pe *predict.InputError
	if errors.As(err, &pe) {
		if f, ok := names[pe.Field]; ok {
			return unprocessable(FieldIssue{f, pe.Reason})
		}
	}
	return err
}

// ptrTo returns a pointer to v, for optional response fields.
func ptrTo[T any](v T) *T { return &v }
