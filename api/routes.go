package api

import (
	"net/http"

	"github.com/labstack/echo/v4"
)

// routes registers every route, in the order of the OpenAPI document, with
// the roles it admits (nil: no token needed).
func (s *Server) routes() error {
	pr, qr, cp, ms := s.procedureResource(), s.qualificationRecordResource(), s.couponResource(), s.measurementResource()
	for _, r := range []struct {
		method, path string
		h            echo.HandlerFunc
		roles        []string
	}{
		{http.MethodGet, "/", s.handlePage, public},
		{http.MethodGet, "/healthz", s.handleHealth, public},
		{http.MethodGet, "/readyz", s.handleReady, public},
		{http.MethodGet, "/openapi.yaml", s.handleSpec, public},

		{http.MethodPost, "/v1/procedures", handleCreate(s, pr), engineers},
		{http.MethodGet, "/v1/procedures", s.handleProcedureList, readers},
		{http.MethodGet, "/v1/procedures/:id", handleGet(pr), readers},
		{http.MethodPut, "/v1/procedures/:id", handleCorrect(s, pr), engineers},
		{http.MethodPost, "/v1/procedures/:id/void", handleVoid(pr), engineers},
		{http.MethodGet, "/v1/procedures/:id/revisions", handleRevisions(pr), readers},

		{http.MethodPost, "/v1/qualification-records", handleCreate(s, qr), engineers},
		{http.MethodGet, "/v1/qualification-records", s.handleQualificationRecordList, readers},
		{http.MethodGet, "/v1/qualification-records/:id", handleGet(qr), readers},
		{http.MethodPut, "/v1/qualification-records/:id", handleCorrect(s, qr), engineers},
		{http.MethodPost, "/v1/qualification-records/:id/void", handleVoid(qr), engineers},
		{http.MethodGet, "/v1/qualification-records/:id/revisions", handleRevisions(qr), readers},

		{http.MethodPost, "/v1/coupons", handleCreate(s, cp), recorders},
		{http.MethodGet, "/v1/coupons", s.handleCouponList, readers},
		{http.MethodGet, "/v1/coupons/:id", handleGet(cp), readers},
		{http.MethodPut, "/v1/coupons/:id", handleCorrect(s, cp), recorders},
		{http.MethodPost, "/v1/coupons/:id/void", handleVoid(cp), recorders},
		{http.MethodGet, "/v1/coupons/:id/revisions", handleRevisions(cp), readers},
		{http.MethodPost, couponMeasurementsPath, handleCreate(s, ms), recorders},
		{http.MethodGet, couponMeasurementsPath, s.handleMeasurementList, readers},

		{http.MethodGet, "/v1/measurements", s.handleMeasurementList, readers},
		{http.MethodGet, "/v1/measurements/:id", handleGet(ms), readers},
		{http.MethodPut, "/v1/measurements/:id", handleCorrect(s, ms), recorders},
		{http.MethodPost, "/v1/measurements/:id/void", handleVoid(ms), recorders},
		{http.MethodGet, "/v1/measurements/:id/revisions", handleRevisions(ms), readers},

		{http.MethodGet, "/v1/audit/events", s.handleAuditEvents, readers},
		{http.MethodGet, "/v1/audit/verify", s.handleAuditVerify, readers},
		{http.MethodGet, "/v1/export", s.handleExport, readers},
	} {
		conform, err := s.conformTo(r.method, r.path)
		if err != nil {
			return err
		}
		mw := []echo.MiddlewareFunc{conform}
		if r.roles != nil {
			mw = []echo.MiddlewareFunc{s.requireRole(r.roles), conform}
		}
		s.echo.Add(r.method, r.path, r.h, mw...)
	}
	return nil
}
