package api

import (
	"context"
	"net/http"
	"time"

	"github.com/labstack/echo/v4"

	"etchlog/openapi"
)

func (s *Server) handleHealth(c echo.Context) error {
	return c.JSON(http.StatusOK, map[string]string{"status": "ok"})
}

// handleReady answers 200 only while the database answers.
func (s *Server) handleReady(c echo.Context) error {
	ctx, cancel := context.WithTimeout(c.Request().Context(), 2*time.Second)
	defer cancel()
	if err := s.store.Ping(ctx); err != nil {
		return echo.NewHTTPError(http.StatusServiceUnavailable, "database not reachable")
	}
	return c.JSON(http.StatusOK, map[string]string{"status": "ready"})
}

func (s *Server) handleSpec(c echo.Context) error {
	return c.Blob(http.StatusOK, "application/yaml", openapi.Spec)
}
