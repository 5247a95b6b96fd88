package api

import (
	"net/http"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// procedureIn is the request body for a procedure (WPS).
type procedureIn struct {
	changeFields
	Code                 string      `json:"code"`
	Title                string      `json:"title"`
	Process              string      `json:"process"`
	FillerClassification string      `json:"filler_classification"`
	WireDiameterMM       *float64    `json:"wire_diameter_mm"`
	WireDiameterIn       *float64    `json:"wire_diameter_in"`
	ShieldingGas         string      `json:"shielding_gas"`
	Polarity             string      `json:"polarity"`
	TransferMode         string      `json:"transfer_mode"`
	Positions            []string    `json:"positions"`
	BaseMetalGroup       string      `json:"base_metal_group"`
	ThicknessMinMM       *float64    `json:"thickness_min_mm"`
	ThicknessMinIn       *float64    `json:"thickness_min_in"`
	ThicknessMaxMM       *float64    `json:"thickness_max_mm"`
	ThicknessMaxIn       *float64    `json:"thickness_max_in"`
	MinPenetrationMM     *float64    `json:"min_penetration_mm"`
	MinPenetrationIn     *float64    `json:"min_penetration_in"`
	Status               string      `json:"status"`
	SupportingRecordIDs  []uuid.UUID `json:"supporting_record_ids"`
}

func (in procedureIn) data(echo.Context, *Server) (db.ProcedureData, error) {
	var u units
	d := db.ProcedureData{
		Code: in.Code, Title: in.Title, Process: in.Process, FillerClassification: in.FillerClassification,
		WireDiameterMM: u.req(mm("wire_diameter_mm", in.WireDiameterMM), inch("wire_diameter_in", in.WireDiameterIn)),
		ShieldingGas:   in.ShieldingGas, Polarity: in.Polarity, TransferMode: in.TransferMode,
		Positions: in.Positions, BaseMetalGroup: in.BaseMetalGroup,
		ThicknessMinMM:   u.req(mm("thickness_min_mm", in.ThicknessMinMM), inch("thickness_min_in", in.ThicknessMinIn)),
		ThicknessMaxMM:   u.req(mm("thickness_max_mm", in.ThicknessMaxMM), inch("thickness_max_in", in.ThicknessMaxIn)),
		MinPenetrationMM: u.opt(mm("min_penetration_mm", in.MinPenetrationMM), inch("min_penetration_in", in.MinPenetrationIn)),
		Status:           in.Status, SupportingRecordIDs: in.SupportingRecordIDs,
	}
	if d.Status == "" {
		d.Status = "draft"
	}
	return d, u.err()
}

func (s *Server) procedureResource() resource[procedureIn, db.ProcedureData, db.Procedure] {
	return resource[procedureIn, db.ProcedureData, db.Procedure]{
		path: "/v1/procedures", create: s.store.CreateProcedure, correct: s.store.CorrectProcedure,
		void: s.store.VoidProcedure, get: s.store.Procedure, revisions: s.store.ProcedureRevisions,
	}
}

func (s *Server) handleProcedureList(c echo.Context) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	f := db.ProcedureFilter{Process: c.QueryParam("process"), Status: c.QueryParam("status"),
		IncludeVoided: c.QueryParam("include_voided") == "true"}
	p, err := s.store.Procedures(c.Request().Context(), actorOf(c).Site, f, c.QueryParam("cursor"), limit)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, pageOf(p))
}
