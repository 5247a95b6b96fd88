package api

import (
	"errors"
	"net/http"
	"slices"
	"strings"

	"github.com/labstack/echo/v4"

	"etchlog/api/lab"
	"etchlog/db"
)

// Role sets used in routes.go.
var (
	public    []string
	readers   = []string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor}
	recorders = []string{db.RoleTechnician, db.RoleEngineer}
	engineers = []string{db.RoleEngineer}
)

const ctxUser = "etchlog.user"

// requireRole authenticates the bearer token and admits only the given
// roles. A call of the lab pages, made in process, carries its signed-in
// user on the request context instead (lab.WithUser; the lab checked the
// session): a context value cannot come over the network.
func (s *Server) requireRole(roles []string) echo.MiddlewareFunc {
	return func(next echo.HandlerFunc) echo.HandlerFunc {
		return func(c echo.Context) error {
			u, inProcess := lab.UserOf(c.Request().Context())
			if !inProcess {
				var err error
				if u, err = s.bearer(c); err != nil {
					return err
				}
			}
			if !slices.Contains(roles, u.Role) {
				return echo.NewHTTPError(http.StatusForbidden, "role "+u.Role+" may not do this; allowed: "+strings.Join(roles, ", "))
			}
			c.Set(ctxUser, u)
			release, ok := s.limit.acquire(u.Site + "\x00" + u.Name)
			if !ok {
				return s.limit.tooMany()
			}
			defer release()
			return next(c)
		}
	}
}

// bearer finds the user of the request's bearer token.
func (s *Server) bearer(c echo.Context) (db.User, error) {
	h := c.Request().Header.Get(echo.HeaderAuthorization)
	// The scheme name is case-insensitive (RFC 9110, section 11.1).
	scheme, token, _ := strings.Cut(h, " ")
	token = strings.TrimSpace(token)
	if !strings.EqualFold(scheme, "Bearer") || token == "" {
		c.Response().Header().Set(echo.HeaderWWWAuthenticate, `Bearer realm="etchlog"`)
		return db.User{}, echo.NewHTTPError(http.StatusUnauthorized, "send Authorization: Bearer <token>")
	}
	u, err := s.store.UserByToken(c.Request().Context(), token)
	if errors.Is(err, db.ErrNotFound) {
		c.Response().Header().Set(echo.HeaderWWWAuthenticate, `Bearer realm="etchlog", error="invalid_token"`)
		return db.User{}, echo.NewHTTPError(http.StatusUnauthorized, "unknown token")
	}
	return u, err
}

// actorOf returns the authenticated user as the actor of a write.
func actorOf(c echo.Context) db.Actor {
	u, _ := c.Get(ctxUser).(db.User)
	return db.Actor(u)
}

func userName(c echo.Context) string {
	u, _ := c.Get(ctxUser).(db.User)
	return u.Name
}
