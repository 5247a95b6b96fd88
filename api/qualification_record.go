package api

import (
	"context"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// qualificationRecordIn is the request body for a qualification record
// (PQR): the stored fields, each quantity in any registered spelling.
type qualificationRecordIn struct {
	changeFields
	db.QualificationRecordData
}

func (in qualificationRecordIn) data(echo.Context, *Server) (db.QualificationRecordData, error) {
	return in.QualificationRecordData, nil
}

func (s *Server) qualificationRecordResource() resource[qualificationRecordIn, db.QualificationRecordData, db.QualificationRecord] {
	return resource[qualificationRecordIn, db.QualificationRecordData, db.QualificationRecord]{
		path: "/v1/qualification-records", create: s.store.CreateQualificationRecord,
		correct: s.store.CorrectQualificationRecord, void: s.store.VoidQualificationRecord,
		get: s.store.QualificationRecord, revisions: s.store.QualificationRecordRevisions,
	}
}

func (s *Server) handleQualificationRecordList(c echo.Context) error {
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
	site := actorOf(c).Site
	return answerList(s, c, "qualification-records", func(ctx context.Context, cursor string, limit int) (db.Page[db.QualificationRecord], error) {
		return s.store.QualificationRecords(ctx, site, f, cursor, limit)
	})
}
