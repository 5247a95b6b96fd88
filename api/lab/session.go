package lab

import (
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base64"
	"errors"
	"net/http"
	"net/url"
	"strings"
	"time"

	"etchlog/db"
)

// Cookie and form field names.
const (
	sessionCookie = "etchlog_session"
	signInCookie  = "etchlog_sign_in" // the sign-in form's own token, before any session
	csrfFieldName = "form_token"
)

// session returns the request's open session. Without one it answers: a
// page read is sent to the sign-in page (and back afterwards), a write gets
// the refused-form page.
func (l *Lab) session(w http.ResponseWriter, r *http.Request) (db.Session, bool) {
	c, err := r.Cookie(sessionCookie)
	if err == nil && c.Value != "" {
		u, err := l.store.SessionUser(r.Context(), c.Value)
		if err == nil {
			return db.Session{ID: c.Value, User: u}, true
		}
		if !errors.Is(err, db.ErrNotFound) {
			l.log.Error("lab session lookup failed", "err", err)
			http.Error(w, "the sign-in could not be checked; try again shortly", http.StatusServiceUnavailable)
			return db.Session{}, false
		}
	}
	if writes(r.Method) {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		w.WriteHeader(http.StatusForbidden)
		_, _ = w.Write([]byte(refusedForm().Detail + "\n"))
		return db.Session{}, false
	}
	http.Redirect(w, r, Prefix+"/sign-in?next="+url.QueryEscape(r.URL.RequestURI()), http.StatusSeeOther)
	return db.Session{}, false
}

// csrfToken is the form token of a session: an HMAC-SHA256 of a fixed
// label under the session's secret id. Only the holder of the session
// cookie can have it, it needs no storage, and it ends with the session.
func csrfToken(sessionID string) string {
	m := hmac.New(sha256.New, []byte(sessionID))
	m.Write([]byte("etchlog lab form token"))
	return base64.RawURLEncoding.EncodeToString(m.Sum(nil))
}

// formTokenOK checks the form token of a write against the session's
// (synchronizer token), in constant time.
func (rq *Request) formTokenOK() bool {
	got := rq.Request.PostFormValue(csrfFieldName)
	if got == "" {
		got = rq.Header.Get("X-Form-Token")
	}
	return got != "" && subtle.ConstantTimeCompare([]byte(got), []byte(rq.csrf)) == 1
}

// refusedForm is the answer to a write without the session's form token.
func refusedForm() *Problem {
	return &Problem{Status: http.StatusForbidden, Title: "Form refused",
		Detail: "This form did not carry this session's form token, so nothing was saved. Open the page again from etchlog and send it from there."}
}

// setCookie sets an HttpOnly, SameSite=Strict cookie on the lab's path,
// Secure when the page came over TLS.
func setCookie(w http.ResponseWriter, r *http.Request, name, value string, maxAge int) {
	http.SetCookie(w, &http.Cookie{Name: name, Value: value, Path: Prefix, MaxAge: maxAge,
		HttpOnly: true, SameSite: http.SameSiteStrictMode, Secure: r.TLS != nil})
}

// signInView is the sign-in page's data.
type signInView struct {
	Next, Token, Error string
}

// signInPage shows the token form, with a fresh sign-in form token.
func (l *Lab) signInPage(w http.ResponseWriter, r *http.Request) {
	l.renderSignIn(w, r, http.StatusOK, "")
}

func (l *Lab) renderSignIn(w http.ResponseWriter, r *http.Request, status int, problem string) {
	b := make([]byte, 32)
	if _, err := rand.Read(b); err != nil {
		http.Error(w, "no randomness", http.StatusInternalServerError)
		return
	}
	tok := base64.RawURLEncoding.EncodeToString(b)
	setCookie(w, r, signInCookie, tok, 3600)
	w.Header().Set("Cache-Control", "no-store")
	rq := &Request{Request: r, W: w, Units: unitsOf(r), lab: l, csrf: tok}
	_ = rq.Render(status, "sign-in.html", "Sign in", signInView{Next: safeNext(r.FormValue("next")), Error: problem})
}

// signIn opens a session for the token typed in, then goes on to where the
// person was headed.
func (l *Lab) signIn(w http.ResponseWriter, r *http.Request) {
	c, err := r.Cookie(signInCookie)
	got := r.PostFormValue(csrfFieldName)
	if err != nil || got == "" || subtle.ConstantTimeCompare([]byte(got), []byte(c.Value)) != 1 {
		l.renderSignIn(w, r, http.StatusForbidden, "The sign-in form had expired. Type your token again.")
		return
	}
	token := strings.TrimSpace(r.PostFormValue("token"))
	if token == "" {
		l.renderSignIn(w, r, http.StatusUnprocessableEntity, "Type the token you were given.")
		return
	}
	ses, err := l.store.OpenSession(r.Context(), token)
	if errors.Is(err, db.ErrNotFound) {
		l.renderSignIn(w, r, http.StatusUnauthorized, "That token is not known here, or it was replaced or revoked.")
		return
	}
	if err != nil {
		l.log.Error("lab sign-in failed", "err", err)
		l.renderSignIn(w, r, http.StatusServiceUnavailable, "Signing in failed; try again shortly.")
		return
	}
	setCookie(w, r, signInCookie, "", -1)
	setCookie(w, r, sessionCookie, ses.ID, int(time.Until(ses.Expires).Seconds()))
	l.log.Info("lab sign-in", "user", ses.User.Name, "site", ses.User.Site)
	http.Redirect(w, r, safeNext(r.PostFormValue("next")), http.StatusSeeOther)
}

// signOut ends the session for good (every process sees it) and clears the cookie.
func (l *Lab) signOut(w http.ResponseWriter, r *http.Request) {
	ses, ok := l.session(w, r)
	if !ok {
		return
	}
	rq := &Request{Request: r, W: w, User: ses.User, Units: unitsOf(r), lab: l, csrf: csrfToken(ses.ID)}
	if !rq.formTokenOK() {
		rq.fail(refusedForm())
		return
	}
	if err := l.store.EndSession(r.Context(), ses.ID); err != nil {
		rq.fail(err)
		return
	}
	setCookie(w, r, sessionCookie, "", -1)
	http.Redirect(w, r, Prefix+"/sign-in", http.StatusSeeOther)
}

// safeNext keeps a "go on to" address on the lab's own pages.
func safeNext(next string) string {
	if !strings.HasPrefix(next, Prefix+"/") || strings.HasPrefix(next, "//") || strings.ContainsAny(next, "\\\r\n") {
		return Prefix + "/"
	}
	return next
}

// notFound answers every other path under Prefix.
func (l *Lab) notFound(w http.ResponseWriter, r *http.Request) {
	ses, ok := l.session(w, r)
	if !ok {
		return
	}
	rq := &Request{Request: r, W: w, User: ses.User, Units: unitsOf(r), lab: l, csrf: csrfToken(ses.ID)}
	rq.fail(&Problem{Status: http.StatusNotFound, Title: "No such page", Detail: "There is no page at " + r.URL.Path + "."})
}
