package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// qualificationRecordIn is the request body for a qualification record (PQR).
type qualificationRecordIn struct {
	changeFields
	RecordNumber          string   `json:"record_number"`
	Process               string   `json:"process"`
	WeldedOn              db.Date  `json:"welded_on"`
	WelderID              string   `json:"welder_id"`
	FillerClassification  string   `json:"filler_classification"`
	WireDiameterMM        *float64 `json:"wire_diameter_mm"`
	WireDiameterIn        *float64 `json:"wire_diameter_in"`
	ShieldingGas          string   `json:"shielding_gas"`
	Polarity              string   `json:"polarity"`
	TransferMode          string   `json:"transfer_mode"`
	Position              string   `json:"position"`
	BaseMetalGroup        string   `json:"base_metal_group"`
	ThicknessMM           *float64 `json:"thickness_mm"`
	ThicknessIn           *float64 `json:"thickness_in"`
	CurrentA              float64  `json:"current_a"`
	VoltageV              float64  `json:"voltage_v"`
	TravelSpeedMMPerS     *float64 `json:"travel_speed_mm_s"`
	TravelSpeedMMPerMin   *float64 `json:"travel_speed_mm_min"`
	TravelSpeedInPerMin   *float64 `json:"travel_speed_in_min"`
	WireFeedSpeedMPerMin  *float64 `json:"wire_feed_speed_m_min"`
	WireFeedSpeedInPerMin *float64 `json:"wire_feed_speed_in_min"`
	CTWDMM                *float64 `json:"ctwd_mm"`
	CTWDIn                *float64 `json:"ctwd_in"`
	PreheatC              *float64 `json:"preheat_c"`
	PreheatF              *float64 `json:"preheat_f"`
	InterpassC            *float64 `json:"interpass_c"`
	InterpassF            *float64 `json:"interpass_f"`
	VisualResult          string   `json:"visual_result"`
	BendResult            string   `json:"bend_result"`
	TensileResult         string   `json:"tensile_result"`
	MacroResult           string   `json:"macro_result"`
	TensileStrengthMPa    *float64 `json:"tensile_strength_mpa"`
	Outcome               string   `json:"outcome"`
	Remarks               string   `json:"remarks"`
	MinPenetrationMM      *float64 `json:"min_penetration_mm"`
	MinPenetrationIn      *float64 `json:"min_penetration_in"`
}

func (in qualificationRecordIn) data(echo.Context, *Server) (db.QualificationRecordData, error) {
	var u units
	d := db.QualificationRecordData{
		RecordNumber: in.RecordNumber, Process: in.Process, WeldedOn: in.WeldedOn, WelderID: in.WelderID,
		FillerClassification: in.FillerClassification,
		WireDiameterMM:       u.req(mm("wire_diameter_mm", in.WireDiameterMM), inch("wire_diameter_in", in.WireDiameterIn)),
		ShieldingGas:         in.ShieldingGas, Polarity: in.Polarity, TransferMode: in.TransferMode,
		Position: in.Position, BaseMetalGroup: in.BaseMetalGroup,
		ThicknessMM: u.req(mm("thickness_mm", in.ThicknessMM), inch("thickness_in", in.ThicknessIn)),
		CurrentA:    in.CurrentA, VoltageV: in.VoltageV,
		TravelSpeedMMPerS: u.req(mmPerS("travel_speed_mm_s", in.TravelSpeedMMPerS),
			mmPerMin("travel_speed_mm_min", in.TravelSpeedMMPerMin), inPerMin("travel_speed_in_min", in.TravelSpeedInPerMin)),
		WireFeedSpeedMPerMin: u.opt(mPerMin("wire_feed_speed_m_min", in.WireFeedSpeedMPerMin),
			wfsInPerMin("wire_feed_speed_in_min", in.WireFeedSpeedInPerMin)),
		CTWDMM:       u.opt(mm("ctwd_mm", in.CTWDMM), inch("ctwd_in", in.CTWDIn)),
		PreheatC:     u.opt(celsius("preheat_c", in.PreheatC), fahrenheit("preheat_f", in.PreheatF)),
		InterpassC:   u.opt(celsius("interpass_c", in.InterpassC), fahrenheit("interpass_f", in.InterpassF)),
		VisualResult: in.VisualResult, BendResult: in.BendResult, TensileResult: in.TensileResult,
		MacroResult: in.MacroResult, TensileStrengthMPa: in.TensileStrengthMPa, Outcome: in.Outcome, Remarks: in.Remarks,
		MinPenetrationMM: u.opt(mm("min_penetration_mm", in.MinPenetrationMM), inch("min_penetration_in", in.MinPenetrationIn)),
	}
	return d, u.err()
}

func (s *Server) qualificationRecordResource() resource[qualificationRecordIn, db.QualificationRecordData, db.QualificationRecord] {
	return resource[qualificationRecordIn, db.QualificationRecordData, db.QualificationRecord]{
		path: "/v1/qualification-records", create: s.store.CreateQualificationRecord,
		correct: s.store.CorrectQualificationRecord, void: s.store.VoidQualificationRecord,
		get: s.store.QualificationRecord, revisions: s.store.QualificationRecordRevisions,
	}
}

func (s *Server) handleQualificationRecordList(c echo.Context) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	from, err := queryDay(c, "welded_from")
	if err != nil {
		return err
	}
	to, err := queryDay(c, "welded_to")
	if err != nil {
		return err
	}
	f := db.QualificationRecordFilter{Process: c.QueryParam("process"), WelderID: c.QueryParam("welder_id"),
		Outcome: c.QueryParam("outcome"), WeldedFrom: from, WeldedTo: to,
		IncludeVoided: c.QueryParam("include_voided") == "true"}
	p, err := s.store.QualificationRecords(c.Request().Context(), actorOf(c).Site, f, c.QueryParam("cursor"), limit)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, pageOf(p))
}
