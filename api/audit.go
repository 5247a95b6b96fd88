package api

import (
	"net/http"
	"strconv"
	"time"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// handleAuditEvents lists the site's audit chain in order, keyset-paginated by sequence.
func (s *Server) handleAuditEvents(c echo.Context) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	var after int64
	if a := c.QueryParam("cursor"); a != "" {
		if after, err = strconv.ParseInt(a, 10, 64); err != nil || after < 0 {
			return badRequest("cursor", "not a cursor returned by this list")
		}
	}
	f := db.AuditFilter{Entity: c.QueryParam("entity"), Actor: c.QueryParam("actor")}
	if f.EntityID, err = queryUUID(c, "entity_id"); err != nil {
		return err
	}
	for name, dst := range map[string]**time.Time{"from": &f.From, "to": &f.To} {
		if v := c.QueryParam(name); v != "" {
			t, err := time.Parse(time.RFC3339, v)
			if err != nil {
				return badRequest(name, "want an RFC 3339 time, e.g. 2026-11-03T08:00:00Z")
			}
			*dst = &t
		}
	}
	if limit <= 0 || limit > db.MaxPageSize {
		limit = db.MaxPageSize
	}
	ev, err := s.store.AuditEvents(c.Request().Context(), actorOf(c).Site, f, after, limit)
	if err != nil {
		return err
	}
	page := listPage[db.AuditEvent]{Items: ev}
	if page.Items == nil {
		page.Items = []db.AuditEvent{}
	}
	if len(ev) == limit {
		page.Next = strconv.FormatInt(ev[len(ev)-1].Seq, 10)
	}
	// Payloads are the records exactly as stored and hashed: no rounding.
	c.Set(ctxVerbatim, true)
	return c.JSON(http.StatusOK, page)
}

// handleAuditVerify recomputes the audit chain and compares every stored revision with it.
func (s *Server) handleAuditVerify(c echo.Context) error {
	v, err := s.store.VerifyAudit(c.Request().Context(), actorOf(c).Site)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, v)
}
