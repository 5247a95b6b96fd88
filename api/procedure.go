package api

import (
	"context"

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
	f := db.ProcedureFilter{Process: c.QueryParam("process"), Status: c.QueryParam("status"),
		IncludeVoided: c.QueryParam("include_voided") == "true"}
	site := actorOf(c).Site
	return answerList(s, c, "procedures", func(ctx context.Context, cursor string, limit int) (db.Page[db.Procedure], error) {
		return s.store.Procedures(ctx, site, f, cursor, limit)
	})
}
