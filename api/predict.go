package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/predict"
)

// predictionIn is the body of a what-if prediction: welding parameters in
// metric or inch spellings, the optional calibration group, and optional
// coefficients used when the group has no active calibration.
type predictionIn struct {
	groupFields
	CurrentA             float64      `json:"current_a"`
	VoltageV             float64      `json:"voltage_v"`
	TravelSpeedMMPerS    *float64     `json:"travel_speed_mm_s"`
	WireFeedSpeedMPerMin *float64     `json:"wire_feed_speed_m_min"`
	WireDiameterMM       *float64     `json:"wire_diameter_mm"`
	CTWDMM               *float64     `json:"ctwd_mm"`
	ArcLengthMM          *float64     `json:"arc_length_mm"`
	DepositionEfficiency *float64     `json:"deposition_efficiency"`
	JacksonK             *jacksonKIn  `json:"jackson_k"`
	Lesnewich            *lesnewichIn `json:"lesnewich"`
	WaveformPowerRatio   *float64     `json:"waveform_power_ratio"`
	Level                *float64     `json:"level"`
}

// prediction is a what-if request in metric units, validated against the
// plausible bounds of each quantity.
type prediction struct {
	CurrentA             float64      `json:"current_a" validate:"required,quantity"`
	VoltageV             float64      `json:"voltage_v" validate:"required,quantity"`
	TravelSpeedMMPerS    float64      `json:"travel_speed_mm_s" validate:"required,quantity"`
	WireFeedSpeedMPerMin *float64     `json:"wire_feed_speed_m_min,omitempty" validate:"omitempty,quantity"`
	WireDiameterMM       *float64     `json:"wire_diameter_mm,omitempty" validate:"omitempty,quantity"`
	CTWDMM               *float64     `json:"ctwd_mm,omitempty" validate:"omitempty,quantity"`
	ArcLengthMM          *float64     `json:"arc_length_mm,omitempty" validate:"omitempty,quantity"`
	DepositionEfficiency *float64     `json:"deposition_efficiency,omitempty" validate:"omitempty,quantity"`
	JacksonK             *jacksonKIn  `json:"jackson_k,omitempty"`
	Lesnewich            *lesnewichIn `json:"lesnewich,omitempty"`
	WaveformPowerRatio   *float64     `json:"waveform_power_ratio,omitempty" validate:"omitempty,quantity"`
	Level                float64      `json:"level" validate:"quantity"`
}

func (in predictionIn) metric() (prediction, error) {
	var u units
	p := prediction{
		CurrentA: in.CurrentA, VoltageV: in.VoltageV,
		TravelSpeedMMPerS:    u.req("travel_speed_mm_s", in.TravelSpeedMMPerS),
		WireFeedSpeedMPerMin: in.WireFeedSpeedMPerMin, WireDiameterMM: in.WireDiameterMM, CTWDMM: in.CTWDMM,
		ArcLengthMM: in.ArcLengthMM, DepositionEfficiency: in.DepositionEfficiency,
		JacksonK: in.JacksonK, Lesnewich: in.Lesnewich, WaveformPowerRatio: in.WaveformPowerRatio, Level: defaultLevel,
	}
	if in.Level != nil {
		p.Level = *in.Level
	}
	return p, u.err()
}

// predictionOut is every model's answer at one setting. Values that need an
// input the request lacks are left out, and Notes says why.
type predictionOut struct {
	Inputs      prediction     `json:"inputs"`
	ExtensionMM *float64       `json:"extension_mm,omitempty"`
	Penetration penetrationOut `json:"penetration"`
	WireFeed    *wireFeedOut   `json:"wire_feed,omitempty"`
	Lesnewich   *lesnewichOut  `json:"lesnewich,omitempty"`
	heatOut
	Notes   []string `json:"notes"`
	Caution string   `json:"caution"`
}

// handlePrediction answers POST /v1/predictions.
func (s *Server) handlePrediction(c echo.Context) error {
	in, p, err := bindMetric[prediction, predictionIn](s, c)
	if err != nil {
		return err
	}
	g, err := s.calibrationGroup(in.groupFields, p.WireDiameterMM)
	if err != nil {
		return err
	}
	out := predictionOut{Inputs: p, Notes: []string{}, Caution: predictionCaution}
	if err := s.predictPenetration(c, g, p, &out); err != nil {
		return err
	}
	if err := s.predictMelting(c, g, p, &out); err != nil {
		return err
	}
	if out.heatOut, err = heatAt(p.VoltageV, p.CurrentA, p.TravelSpeedMMPerS, p.WaveformPowerRatio, in.Process); err != nil {
		return err
	}
	if p.WaveformPowerRatio == nil {
		out.Notes = append(out.Notes, waveformNote)
	}
	return c.JSON(http.StatusOK, out)
}

// heatOut is arc energy and the heat input of every applicable named form.
type heatOut struct {
	ArcEnergyJMM  float64        `json:"arc_energy_j_mm"`
	ArcEnergyKJMM float64        `json:"arc_energy_kj_mm"`
	ArcEnergyKJIn float64        `json:"arc_energy_kj_in"`
	HeatInput     []heatInputOut `json:"heat_input"`
}

// waveformNote says why the waveform forms are missing.
const waveformNote = "waveform heat input forms need waveform_power_ratio (measured average instantaneous power / (mean V × mean I))"

// heatAt computes arc energy V·I/S and the heat input of every form that
// applies: arc energy, thermal efficiency with k of the given process (of
// every tabulated process when none is given) and, with a power ratio, the
// two waveform forms.
func heatAt(voltageV, currentA, travelSpeedMMPerS float64, powerRatio *float64, process *string) (heatOut, error) {
	var out heatOut
	e, err := predict.ArcEnergyJPerMM(voltageV, currentA, travelSpeedMMPerS)
	if err != nil {
		return out, err
	}
	out.ArcEnergyJMM, out.ArcEnergyKJMM = e, predict.JPerMMToKJPerMM(e)
	out.ArcEnergyKJIn = predict.KJPerMMToKJPerIn(out.ArcEnergyKJMM)
	rules := []heatRule{{predict.HeatInputRule{Form: predict.HeatInputArcEnergy}, ""}}
	procs := []predict.ArcProcess{predict.ProcessGMAW, predict.ProcessFCAW, predict.ProcessSMAW, predict.ProcessGTAW, predict.ProcessSAW}
	if process != nil {
		procs = []predict.ArcProcess{predict.ArcProcess(*process)}
	}
	for _, pr := range procs {
		k, err := predict.ThermalEfficiency(pr)
		if err != nil {
			return out, err
		}
		rules = append(rules, heatRule{predict.HeatInputRule{Form: predict.HeatInputThermalEfficiency, Efficiency: k}, string(pr)})
	}
	if r := powerRatio; r != nil {
		rules = append(rules, heatRule{predict.HeatInputRule{Form: predict.HeatInputWaveformEnergy, PowerRatio: *r}, ""},
			heatRule{predict.HeatInputRule{Form: predict.HeatInputWaveformPower, PowerRatio: *r}, ""})
	}
	for _, r := range rules {
		h, err := heatInput(r, voltageV, currentA, travelSpeedMMPerS)
		if err != nil {
			return out, renamed(err, map[string]string{"waveform power ratio": "waveform_power_ratio"})
		}
		out.HeatInput = append(out.HeatInput, h)
	}
	return out, nil
}
