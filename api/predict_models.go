package api

import (
	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// penetrationOut is the Jackson penetration at the request's setting, with
// the coefficients used and where they came from. From a calibration,
// PenetrationMM is the median of the log-normal prediction.
type penetrationOut struct {
	Source         string                       `json:"source"`
	Model          string                       `json:"model,omitempty"`
	CalibrationID  *uuid.UUID                   `json:"calibration_id,omitempty"`
	JacksonKMetric *float64                     `json:"jackson_k_metric,omitempty"`
	JacksonKInch   *float64                     `json:"jackson_k_inch,omitempty"`
	Exponents      *exponentsOut                `json:"exponents,omitempty"`
	PenetrationMM  *float64                     `json:"penetration_mm,omitempty"`
	PenetrationIn  *float64                     `json:"penetration_in,omitempty"`
	Interval       *predict.PenetrationInterval `json:"prediction_interval,omitempty"`
	Note           string                       `json:"note,omitempty"`
}

// exponentsOut are the exponents of I, S and V in a penetration model.
type exponentsOut struct {
	Current     float64 `json:"current"`
	TravelSpeed float64 `json:"travel_speed"`
	Voltage     float64 `json:"voltage"`
}

// wireFeedOut is the mass balance of the wire fed: what is fed is melted.
type wireFeedOut struct {
	DensityGCM3       float64  `json:"density_g_cm3"`
	MeltingRateKgH    float64  `json:"melting_rate_kg_h"`
	MeltingRateLbH    float64  `json:"melting_rate_lb_h"`
	DepositionRateKgH *float64 `json:"deposition_rate_kg_h,omitempty"`
	DepositionRateLbH *float64 `json:"deposition_rate_lb_h,omitempty"`
	DepositAreaMM2    *float64 `json:"deposit_area_mm2,omitempty"`
}

// lesnewichOut is the Lesnewich melting rate at the request's current and extension.
type lesnewichOut struct {
	Source            string                       `json:"source"`
	CalibrationID     *uuid.UUID                   `json:"calibration_id,omitempty"`
	AlphaKgHA         float64                      `json:"alpha_kg_h_a"`
	BetaKgHA2MM       float64                      `json:"beta_kg_h_a2_mm"`
	ExtensionMM       float64                      `json:"extension_mm"`
	MeltingRateKgH    float64                      `json:"melting_rate_kg_h"`
	MeltingRateLbH    float64                      `json:"melting_rate_lb_h"`
	DepositionRateKgH *float64                     `json:"deposition_rate_kg_h,omitempty"`
	DepositionRateLbH *float64                     `json:"deposition_rate_lb_h,omitempty"`
	Interval          *predict.MeltingRateInterval `json:"prediction_interval,omitempty"`
}

// heatInputOut is the heat input of one named form, H = Factor·V·I/S.
type heatInputOut struct {
	Form          string  `json:"form"`
	Process       string  `json:"process,omitempty"`
	Factor        float64 `json:"factor"`
	HeatInputJMM  float64 `json:"heat_input_j_mm"`
	HeatInputKJMM float64 `json:"heat_input_kj_mm"`
	HeatInputKJIn float64 `json:"heat_input_kj_in"`
}

// heatRule is a heat input rule and the process whose k it uses, if any.
type heatRule struct {
	rule    predict.HeatInputRule
	process string
}

func heatInput(r heatRule, voltageV, currentA, travelSpeedMMPerS float64) (heatInputOut, error) {
	f, err := r.rule.Factor()
	if err != nil {
		return heatInputOut{}, err
	}
	h, err := r.rule.JPerMM(voltageV, currentA, travelSpeedMMPerS)
	kj := predict.JPerMMToKJPerMM(h)
	return heatInputOut{Form: string(r.rule.Form), Process: r.process, Factor: f,
		HeatInputJMM: h, HeatInputKJMM: kj, HeatInputKJIn: predict.KJPerMMToKJPerIn(kj)}, err
}

// jacksonFieldNames maps predict's names of Jackson inputs to request fields.
var jacksonFieldNames = map[string]string{"jackson K": "jackson_k.value", "jackson K units": "jackson_k.units"}

// predictPenetration uses the request's jackson_k when it sends one (a
// what-if gets exactly the coefficients it asks about), else the group's
// penetration calibration in use (the latest activated, of either form, as
// the model flags do); Source says which.
func (s *Server) predictPenetration(c echo.Context, g *db.CalibrationGroup, p prediction, out *predictionOut) error {
	cal, err := s.activeCalibration(c, g, db.CalibrationJacksonFree, db.CalibrationJacksonFixed)
	if err != nil {
		return err
	}
	po := &out.Penetration
	switch {
	case cal != nil && cal.Fit.Penetration != nil && p.JacksonK == nil:
		fit := cal.Fit.Penetration
		iv, err := fit.Predict(p.CurrentA, p.VoltageV, p.TravelSpeedMMPerS, p.Level)
		if err != nil {
			return err
		}
		po.Source, po.Model, po.CalibrationID = sourceCalibration, string(cal.Model), &cal.ID
		po.PenetrationMM, po.Interval = &iv.MedianMM, &iv
		po.Exponents = &exponentsOut{fit.CurrentExponent, fit.TravelSpeedExponent, fit.VoltageExponent}
		if cal.Model == db.CalibrationJacksonFixed {
			if err := po.setK(predict.JacksonK{Value: fit.KMM, Units: predict.JacksonUnitsMetric}); err != nil {
				return err
			}
		}
	case p.JacksonK != nil:
		if cal != nil {
			out.Notes = append(out.Notes, "the group's active calibration "+cal.ID.String()+" was not used: the request's jackson_k was")
		}
		k := p.JacksonK.jackson()
		v, err := predict.PenetrationMM(k, p.CurrentA, p.TravelSpeedMMPerS, p.VoltageV)
		if err != nil {
			return renamed(err, jacksonFieldNames)
		}
		po.Source, po.Model, po.PenetrationMM = sourceRequest, string(predict.ModelJacksonFixed), &v
		po.Exponents = &exponentsOut{predict.JacksonCurrentExponent, predict.JacksonTravelExponent, predict.JacksonVoltageExponent}
		if err := po.setK(k); err != nil {
			return err
		}
		out.Notes = append(out.Notes, "no prediction interval: the request's jackson_k has none")
	default:
		po.Source = sourceNone
		po.Note = "no Jackson K: give jackson_k, or give the group (process, wire diameter, shielding_gas, joint_type) of an active calibration"
	}
	if po.PenetrationMM != nil {
		po.PenetrationIn = ptrTo(predict.MMToInch(*po.PenetrationMM))
	}
	return nil
}

// setK reports k in both unit systems.
func (po *penetrationOut) setK(k predict.JacksonK) error {
	m, err := k.Metric()
	if err != nil {
		return renamed(err, jacksonFieldNames)
	}
	i, err := k.Inch()
	po.JacksonKMetric, po.JacksonKInch = &m.Value, &i.Value
	return err
}

// predictMelting fills the wire-feed mass balance and the Lesnewich melting
// rate where the request has what each needs.
func (s *Server) predictMelting(c echo.Context, g *db.CalibrationGroup, p prediction, out *predictionOut) error {
	if p.WireFeedSpeedMPerMin != nil && p.WireDiameterMM != nil {
		wf, err := wireFeed(p)
		if err != nil {
			return err
		}
		out.WireFeed = wf
	} else {
		out.Notes = append(out.Notes, "melting rate by mass balance needs wire_feed_speed and wire_diameter")
	}
	if p.DepositionEfficiency == nil {
		out.Notes = append(out.Notes, "deposition rate and deposit area need deposition_efficiency")
	}
	if p.CTWDMM != nil && p.ArcLengthMM != nil {
		ext, err := predict.ExtensionFromCTWD(*p.CTWDMM, *p.ArcLengthMM)
		if err != nil {
			return renamed(err, map[string]string{"arc length mm": "arc_length_mm", "CTWD mm": "ctwd_mm"})
		}
		out.ExtensionMM = &ext
	}
	les, cal, err := s.lesnewichFor(c, g, p.Lesnewich)
	switch {
	case err != nil:
		return err
	case les == nil:
		out.Notes = append(out.Notes, "no Lesnewich coefficients: give lesnewich, or the group of an active lesnewich calibration")
		return nil
	case out.ExtensionMM == nil:
		out.Notes = append(out.Notes, "the Lesnewich melting rate needs ctwd and arc_length_mm (extension = CTWD − arc length)")
		return nil
	}
	lo, err := lesnewichAt(*les, cal, p.CurrentA, *out.ExtensionMM, p.DepositionEfficiency, p.Level)
	out.Lesnewich = lo
	return err
}

// lesnewichFieldNames maps predict's names of Lesnewich inputs to request fields.
var lesnewichFieldNames = map[string]string{
	"lesnewich alpha kg/(h·A)": "lesnewich.alpha_kg_h_a", "lesnewich beta kg/(h·A²·mm)": "lesnewich.beta_kg_h_a2_mm",
	"lesnewich coefficients": "lesnewich", "efficiency": "deposition_efficiency",
}

// lesnewichAt evaluates les at current I (A) and extension L (mm); with a
// calibration the value is its fitted mean with a prediction interval.
func lesnewichAt(les predict.Lesnewich, cal *db.Calibration, currentA, extensionMM float64, eff *float64, level float64) (*lesnewichOut, error) {
	lo := &lesnewichOut{Source: sourceRequest, AlphaKgHA: les.AlphaKgPerHA, BetaKgHA2MM: les.BetaKgPerHA2MM, ExtensionMM: extensionMM}
	if cal != nil {
		iv, err := cal.Fit.Melting.Predict(currentA, extensionMM, level)
		if err != nil {
			return nil, err
		}
		lo.Source, lo.CalibrationID, lo.MeltingRateKgH, lo.Interval = sourceCalibration, &cal.ID, iv.MeanKgPerH, &iv
	} else {
		mr, err := les.MeltingRateKgPerH(currentA, extensionMM)
		if err != nil {
			return nil, renamed(err, lesnewichFieldNames)
		}
		lo.MeltingRateKgH = mr
	}
	lo.MeltingRateLbH = predict.KgPerHToLbPerH(lo.MeltingRateKgH)
	if eff != nil {
		d, err := predict.DepositionRateKgPerH(lo.MeltingRateKgH, *eff)
		if err != nil {
			return nil, renamed(err, lesnewichFieldNames)
		}
		lo.DepositionRateKgH, lo.DepositionRateLbH = &d, ptrTo(predict.KgPerHToLbPerH(d))
	}
	return lo, nil
}

// wireFeed is the mass balance for carbon steel wire (7.85 g/cm³).
func wireFeed(p prediction) (*wireFeedOut, error) {
	mr, err := predict.WireMeltingRateKgPerH(*p.WireFeedSpeedMPerMin, *p.WireDiameterMM, predict.CarbonSteelDensityKgPerMM3)
	if err != nil {
		return nil, err
	}
	wf := &wireFeedOut{DensityGCM3: predict.CarbonSteelDensityGPerCM3, MeltingRateKgH: mr, MeltingRateLbH: predict.KgPerHToLbPerH(mr)}
	if eff := p.DepositionEfficiency; eff != nil {
		d, err := predict.DepositionRateKgPerH(mr, *eff)
		if err != nil {
			return nil, err
		}
		a, err := predict.DepositAreaMM2(*p.WireFeedSpeedMPerMin, *p.WireDiameterMM, *eff, p.TravelSpeedMMPerS)
		if err != nil {
			return nil, err
		}
		wf.DepositionRateKgH, wf.DepositionRateLbH, wf.DepositAreaMM2 = &d, ptrTo(predict.KgPerHToLbPerH(d)), &a
	}
	return wf, nil
}
