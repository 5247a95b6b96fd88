package lab

import (
	"errors"
	"net/http"
	"slices"
	"strings"
	"sync"

	"etchlog/db"
)

// Page is one lab page: a ServeMux pattern under Prefix, the roles that may
// open it and its handler. A page file registers its pages in an init
// function with Register, so page authors add files, not lines to a shared
// list.
type Page struct {
	// Pattern is an http.ServeMux pattern with its method, e.g.
	// "GET /lab/coupons/{id}" or "POST /lab/coupons".
	Pattern string
	// Roles may open the page (db.RoleTechnician...); others get a 403 page.
	Roles []string
	// Nav, when set, puts the page in the header's navigation under this
	// label, for its roles; NavOrder sorts the entries (small first).
	Nav      string
	NavOrder int
	// Template is the page's file in templates/ (it defines "content"); a
	// page that only redirects may leave it empty.
	Template string
	// Handle answers the request: rq.Render or rq.Redirect. An error is
	// shown as an error page (a *Problem with its status and words).
	Handle func(rq *Request) error
}

// Role sets for Page.Roles.
var (
	Everyone   = []string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor}
	Recorders  = []string{db.RoleTechnician, db.RoleEngineer}
	Engineers  = []string{db.RoleEngineer}
	Auditors   = []string{db.RoleAuditor, db.RoleEngineer}
	registryMu sync.Mutex
	pages      []Page
)

// Register adds pages; call it from an init function of the page's file.
func Register(p ...Page) {
	registryMu.Lock()
	defer registryMu.Unlock()
	pages = append(pages, p...)
}

func registered() []Page {
	registryMu.Lock()
	defer registryMu.Unlock()
	return slices.Clone(pages)
}

// Request is one page request of a signed-in user.
type Request struct {
	*http.Request
	W    http.ResponseWriter
	User db.User
	// API calls the JSON API as this user.
	API *Client
	// Units is the display choice, remembered in a cookie.
	Units Units
	lab   *Lab
	csrf  string
}

// page wraps a Page's handler: a session is required (else the sign-in
// page), the role must be one of the page's, and a write must carry the
// session's form token.
func (l *Lab) page(p Page) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Cache-Control", "no-store")
		ses, ok := l.session(w, r)
		if !ok {
			return
		}
		rq := &Request{Request: r, W: w, User: ses.User, Units: unitsOf(r), lab: l, csrf: csrfToken(ses.ID)}
		rq.API = &Client{h: l.api, user: ses.User, ctx: r.Context()}
		if !slices.Contains(p.Roles, ses.User.Role) {
			rq.fail(&Problem{Status: http.StatusForbidden, Title: "Not for your role",
				Detail: "A " + ses.User.Role + " may not open this page; it is for: " + strings.Join(p.Roles, ", ") + "."})
			return
		}
		if writes(r.Method) && !rq.formTokenOK() {
			rq.fail(refusedForm())
			return
		}
		if err := p.Handle(rq); err != nil {
			rq.fail(err)
		}
	})
}

// writes reports whether a request method may change something.
func writes(method string) bool {
	return method != http.MethodGet && method != http.MethodHead
}

// fail shows an error page: a *Problem in its own words and status, anything
// else logged and shown as a failure without internal text.
func (rq *Request) fail(err error) {
	var p *Problem
	if !errors.As(err, &p) {
		rq.lab.log.Error("lab page failed", "method", rq.Method, "path", rq.URL.Path, "user", rq.User.Name, "err", err)
		p = &Problem{Status: http.StatusInternalServerError, Title: "Something went wrong",
			Detail: "The page could not be shown. Try again; if it keeps failing, tell whoever runs etchlog."}
	}
	status := p.Status
	if status < 400 {
		status = http.StatusInternalServerError
	}
	_ = rq.Render(status, "error.html", p.Title, p)
}

// Redirect answers 303 See Other, so a reload after a form does not send it again.
func (rq *Request) Redirect(to string) error {
	http.Redirect(rq.W, rq.Request, to, http.StatusSeeOther)
	return nil
}
