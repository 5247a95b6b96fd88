package api

import (
	"context"
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

func (s *Server) handleFlagList(c echo.Context) error {
	var err error
	f := db.FlagFilter{SubjectKind: c.QueryParam("subject_kind"), Kind: c.QueryParam("kind"), Variable: c.QueryParam("variable")}
	if f.ProcedureID, err = queryUUID(c, "procedure_id"); err != nil {
		return err
	}
	if f.SubjectID, err = queryUUID(c, "subject_id"); err != nil {
		return err
	}
	if f.From, err = queryTime(c, "from"); err != nil {
		return err
	}
	if f.To, err = queryTime(c, "to"); err != nil {
		return err
	}
	site := actorOf(c).Site
	return answerList(s, c, "flags", func(ctx context.Context, cursor string, limit int) (db.Page[db.Flag], error) {
		return s.store.Flags(ctx, site, f, cursor, limit)
	})
}

func (s *Server) handleFlagSummary(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	sum, err := s.store.FlagSummary(c.Request().Context(), actorOf(c).Site, id)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, sum)
}
