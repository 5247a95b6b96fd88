package api

import (
	"net/http"
	"time"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// exportWriteWait is how long one write of the export may wait for the
// client to read. The deadline moves forward as lines go out, so an export
// of any size completes while the client keeps reading, instead of being cut
// by the server's total write timeout.
const exportWriteWait = 30 * time.Second

// headerReadFrom names the server an export was read from: "primary", or
// "standby" when a streaming standby (DATABASE_READ_URL) kept up.
const headerReadFrom = "Etchlog-Read-From"

// handleExport streams the site's records, every revision, and its audit
// chain as newline-delimited JSON, ending with a summary line.
func (s *Server) handleExport(c echo.Context) error {
	w := c.Response()
	w.Header().Set(echo.HeaderContentType, "application/x-ndjson")
	w.Header().Set("Content-Disposition", `attachment; filename="etchlog-export.ndjson"`)
	out := db.NewExportWriter(w)
	rc := http.NewResponseController(w)
	var extended time.Time
	extend := func() {
		if now := time.Now(); now.Sub(extended) > time.Second {
			_ = rc.SetWriteDeadline(now.Add(exportWriteWait)) // unsupported by some test writers: then the server's applies
			extended = now
		}
	}
	started := false
	out.OnLine(func() {
		extend()
		if !started {
			w.WriteHeader(http.StatusOK)
			started = true
		}
	})
	ctx := db.NoteReadSource(c.Request().Context(), func(src string) { w.Header().Set(headerReadFrom, src) })
	sum, err := s.store.ExportTo(ctx, actorOf(c).Site, out)
	if err != nil {
		if started { // the status is sent; end the stream with an error line the reader sees
			if c.Request().Context().Err() != nil {
				s.log.Info("client closed request", "request_id", w.Header().Get(echo.HeaderXRequestID), "path", c.Request().URL.Path)
				return nil
			}
			s.log.Error("export interrupted", "request_id", w.Header().Get(echo.HeaderXRequestID), "err", err)
			if err := out.Line("error", "export interrupted; discard this file"); err != nil {
				return err
			}
			return out.Flush()
		}
		return err
	}
	if !started {
		w.WriteHeader(http.StatusOK)
	}
	extend()
	if err := out.Line("summary", sum); err != nil {
		return err
	}
	return out.Flush()
}
