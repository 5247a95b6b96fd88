// Package lab serves the lab pages: HTML rendered on the server from the
// templates embedded in the binary, for the technicians, engineers and
// auditors of a site. The pages hold no rules of their own: every read and
// write is a call to the JSON API, made in process as the signed-in user
// (Client), so a page shows exactly what the API answers and refuses.
package lab

import (
	"embed"
	"errors"
	"html/template"
	"io/fs"
	"log/slog"
	"net/http"
	"slices"
	"strings"

	"etchlog/db"
)

//go:embed templates/*.html
var templateFS embed.FS

//go:embed static
var staticFS embed.FS

// Prefix is where the lab pages live; "/" redirects to Prefix + "/".
const Prefix = "/lab"

// Options configure the lab pages.
type Options struct {
	// API is the JSON API the pages call in process (the api package's
	// server). Requests carry the signed-in user on their context (WithUser).
	API http.Handler
	// Store keeps the sessions.
	Store  *db.Store
	Logger *slog.Logger
}

// Lab serves every page under Prefix.
type Lab struct {
	api   http.Handler
	store *db.Store
	log   *slog.Logger
	mux   *http.ServeMux
	views map[string]*template.Template // page template file → layout + partials + that file
	nav   []navItem
}

// New parses the templates and registers every page (see Page).
func New(opt Options) (*Lab, error) {
	if opt.API == nil || opt.Store == nil {
		return nil, errors.New("lab: Options need API and Store")
	}
	if opt.Logger == nil {
		opt.Logger = slog.Default()
	}
	l := &Lab{api: opt.API, store: opt.Store, log: opt.Logger, mux: http.NewServeMux(), views: map[string]*template.Template{}}
	if err := l.parseTemplates(); err != nil {
		return nil, err
	}
	static, err := fs.Sub(staticFS, "static")
	if err != nil {
		return nil, err
	}
	l.mux.Handle("GET "+Prefix+"/static/", http.StripPrefix(Prefix+"/static/", cacheFor(http.FileServerFS(static))))
	l.mux.HandleFunc("GET "+Prefix+"/sign-in", l.signInPage)
	l.mux.HandleFunc("POST "+Prefix+"/sign-in", l.signIn)
	l.mux.HandleFunc("POST "+Prefix+"/sign-out", l.signOut)
	l.mux.HandleFunc(Prefix+"/", l.notFound)
	for _, p := range registered() {
		if _, ok := l.views[p.Template]; p.Template != "" && !ok {
			return nil, errors.New("lab: page " + p.Pattern + " names template " + p.Template + ", which is not in templates/")
		}
		l.mux.Handle(p.Pattern, l.page(p))
		if p.Nav != "" {
			l.nav = append(l.nav, navItem{Label: p.Nav, Path: pathOf(p.Pattern), Roles: p.Roles, order: p.NavOrder})
		}
	}
	slices.SortStableFunc(l.nav, func(a, b navItem) int { return a.order - b.order })
	return l, nil
}

// ServeHTTP serves the pages, with headers that keep them to this site.
func (l *Lab) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	h := w.Header()
	h.Set("Content-Security-Policy", "default-src 'self'; img-src 'self' data:; style-src 'self' 'unsafe-inline'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'")
	h.Set("X-Content-Type-Options", "nosniff")
	h.Set("Referrer-Policy", "same-origin")
	if r.URL.Path == Prefix {
		http.Redirect(w, r, Prefix+"/", http.StatusSeeOther)
		return
	}
	l.mux.ServeHTTP(w, r)
}

// Handles reports whether path belongs to the lab pages.
func Handles(path string) bool { return path == Prefix || strings.HasPrefix(path, Prefix+"/") }

// cacheFor lets browsers keep the static files for an hour.
func cacheFor(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Cache-Control", "max-age=3600")
		h.ServeHTTP(w, r)
	})
}

// pathOf returns the path of a ServeMux pattern ("GET /lab/x" → "/lab/x").
func pathOf(pattern string) string {
	if _, p, ok := strings.Cut(pattern, " "); ok {
		return p
	}
	return pattern
}
