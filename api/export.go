package api

import (
	"encoding/json"
	"net/http"

	"github.com/labstack/echo/v4"
)

// exportLine is one line of the NDJSON export.
type exportLine struct {
	Kind   string `json:"kind"`
	Record any    `json:"record"`
}

// handleExport streams the site's records, every revision, and its audit
// chain as newline-delimited JSON, ending with a summary line.
func (s *Server) handleExport(c echo.Context) error {
	w := c.Response()
	w.Header().Set(echo.HeaderContentType, "application/x-ndjson")
	w.Header().Set("Content-Disposition", `attachment; filename="etchlog-export.ndjson"`)
	enc := json.NewEncoder(w)
	started := false
	sum, err := s.store.Export(c.Request().Context(), actorOf(c).Site, func(kind string, v any) error {
		if !started {
			w.WriteHeader(http.StatusOK)
			started = true
		}
		return enc.Encode(exportLine{Kind: kind, Record: v})
	})
	if err != nil {
		if started { // the status is sent; end the stream with an error line the reader sees
			s.log.Error("export interrupted", "request_id", w.Header().Get(echo.HeaderXRequestID), "err", err)
			return enc.Encode(exportLine{Kind: "error", Record: "export interrupted; discard this file"})
		}
		return err
	}
	if !started {
		w.WriteHeader(http.StatusOK)
	}
	return enc.Encode(exportLine{Kind: "summary", Record: sum})
}
