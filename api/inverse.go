package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/predict"
)

// depositionInverseIn asks for the current that gives a target melting or
// deposition rate at an electrode extension (given directly, or as CTWD
// minus arc length), under the group's active Lesnewich calibration or the
// caller's coefficients.
type depositionInverseIn struct {
	groupFields
	MeltingRateKgH       *float64     `json:"melting_rate_kg_h"`
	DepositionRateKgH    *float64     `json:"deposition_rate_kg_h"`
	DepositionEfficiency *float64     `json:"deposition_efficiency"`
	ExtensionMM          *float64     `json:"extension_mm"`
	CTWDMM               *float64     `json:"ctwd_mm"`
	ArcLengthMM          *float64     `json:"arc_length_mm"`
	WireDiameterMM       *float64     `json:"wire_diameter_mm"`
	Lesnewich            *lesnewichIn `json:"lesnewich"`
	Level                *float64     `json:"level"`
}

// depositionInverse is the request in metric units, validated.
type depositionInverse struct {
	MeltingRateKgH       *float64     `json:"melting_rate_kg_h" validate:"omitempty,quantity"`
	DepositionRateKgH    *float64     `json:"deposition_rate_kg_h" validate:"omitempty,quantity"`
	DepositionEfficiency *float64     `json:"deposition_efficiency" validate:"omitempty,quantity"`
	ExtensionMM          float64      `json:"extension_mm" validate:"quantity"`
	WireDiameterMM       *float64     `json:"wire_diameter_mm" validate:"omitempty,quantity"`
	Lesnewich            *lesnewichIn `json:"lesnewich"`
	Level                float64      `json:"level" validate:"quantity"`
}

func (in depositionInverseIn) metric() (depositionInverse, error) {
	var u units
	q := depositionInverse{
		MeltingRateKgH: in.MeltingRateKgH, DepositionRateKgH: in.DepositionRateKgH,
		DepositionEfficiency: in.DepositionEfficiency, Lesnewich: in.Lesnewich, Level: defaultLevel,
		WireDiameterMM: in.WireDiameterMM,
	}
	if in.Level != nil {
		q.Level = *in.Level
	}
	ctwd := in.CTWDMM
	switch {
	case (q.MeltingRateKgH == nil) == (q.DepositionRateKgH == nil):
		u.issues = append(u.issues, FieldIssue{"melting_rate_kg_h", "give one target: a melting rate or a deposition rate (kg/h or lb/h)"})
	case q.DepositionRateKgH != nil && q.DepositionEfficiency == nil:
		u.issues = append(u.issues, FieldIssue{"deposition_efficiency", "is required with a deposition rate target"})
	case in.ExtensionMM != nil && (ctwd != nil || in.ArcLengthMM != nil):
		u.issues = append(u.issues, FieldIssue{"extension_mm", "give the extension once: extension_mm, or ctwd with arc_length_mm"})
	case in.ExtensionMM != nil:
		q.ExtensionMM = *in.ExtensionMM
	case ctwd == nil || in.ArcLengthMM == nil:
		u.issues = append(u.issues, FieldIssue{"extension_mm", "is required (or ctwd_mm/ctwd_in with arc_length_mm: extension = CTWD − arc length)"})
	default:
		ext, err := predict.ExtensionFromCTWD(*ctwd, *in.ArcLengthMM)
		if err != nil {
			return q, renamed(err, map[string]string{"arc length mm": "arc_length_mm", "CTWD mm": "ctwd_mm"})
		}
		q.ExtensionMM = ext
	}
	return q, u.err()
}

// depositionInverseOut is the solved current with the Lesnewich model's
// values there, and the wire feed speed that feeds that melting rate.
type depositionInverseOut struct {
	CurrentA              float64       `json:"current_a"`
	Lesnewich             *lesnewichOut `json:"lesnewich"`
	WireFeedSpeedMPerMin  *float64      `json:"wire_feed_speed_m_min,omitempty"`
	WireFeedSpeedInPerMin *float64      `json:"wire_feed_speed_in_min,omitempty"`
	Caution               string        `json:"caution"`
}

// handleInverseDeposition answers POST /v1/inverse/current-for-deposition.
func (s *Server) handleInverseDeposition(c echo.Context) error {
	in, q, err := bindMetric[depositionInverse, depositionInverseIn](s, c)
	if err != nil {
		return err
	}
	g, err := s.calibrationGroup(in.groupFields, q.WireDiameterMM)
	if err != nil {
		return err
	}
	les, cal, err := s.lesnewichFor(c, g, q.Lesnewich)
	if err != nil {
		return err
	}
	if les == nil {
		return badRequest("lesnewich", "is required: give the coefficients, or the group of an active lesnewich calibration")
	}
	var i float64
	if q.MeltingRateKgH != nil {
		i, err = les.CurrentForMeltingRateA(*q.MeltingRateKgH, q.ExtensionMM)
	} else {
		i, err = les.CurrentForDepositionRateA(*q.DepositionRateKgH, q.ExtensionMM, *q.DepositionEfficiency)
	}
	if err != nil {
		return renamed(err, lesnewichFieldNames)
	}
	out := depositionInverseOut{CurrentA: i, Caution: predictionCaution}
	if out.Lesnewich, err = lesnewichAt(*les, cal, i, q.ExtensionMM, q.DepositionEfficiency, q.Level); err != nil {
		return err
	}
	if d := q.WireDiameterMM; d != nil {
		wfs, err := predict.WireFeedSpeedForMeltingRateMPerMin(out.Lesnewich.MeltingRateKgH, *d, predict.CarbonSteelDensityKgPerMM3)
		if err != nil {
			return err
		}
		out.WireFeedSpeedMPerMin, out.WireFeedSpeedInPerMin = &wfs, ptrTo(predict.MPerMinToInPerMin(wfs))
	}
	return c.JSON(http.StatusOK, out)
}
