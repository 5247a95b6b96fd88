package api

import (
	"context"
	"errors"
	"net/http"
	"slices"
	"time"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// A qualification record prints as PDF (GET /v1/qualification-records/{id}
// with format=pdf): the record as welded beside the ranges of every current
// procedure it supports, its test results and the sections of its coupons,
// its sign-offs, and the log checkpoint it was printed against with the
// inclusion proof of the printed revision, so a paper copy can be checked
// against the log later.

const formatPDF = "pdf"

// printedRecord is everything a printed qualification record shows.
type printedRecord struct {
	QR         db.QualificationRecord
	Revisions  int // how many revisions the record has
	Printed    time.Time
	PrintedBy  string
	Inch       bool
	Procedures []printedProcedure
	Coupons    []printedCoupon
	SignOffs   []db.SignOff
	Proof      *db.InclusionProof // nil: the revision is not in the log yet
}

// printedProcedure is a current procedure that cites the record, with its
// latest ranges (nil: none derived).
type printedProcedure struct {
	Procedure db.Procedure
	Ranges    *db.ProcedureRanges
}

// printedCoupon is a current coupon welded under the record, with its
// current sections.
type printedCoupon struct {
	Coupon   db.Coupon
	Sections []db.Measurement
}

// handleQualificationRecordGet answers a qualification record as JSON, or
// printed as PDF with format=pdf.
func (s *Server) handleQualificationRecordGet(c echo.Context) error {
	if c.QueryParam("format") != formatPDF {
		return handleGet(s.qualificationRecordResource())(c)
	}
	id, err := pathID(c)
	if err != nil {
		return err
	}
	rev, err := queryInt(c, "revision")
	if err != nil {
		return err
	}
	units, _ := c.Get(ctxUnits).(string)
	rec, err := s.printable(c.Request().Context(), actorOf(c), id, rev, units == unitsInchPound)
	if err != nil {
		return err
	}
	b, err := renderRecordPDF(rec)
	if err != nil {
		return err
	}
	c.Response().Header().Set(echo.HeaderContentDisposition, `inline; filename="`+fileSafe(rec.QR.RecordNumber)+`.pdf"`)
	return c.Blob(http.StatusOK, "application/pdf", b)
}

// printable reads what the printed record shows, all at the caller's site.
func (s *Server) printable(ctx context.Context, a db.Actor, id uuid.UUID, rev int, inch bool) (printedRecord, error) {
	p := printedRecord{Printed: time.Now().UTC(), PrintedBy: a.Name, Inch: inch}
	var err error
	if p.QR, err = s.store.QualificationRecord(ctx, a.Site, id, rev); err != nil {
		return p, err
	}
	revs, err := s.store.QualificationRecordRevisions(ctx, a.Site, id)
	if err != nil {
		return p, err
	}
	p.Revisions = len(revs)
	err = eachPage(ctx, func(ctx context.Context, cursor string) (db.Page[db.Procedure], error) {
		return s.store.Procedures(ctx, a.Site, db.ProcedureFilter{}, cursor, db.MaxPageSize)
	}, func(pr db.Procedure) error {
		if !slices.Contains(pr.SupportingRecordIDs, id) {
			return nil
		}
		pp := printedProcedure{Procedure: pr}
		r, err := s.store.ProcedureRanges(ctx, a.Site, pr.ID, 0)
		switch {
		case err == nil:
			pp.Ranges = &r
		case !errors.Is(err, db.ErrNotFound):
			return err
		}
		p.Procedures = append(p.Procedures, pp)
		return nil
	})
	if err != nil {
		return p, err
	}
	err = eachPage(ctx, func(ctx context.Context, cursor string) (db.Page[db.Coupon], error) {
		return s.store.Coupons(ctx, a.Site, db.CouponFilter{QualificationRecordID: &id}, cursor, db.MaxPageSize)
	}, func(cp db.Coupon) error {
		pc := printedCoupon{Coupon: cp}
		err := eachPage(ctx, func(ctx context.Context, cursor string) (db.Page[db.Measurement], error) {
			return s.store.Measurements(ctx, a.Site, db.MeasurementFilter{CouponID: &cp.ID}, cursor, db.MaxPageSize)
		}, func(m db.Measurement) error {
			pc.Sections = append(pc.Sections, m)
			return nil
		})
		p.Coupons = append(p.Coupons, pc)
		return err
	})
	if err != nil {
		return p, err
	}
	err = eachPage(ctx, func(ctx context.Context, cursor string) (db.Page[db.SignOff], error) {
		return s.store.SignOffs(ctx, a.Site, db.SignOffFilter{RecordKind: db.SignQualificationRecord, RecordID: &id}, cursor, db.MaxPageSize)
	}, func(so db.SignOff) error {
		p.SignOffs = append(p.SignOffs, so)
		return nil
	})
	if err != nil {
		return p, err
	}
	proof, err := s.store.Inclusion(ctx, a.Site, "qualification_record", id, p.QR.Revision)
	switch {
	case err == nil:
		p.Proof = &proof
	case !errors.Is(err, db.ErrNotFound): // not logged yet: the printout says so
		return p, err
	}
	return p, nil
}

// eachPage calls fn for every item of a list, reading it page by page.
func eachPage[T any](ctx context.Context, list func(context.Context, string) (db.Page[T], error), fn func(T) error) error {
	cursor := ""
	for {
		p, err := list(ctx, cursor)
		if err != nil {
			return err
		}
		for _, it := range p.Items {
			if err := fn(it); err != nil {
				return err
			}
		}
		if len(p.Items) < db.MaxPageSize {
			return nil
		}
		cursor = p.Next
	}
}

// fileSafe keeps letters, digits, '-', '_' and '.' of a record number for a
// file name, so no header can be broken by it.
func fileSafe(s string) string {
	out := []rune{}
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_', r == '.':
			out = append(out, r)
		default:
			out = append(out, '_')
		}
	}
	if len(out) == 0 {
		return "qualification-record"
	}
	return string(out)
}
