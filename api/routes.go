package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// keptUserRoutes are the routes whose every answer but a refusal follows
// a write through the Store made with the request's context, which
// confirms the token's user (requireRole, admitKept): they may let a
// request in on the user a lookup of its token found before. Every other
// route looks the token up for each request.
var keptUserRoutes = map[string]bool{http.MethodPost + " /v1/coupons": true}

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
		{http.MethodGet, "/v1/procedures/:id/revisions", handleRevisions(s, pr), readers},

		{http.MethodPost, "/v1/qualification-records", handleCreate(s, qr), engineers},
		{http.MethodGet, "/v1/qualification-records", s.handleQualificationRecordList, readers},
		{http.MethodGet, "/v1/qualification-records/:id", s.handleQualificationRecordGet, readers},
		{http.MethodPut, "/v1/qualification-records/:id", handleCorrect(s, qr), engineers},
		{http.MethodPost, "/v1/qualification-records/:id/void", handleVoid(qr), engineers},
		{http.MethodGet, "/v1/qualification-records/:id/revisions", handleRevisions(s, qr), readers},
		{http.MethodPost, "/v1/procedures/:id/sign-off", s.handleSignOff(db.SignProcedure), engineers},
		{http.MethodPost, "/v1/qualification-records/:id/sign-off", s.handleSignOff(db.SignQualificationRecord), engineers},

		{http.MethodPost, "/v1/coupons", handleCreate(s, cp), recorders},
		{http.MethodPost, "/v1/coupons/import", s.handleCouponImport, recorders},
		{http.MethodGet, "/v1/coupons", s.handleCouponList, readers},
		{http.MethodGet, "/v1/coupons/:id", handleGet(cp), readers},
		{http.MethodPut, "/v1/coupons/:id", handleCorrect(s, cp), recorders},
		{http.MethodPost, "/v1/coupons/:id/void", handleVoid(cp), recorders},
		{http.MethodGet, "/v1/coupons/:id/revisions", handleRevisions(s, cp), readers},
		{http.MethodPost, couponMeasurementsPath, handleCreate(s, ms), recorders},
		{http.MethodGet, couponMeasurementsPath, s.handleMeasurementList, readers},

		{http.MethodGet, "/v1/measurements", s.handleMeasurementList, readers},
		{http.MethodGet, "/v1/measurements/:id", handleGet(ms), readers},
		{http.MethodPut, "/v1/measurements/:id", handleCorrect(s, ms), recorders},
		{http.MethodPost, "/v1/measurements/:id/void", handleVoid(ms), recorders},
		{http.MethodGet, "/v1/measurements/:id/revisions", handleRevisions(s, ms), readers},

		{http.MethodGet, "/v1/audit/events", s.handleAuditEvents, readers},
		{http.MethodGet, "/v1/audit/verify", s.handleAuditVerify, readers},
		{http.MethodGet, "/v1/log/checkpoint", s.handleCheckpoint, readers},
		{http.MethodGet, "/v1/log/key", s.handleLogKey, readers},
		{http.MethodGet, "/v1/log/inclusion", s.handleInclusion, readers},
		{http.MethodGet, "/v1/log/consistency", s.handleConsistency, readers},

		// rule sets, ranges and flags
		{http.MethodGet, "/v1/rule-sets", s.handleRuleSetList, readers},
		{http.MethodPost, "/v1/rule-sets", s.handleRuleSetCreate, engineers},
		{http.MethodGet, "/v1/rule-sets/:rule_set_id", s.handleRuleSetGet, readers},
		{http.MethodPost, "/v1/procedures/:id/ranges", s.handleRangesDerive, engineers},
		{http.MethodGet, "/v1/procedures/:id/ranges", s.handleRangesGet, readers},
		{http.MethodPost, "/v1/procedures/:id/ranges/narrow", s.handleRangesNarrow, engineers},
		{http.MethodGet, "/v1/procedures/:id/flag-summary", s.handleFlagSummary, readers},
		{http.MethodPost, "/v1/production-records", s.handleProductionCreate, recorders},
		{http.MethodGet, "/v1/production-records", s.handleProductionList, readers},
		{http.MethodPost, streamPath, s.handleProductionStream, recorders},
		{http.MethodGet, "/v1/flags", s.handleFlagList, readers},
		// end of rule sets, ranges and flags
		{http.MethodGet, "/v1/export", s.handleExport, readers},

		// predictions and calibrations
		{http.MethodPost, "/v1/predictions", s.handlePrediction, readers},
		{http.MethodPost, "/v1/calibrations", s.handleCalibrationCreate, engineers},
		{http.MethodGet, "/v1/calibrations", s.handleCalibrationList, readers},
		{http.MethodGet, "/v1/calibrations/:id", s.handleCalibrationGet, readers},
		{http.MethodPost, "/v1/calibrations/:id/activate", s.handleCalibrationActivate, engineers},
		{http.MethodPost, "/v1/calibrations/:id/deactivate", s.handleCalibrationActivate, engineers},
		{http.MethodPost, "/v1/calibrations/:id/sign-off", s.handleSignOff(db.SignCalibration), engineers},
		{http.MethodGet, "/v1/sign-offs", s.handleSignOffList, readers},
		{http.MethodGet, "/v1/sign-offs/:id", s.handleSignOffGet, readers},
		{http.MethodGet, "/v1/coupons/:id/model", s.handleCouponModel, readers},
		{http.MethodPost, "/v1/inverse/current-for-deposition", s.handleInverseDeposition, readers},
		{http.MethodPost, "/v1/inverse/hold-penetration", s.handleInverseHold, readers},
		{http.MethodPost, "/v1/inverse/penetration", s.handleInversePenetration, readers},
		{http.MethodPost, "/v1/parameter-window", s.handleWindow, readers},
		{http.MethodPost, "/v1/coupon-plans/proposals", s.handleCouponPlanProposals, engineers},
		{http.MethodPost, "/v1/coupon-plans", s.handleCouponPlanCreate, engineers},
		{http.MethodGet, "/v1/coupon-plans/:id", s.handleCouponPlanGet, readers},
		{http.MethodGet, "/v1/coupon-plans/:id/sheet", s.handleCouponPlanSheet, readers},
		{http.MethodGet, "/v1/drift", s.handleDrift, readers},
		// end of predictions and calibrations
	} {
		conform, err := s.conformTo(r.method, r.path)
		if err != nil {
			return err
		}
		mw := []echo.MiddlewareFunc{conform}
		if r.roles != nil {
			mw = []echo.MiddlewareFunc{s.requireRole(r.roles, keptUserRoutes[r.method+" "+r.path]), conform}
		}
		if r.method == http.MethodPost && creates(s.spec.Paths.Find(specPath(r.path)).GetOperation(r.method)) {
			mw = append(mw, s.idempotent)
		}
		s.echo.Add(r.method, r.path, r.h, mw...)
	}
	return nil
}
