package lab

import (
	"bytes"
	"net/http"
	"net/http/httptest"
)

// Download passes one API answer that is a file (a CSV list, a printed
// record) to the browser as this user: the API writes straight through to
// the page's connection, so a CSV of any length streams with the memory of
// one page, as it does for curl. A refusal (status 400 or more) is not
// passed on: it is returned as a *Problem for an error page.
func (c *Client) Download(w http.ResponseWriter, path string) error {
	r := httptest.NewRequestWithContext(WithUser(c.ctx, c.user), http.MethodGet, path, nil)
	r.RemoteAddr = "in-process"
	pw := &passWriter{w: w, header: http.Header{}}
	c.h.ServeHTTP(pw, r)
	if pw.status >= 400 {
		return problemOf(pw.status, pw.refusal.Bytes())
	}
	return nil
}

// passedHeaders are the API's answer headers a download keeps.
var passedHeaders = []string{"Content-Type", "Content-Disposition", "Content-Length"}

// passWriter forwards a successful answer to the browser and keeps a
// refusal aside. It unwraps to the page's writer, so the API's flushes and
// write deadlines (http.ResponseController) reach the real connection.
type passWriter struct {
	w       http.ResponseWriter
	header  http.Header
	status  int
	refusal bytes.Buffer
}

func (p *passWriter) Header() http.Header { return p.header }

func (p *passWriter) WriteHeader(status int) {
	if p.status != 0 {
		return
	}
	p.status = status
	if status >= 400 {
		return
	}
	for _, h := range passedHeaders {
		if v := p.header.Get(h); v != "" {
			p.w.Header().Set(h, v)
		}
	}
	p.w.WriteHeader(status)
}

func (p *passWriter) Write(b []byte) (int, error) {
	if p.status == 0 {
		p.WriteHeader(http.StatusOK)
	}
	if p.status >= 400 {
		return p.refusal.Write(b)
	}
	return p.w.Write(b)
}

// Unwrap gives http.ResponseController the page's writer.
func (p *passWriter) Unwrap() http.ResponseWriter { return p.w }
