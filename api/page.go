package api

import (
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/api/lab"
)

// handlePage sends a browser to the lab pages' start page.
func (s *Server) handlePage(c echo.Context) error {
	return c.Redirect(http.StatusSeeOther, lab.Prefix+"/")
}
