package api

import (
	"context"
	"errors"
	"fmt"
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// productionBatchIn is the request body of POST /v1/production-records:
// the stored fields of each record, each quantity in any registered
// spelling (bound row by row by storedSpellings).
type productionBatchIn struct {
	Records []db.ProductionRecordData `json:"records"`
}

// maxBatchIssues caps how many refused fields one answer lists.
const maxBatchIssues = 50

// records converts and validates every row; a refused field is named with
// its row, e.g. records[17].current_a. One bad row refuses the batch.
func (s *Server) productionRecords(in productionBatchIn) ([]db.ProductionRecordData, error) {
	if len(in.Records) == 0 || len(in.Records) > db.MaxProductionBatch {
		return nil, unprocessable(FieldIssue{"records", fmt.Sprintf("give 1 to %d records (got %d)", db.MaxProductionBatch, len(in.Records))})
	}
	out := make([]db.ProductionRecordData, len(in.Records))
	status := http.StatusUnprocessableEntity
	var issues []FieldIssue
	for i, d := range in.Records {
		err := s.check(d)
		var inv *invalidError
		if errors.As(err, &inv) {
			if inv.status == http.StatusBadRequest { // any shape issue makes the batch 400
				status = inv.status
			}
			for _, is := range inv.issues {
				issues = append(issues, FieldIssue{fmt.Sprintf("records[%d].%s", i, is.Field), is.Reason})
			}
		} else if err != nil {
			return nil, err
		}
		if len(issues) >= maxBatchIssues {
			break
		}
		out[i] = d
	}
	if issues != nil {
		return nil, &invalidError{status: status, issues: issues}
	}
	return out, nil
}

func (s *Server) handleProductionCreate(c echo.Context) error {
	var in productionBatchIn
	if err := bind(c, &in); err != nil {
		return err
	}
	recs, err := s.productionRecords(in)
	if err != nil {
		return err
	}
	stored, err := s.store.CreateProductionRecords(c.Request().Context(), actorOf(c), recs)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusCreated, pageOf(db.Page[db.ProductionRecord]{Items: stored}))
}

func (s *Server) handleProductionList(c echo.Context) error {
	var err error
	f := db.ProductionRecordFilter{WeldID: c.QueryParam("weld_id"), WelderID: c.QueryParam("welder_id"),
		FlaggedOnly: c.QueryParam("flagged") == "true"}
	if f.ProcedureID, err = queryUUID(c, "procedure_id"); err != nil {
		return err
	}
	if f.RecordedFrom, err = queryTime(c, "recorded_from"); err != nil {
		return err
	}
	if f.RecordedTo, err = queryTime(c, "recorded_to"); err != nil {
		return err
	}
	site := actorOf(c).Site
	return answerList(s, c, "production-records", func(ctx context.Context, cursor string, limit int) (db.Page[db.ProductionRecord], error) {
		return s.store.ProductionRecords(ctx, site, f, cursor, limit)
	})
}
