package api

import (
	_ "embed"
	"net/http"

	"github.com/labstack/echo/v4"
)

//go:embed page.html
var pageHTML []byte

// handlePage serves the browser page: the safety caution, the API entry points
// and a read-only coupon table, with each coupon's flags, that uses the
// visitor's own token.
func (s *Server) handlePage(c echo.Context) error {
	c.Response().Header().Set("Content-Security-Policy", "default-src 'self'; style-src 'self' 'unsafe-inline'; script-src 'self' 'unsafe-inline'")
	return c.HTMLBlob(http.StatusOK, pageHTML)
}
