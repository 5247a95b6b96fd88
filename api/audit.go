package api

import (
	"context"
	"encoding/base64"
	"net/http"
	"strconv"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// handleAuditEvents lists the site's log in index order, after an opaque cursor.
func (s *Server) handleAuditEvents(c echo.Context) error {
	var err error
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
	site := actorOf(c).Site
	return answerList(s, c, "audit-events", func(ctx context.Context, cursor string, limit int) (db.Page[db.LogEntry], error) {
		return s.store.AuditEvents(ctx, site, f, cursor, limit)
	})
}

// handleAuditVerify checks the site's log, records and flags; a checkpoint
// the caller saved earlier (base64url of the signed note) may be given.
func (s *Server) handleAuditVerify(c echo.Context) error {
	var saved []byte
	if v := c.QueryParam("checkpoint"); v != "" {
		b, err := base64.RawURLEncoding.DecodeString(v)
		if err != nil {
			return badRequest("checkpoint", "want the saved checkpoint file, base64url-encoded without padding")
		}
		saved = b
	}
	v, err := s.store.VerifyLog(c.Request().Context(), actorOf(c).Site, saved)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, v)
}

// handleCheckpoint answers the site's latest signed checkpoint as the
// signed-note text itself, ready to be saved to a file.
func (s *Server) handleCheckpoint(c echo.Context) error {
	cp, err := s.store.Checkpoint(c.Request().Context(), actorOf(c).Site, 0)
	if err != nil {
		return err
	}
	return c.Blob(http.StatusOK, "text/plain; charset=utf-8", []byte(cp.Note))
}

// handleLogKey answers the public key that verifies the checkpoints.
func (s *Server) handleLogKey(c echo.Context) error {
	return c.Blob(http.StatusOK, "text/plain; charset=utf-8", []byte(s.store.LogPublicKey()+"\n"))
}

// inclusionOut is an inclusion proof with the fact it proves.
type inclusionOut struct {
	db.InclusionProof
	Fact any `json:"fact"`
}

// handleInclusion proves that one record revision is in the log.
func (s *Server) handleInclusion(c echo.Context) error {
	entity := c.QueryParam("entity")
	if entity == "" {
		return badRequest("entity", "required: the record kind, e.g. coupon")
	}
	id, err := queryUUID(c, "entity_id")
	if err != nil {
		return err
	}
	if id == nil {
		return badRequest("entity_id", "required: the record id")
	}
	rev := 1
	if v := c.QueryParam("revision"); v != "" {
		if rev, err = strconv.Atoi(v); err != nil || rev < 1 {
			return badRequest("revision", "want a revision number from 1")
		}
	}
	ctx, site := c.Request().Context(), actorOf(c).Site
	p, err := s.store.Inclusion(ctx, site, entity, *id, rev)
	if err != nil {
		return err
	}
	out := inclusionOut{InclusionProof: p}
	if f, err := s.store.Fact(ctx, entity, site, *id, rev); err == nil {
		out.Fact = f.Fields
	}
	return c.JSON(http.StatusOK, out)
}

// handleConsistency proves the log of size from is a prefix of the log now
// (or of size to).
func (s *Server) handleConsistency(c echo.Context) error {
	var sizes [2]uint64
	for i, name := range []string{"from", "to"} {
		v := c.QueryParam(name)
		if v == "" {
			if name == "from" {
				return badRequest("from", "required: the size of the checkpoint you kept")
			}
			continue
		}
		n, err := strconv.ParseUint(v, 10, 63)
		if err != nil {
			return badRequest(name, "want a log size (a whole number from 0)")
		}
		sizes[i] = n
	}
	p, err := s.store.Consistency(c.Request().Context(), actorOf(c).Site, sizes[0], sizes[1])
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, p)
}
