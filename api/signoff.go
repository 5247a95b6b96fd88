package api

import (
	"context"
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// signOffIn is the body of a sign-off: the revision reviewed and the statement.
type signOffIn struct {
	Revision  *int    `json:"revision"`
	Statement *string `json:"statement"`
}

// handleSignOff returns the handler that signs off the current revision of
// one kind of record (db.SignQualificationRecord, db.SignProcedure or
// db.SignCalibration).
func (s *Server) handleSignOff(kind string) echo.HandlerFunc {
	return func(c echo.Context) error {
		id, err := pathID(c)
		if err != nil {
			return err
		}
		var in signOffIn
		if err := bind(c, &in); err != nil {
			return err
		}
		if in.Revision == nil {
			return badRequest("revision", "is required: the revision you reviewed")
		}
		if in.Statement == nil {
			return badRequest("statement", "is required: what you sign, in your words")
		}
		so, err := s.store.SignOffRecord(c.Request().Context(), actorOf(c), kind, id,
			db.SignOffRequest{Revision: *in.Revision, Statement: *in.Statement})
		if err != nil {
			return err
		}
		c.Response().Header().Set(echo.HeaderLocation, "/v1/sign-offs/"+so.ID.String())
		return c.JSON(http.StatusCreated, so)
	}
}

func (s *Server) handleSignOffList(c echo.Context) error {
	rid, err := queryUUID(c, "record_id")
	if err != nil {
		return err
	}
	f := db.SignOffFilter{RecordKind: c.QueryParam("record_kind"), RecordID: rid, SignedBy: c.QueryParam("signed_by")}
	site := actorOf(c).Site
	return answerList(s, c, "sign-offs", func(ctx context.Context, cursor string, limit int) (db.Page[db.SignOff], error) {
		return s.store.SignOffs(ctx, site, f, cursor, limit)
	})
}

func (s *Server) handleSignOffGet(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	so, err := s.store.SignOffByID(c.Request().Context(), actorOf(c).Site, id)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, so)
}
