package lab

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"

	"etchlog/db"
)

// userKey carries the signed-in user of an in-process API call.
type userKey struct{}

// WithUser returns ctx carrying u as the user of an in-process API call. The
// API's authentication accepts it in place of a bearer token: a context
// value cannot come from the network, only from code in this process.
func WithUser(ctx context.Context, u db.User) context.Context {
	return context.WithValue(ctx, userKey{}, u)
}

// UserOf returns the user an in-process call carries, if any.
func UserOf(ctx context.Context) (db.User, bool) {
	u, ok := ctx.Value(userKey{}).(db.User)
	return u, ok && u.Name != ""
}

// Client calls the JSON API in process as one user. Each method returns
// nil with the answer decoded into out, or a *Problem: the API's refusal
// with each refused field and its reason.
type Client struct {
	h    http.Handler
	user db.User
	ctx  context.Context
}

// Problem is a refusal of the API (RFC 9457 problem+json), kept for a page:
// Fields maps each refused field, as the request named it, to the reason.
type Problem struct {
	Status int    `json:"status"`
	Title  string `json:"title"`
	Detail string `json:"detail"`
	Fields map[string]string
	// Order lists the refused fields in the API's order.
	Order []string
	// ExistingID names the record a duplicate collides with.
	ExistingID string `json:"existing_id"`
}

// Error gives the problem in one line.
func (p *Problem) Error() string {
	if p.Detail != "" {
		return p.Title + ": " + p.Detail
	}
	return p.Title
}

// Field returns the reason a field was refused ("" when it was not).
func (p *Problem) Field(name string) string {
	if p == nil {
		return ""
	}
	return p.Fields[name]
}

// Get reads path (with its query) into out.
func (c *Client) Get(path string, out any) error { return c.do(http.MethodGet, path, nil, out) }

// Post sends in as JSON and decodes the answer into out (out may be nil).
func (c *Client) Post(path string, in, out any) error { return c.do(http.MethodPost, path, in, out) }

// Put sends in as JSON and decodes the answer into out (out may be nil).
func (c *Client) Put(path string, in, out any) error { return c.do(http.MethodPut, path, in, out) }

// PostCSV sends a CSV body (text/csv) and decodes the answer into out.
func (c *Client) PostCSV(path string, csv []byte, out any) error {
	return c.send(http.MethodPost, path, "text/csv", bytes.NewReader(csv), out)
}

func (c *Client) do(method, path string, in, out any) error {
	if in == nil {
		return c.send(method, path, "", nil, out)
	}
	b, err := json.Marshal(in)
	if err != nil {
		return fmt.Errorf("lab: encode %s %s: %w", method, path, err)
	}
	return c.send(method, path, "application/json", bytes.NewReader(b), out)
}

// send serves one request of contentType (none without a body) through the API.
func (c *Client) send(method, path, contentType string, body io.Reader, out any) error {
	r := httptest.NewRequestWithContext(WithUser(c.ctx, c.user), method, path, body)
	r.RemoteAddr = "in-process"
	if body != nil {
		r.Header.Set("Content-Type", contentType)
	}
	w := httptest.NewRecorder()
	c.h.ServeHTTP(w, r)
	if w.Code >= 400 {
		return problemOf(w.Code, w.Body.Bytes())
	}
	if out == nil || w.Code == http.StatusNoContent {
		return nil
	}
	if err := json.Unmarshal(w.Body.Bytes(), out); err != nil {
		return fmt.Errorf("lab: decode %s %s: %w", method, path, err)
	}
	return nil
}

// problemOf decodes a problem+json answer.
func problemOf(status int, body []byte) *Problem {
	var raw struct {
		Problem
		Errors []struct{ Field, Reason string } `json:"errors"`
	}
	if err := json.Unmarshal(body, &raw); err != nil || raw.Title == "" {
		return &Problem{Status: status, Title: http.StatusText(status)}
	}
	p := raw.Problem
	p.Status = status
	p.Fields = map[string]string{}
	for _, e := range raw.Errors {
		if _, seen := p.Fields[e.Field]; seen {
			p.Fields[e.Field] += "; " + e.Reason
			continue
		}
		p.Fields[e.Field] = e.Reason
		p.Order = append(p.Order, e.Field)
	}
	return &p
}

// List is one page of an API list.
type List[T any] struct {
	Items      []T    `json:"items"`
	NextCursor string `json:"next_cursor"`
}

// GetList reads one page of a list: path with the query q (cursor, limit
// and the list's filters).
func GetList[T any](c *Client, path string, q url.Values) (List[T], error) {
	var l List[T]
	if len(q) > 0 {
		sep := "?"
		if strings.Contains(path, "?") {
			sep = "&"
		}
		path += sep + q.Encode()
	}
	return l, c.Get(path, &l)
}
