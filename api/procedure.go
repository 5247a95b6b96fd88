package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// procedureIn is the request body for a procedure (WPS): the stored fields,
// each quantity in any registered spelling.
type procedureIn struct {
	changeFields
	db.ProcedureData
}

func (in procedureIn) data(echo.Context, *Server) (db.ProcedureData, error) {
	d := in.ProcedureData
	if d.Status == "" {
		d.Status = "draft"
	}
	return d, nil
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
