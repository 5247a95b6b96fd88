package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// handleAuditEvents lists the site's audit chain in order, keyset-paginated by sequence.
func (s *Server) handleAuditEvents(c echo.Context) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	after, err := db.AfterSeq("audit_events", c.QueryParam("cursor"))
	if err != nil {
		return err
	}
	f := db.AuditFilter{Entity: c.QueryParam("entity"), Actor: c.QueryParam("actor")}
	if f.EntityID, err = queryUUID(c, "entity_id"); err != nil {
		return err
	}
	if f.From, err = queryTime(c, "from"); err != nil {
		return err
	}
	if f.To, err = queryTime(c, "to"); err != nil {
		return err
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
		page.Next = db.SeqCursor("audit_events", ev[len(ev)-1].Seq)
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
