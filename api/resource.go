package api

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"path"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// changeFields are the body fields of a correction, which must be absent on
// create, and the server-owned fields a correction may carry back unchanged.
type changeFields struct {
	BaseRevision *int    `json:"base_revision,omitempty"`
	Reason       *string `json:"reason,omitempty"`
	ownedFields
}

func (c changeFields) fields() changeFields { return c }

// input is a request body that converts into stored data D.
type input[D any] interface {
	fields() changeFields
	data(c echo.Context, s *Server) (D, error)
}

// resource wires the create/correct/void/read handlers of one record kind to
// its Store methods. Every record kind behaves the same way: corrections are
// new revisions with a reason, voids keep the record, nothing is deleted.
type resource[In input[D], D any, R any] struct {
	path      string // collection path, e.g. /v1/coupons
	create    func(context.Context, db.Actor, D) (R, error)
	correct   func(context.Context, db.Actor, uuid.UUID, db.Change, D) (R, error)
	void      func(context.Context, db.Actor, uuid.UUID, db.Change) (R, error)
	get       func(context.Context, string, uuid.UUID, int) (R, error)
	revisions func(context.Context, string, uuid.UUID) ([]R, error)
}

func handleCreate[In input[D], D any, R any](s *Server, r resource[In, D, R]) echo.HandlerFunc {
	return func(c echo.Context) error {
		var in In
		if err := bind(c, &in); err != nil {
			return err
		}
		if ch := in.fields(); ch.BaseRevision != nil || ch.Reason != nil {
			field := "base_revision"
			if ch.BaseRevision == nil {
				field = "reason"
			}
			return badRequest(field, "base_revision and reason belong to a correction (PUT), not to a new record")
		}
		if err := in.fields().onCreate(); err != nil {
			return err
		}
		d, err := in.data(c, s)
		if err != nil {
			return err
		}
		if err := s.check(d); err != nil {
			return err
		}
		rec, err := r.create(c.Request().Context(), actorOf(c), d)
		if err != nil {
			return err
		}
		c.Response().Header().Set(echo.HeaderLocation, r.path+"/"+idOf(rec).String())
		return answerOne(c, http.StatusCreated, &rec)
	}
}

func handleCorrect[In input[D], D any, R any](s *Server, r resource[In, D, R]) echo.HandlerFunc {
	return func(c echo.Context) error {
		id, err := pathID(c)
		if err != nil {
			return err
		}
		var in In
		if err := bind(c, &in); err != nil {
			return err
		}
		ch, err := change(in.fields())
		if err != nil {
			return err
		}
		if err := checkOwned(c.Request().Context(), c, r.get, id, ch.BaseRevision, in.fields().ownedFields); err != nil {
			return err
		}
		d, err := in.data(c, s)
		if err != nil {
			return err
		}
		if err := s.check(d); err != nil {
			return err
		}
		rec, err := r.correct(c.Request().Context(), actorOf(c), id, ch, d)
		if err != nil {
			return err
		}
		return answerOne(c, http.StatusOK, &rec)
	}
}

func handleVoid[In input[D], D any, R any](r resource[In, D, R]) echo.HandlerFunc {
	return func(c echo.Context) error {
		id, err := pathID(c)
		if err != nil {
			return err
		}
		var in changeFields
		if err := bind(c, &in); err != nil {
			return err
		}
		ch, err := change(in)
		if err != nil {
			return err
		}
		rec, err := r.void(c.Request().Context(), actorOf(c), id, ch)
		if err != nil {
			return err
		}
		return c.JSON(http.StatusOK, rec)
	}
}

func handleGet[In input[D], D any, R any](r resource[In, D, R]) echo.HandlerFunc {
	return func(c echo.Context) error {
		id, err := pathID(c)
		if err != nil {
			return err
		}
		rev, err := queryInt(c, "revision")
		if err != nil {
			return err
		}
		rec, err := r.get(c.Request().Context(), actorOf(c).Site, id, rev)
		if err != nil {
			return err
		}
		return c.JSON(http.StatusOK, rec)
	}
}

func handleRevisions[In input[D], D any, R any](s *Server, r resource[In, D, R]) echo.HandlerFunc {
	return func(c echo.Context) error {
		id, err := pathID(c)
		if err != nil {
			return err
		}
		recs, err := r.revisions(c.Request().Context(), actorOf(c).Site, id)
		if err != nil {
			return err
		}
		return answerAll(s, c, path.Base(r.path)+"-"+id.String()+"-revisions", recs)
	}
}

// change checks a correction's base revision and reason: a field left out
// is the request's shape (400), a value given but refused is 422.
func change(f changeFields) (db.Change, error) {
	var v issues
	switch {
	case f.BaseRevision == nil:
		v.missing("base_revision", "is required: the revision this change is based on (1 or more)")
	case *f.BaseRevision < 1:
		v.refused("base_revision", fmt.Sprintf("%d is not a revision: revisions count from 1", *f.BaseRevision))
	case *f.BaseRevision >= math.MaxInt32:
		v.refused("base_revision", fmt.Sprintf("%d is past the last revision a record can have (2147483646)", *f.BaseRevision))
	}
	switch {
	case f.Reason == nil:
		v.missing("reason", "is required: say why the record is changed")
	case strings.TrimSpace(*f.Reason) == "":
		v.refused("reason", "is blank: say why the record is changed")
	}
	if err := v.err(); err != nil {
		return db.Change{}, err
	}
	return db.Change{BaseRevision: *f.BaseRevision, Reason: *f.Reason}, nil
}

func idOf(rec any) uuid.UUID {
	type ider interface{ RecordID() uuid.UUID }
	return rec.(ider).RecordID()
}

func pathID(c echo.Context) (uuid.UUID, error) {
	id, err := uuid.Parse(c.Param("id"))
	if err != nil {
		return uuid.Nil, badRequest("id", "not a record id (UUID)")
	}
	return id, nil
}

func queryInt(c echo.Context, name string) (int, error) {
	s := c.QueryParam(name)
	if s == "" {
		return 0, nil
	}
	n, err := strconv.Atoi(s)
	if err != nil || n < 0 || n > math.MaxInt32 {
		return 0, badRequest(name, "want a whole number from 0 to 2147483647")
	}
	return n, nil
}

// queryUUID reads an optional UUID query parameter.
func queryUUID(c echo.Context, name string) (*uuid.UUID, error) {
	s := c.QueryParam(name)
	if s == "" {
		return nil, nil
	}
	id, err := uuid.Parse(s)
	if err != nil {
		return nil, badRequest(name, "not a record id (UUID)")
	}
	return &id, nil
}

// queryTime reads an optional time filter bound: a day (YYYY-MM-DD, its
// midnight UTC) or an RFC 3339 time. Every time filter is half-open,
// [from, to): from is included, to is not.
func queryTime(c echo.Context, name string) (*time.Time, error) {
	return timeBound(name, c.QueryParam(name))
}

// timeBound parses one bound of a half-open time range ("" is no bound).
func timeBound(name, v string) (*time.Time, error) {
	if v == "" {
		return nil, nil
	}
	if d, err := db.ParseDate(v); err == nil {
		return &d.Time, nil
	}
	t, err := time.Parse(time.RFC3339, v)
	if err != nil {
		return nil, badRequest(name, fmt.Sprintf("%q is not a day YYYY-MM-DD or an RFC 3339 time (e.g. 2026-11-03 or 2026-11-03T08:00:00Z)", v))
	}
	return &t, nil
}

// queryDay reads a time filter bound on a column of days: a day counts from
// its midnight UTC, so a bound inside a day moves to the next midnight
// (welded_to=2026-11-03T12:00Z includes 2026-11-03, welded_to=2026-11-03 does not).
func queryDay(c echo.Context, name string) (*db.Date, error) {
	v := c.QueryParam(name)
	return dayBound(name, &v)
}

// dayBound is queryDay for a bound given in a body (nil or "" is no bound).
func dayBound(name string, v *string) (*db.Date, error) {
	if v == nil {
		return nil, nil
	}
	t, err := timeBound(name, *v)
	if t == nil || err != nil {
		return nil, err
	}
	d := db.DateOf(t.UTC())
	if d.Before(*t) {
		d = db.Date{Time: d.AddDate(0, 0, 1)}
	}
	return &d, nil
}

// listPage is the JSON shape of every list.
type listPage[T any] struct {
	Items []T    `json:"items"`
	Next  string `json:"next_cursor,omitempty"`
}

func pageOf[T any](p db.Page[T]) listPage[T] {
	if p.Items == nil {
		p.Items = []T{}
	}
	return listPage[T]{Items: p.Items, Next: p.Next}
}

// answerOne answers a written record, through its item writer when it has
// one (writeOne), else through jsonAnswer.
func answerOne[R any](c echo.Context, status int, rec *R) error {
	if done, err := writeOne(c, status, rec); done {
		return err
	}
	return c.JSON(status, rec)
}
