// Package api is etchlog's HTTP layer: JSON over REST, described by the
// OpenAPI document in openapi/, with every request checked against it.
// Handlers bind, validate, call the store and return JSON; errors become
// RFC 9457 problem+json in one place (errorHandler).
package api

import (
	"log/slog"
	"net/http"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/go-playground/validator/v10"
	"github.com/labstack/echo/v4"
	"github.com/labstack/echo/v4/middleware"

	"etchlog/api/lab"
	"etchlog/db"
)

// Options configure a Server.
type Options struct {
	Logger    *slog.Logger
	BodyLimit string // e.g. "1MiB" (1,048,576 bytes; "1M" would be 10^6); requests above it get 413
	PerUser   int    // requests one user may have running at once (0: DefaultPerUser); more get 429
}

// Server serves etchlog's API over a Store.
type Server struct {
	store    *db.Store
	log      *slog.Logger
	validate *validator.Validate
	spec     *openapi3.T
	echo     *echo.Echo
	limit    *userLimiter
	users    keptUsers // token digest → user, for keptUserRoutes
	lab      *lab.Lab
}

// New builds the server and registers every route. It fails when a route has
// no operation in the OpenAPI document.
func New(store *db.Store, opt Options) (*Server, error) {
	if opt.Logger == nil {
		opt.Logger = slog.Default()
	}
	if opt.BodyLimit == "" {
		opt.BodyLimit = "1MiB"
	}
	if opt.PerUser <= 0 {
		opt.PerUser = DefaultPerUser
	}
	spec, err := loadSpec()
	if err != nil {
		return nil, err
	}
	e := echo.New()
	e.HideBanner, e.HidePort = true, true
	s := &Server{store: store, log: opt.Logger, validate: newValidator(), spec: spec, echo: e, limit: newUserLimiter(opt.PerUser)}
	e.HTTPErrorHandler = errorHandler(opt.Logger)
	e.JSONSerializer = jsonAnswer{}
	e.Use(middleware.RequestID())
	e.Use(middleware.Recover())
	e.Use(s.accessLog)
	// A production stream has no length limit: it is read a line at a time.
	e.Use(middleware.BodyLimitWithConfig(middleware.BodyLimitConfig{Limit: opt.BodyLimit,
		Skipper: func(c echo.Context) bool { return c.Path() == streamPath }}))
	e.Use(s.guard)
	if err := s.routes(); err != nil {
		return nil, err
	}
	// The lab pages call the API in process, as their signed-in user.
	if s.lab, err = lab.New(lab.Options{API: e, Store: store, Logger: opt.Logger}); err != nil {
		return nil, err
	}
	return s, nil
}

// ServeHTTP lets the server be used as an http.Handler: the lab pages under
// /lab, the API and the rest through echo.
func (s *Server) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	if lab.Handles(r.URL.Path) {
		s.lab.ServeHTTP(w, r)
		return
	}
	s.echo.ServeHTTP(w, r)
}

// Routes lists the registered method and path pairs, with OpenAPI-style {params}.
func (s *Server) Routes() []string {
	var out []string
	for _, r := range s.echo.Routes() {
		out = append(out, r.Method+" "+specPath(r.Path))
	}
	return out
}

// accessLog writes one structured line per request.
func (s *Server) accessLog(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		err := next(c)
		if err != nil {
			c.Error(err)
		}
		s.log.Info("request", "method", c.Request().Method, "path", c.Request().URL.Path,
			"status", c.Response().Status, "request_id", c.Response().Header().Get(echo.HeaderXRequestID),
			"user", userName(c))
		return nil
	}
}
