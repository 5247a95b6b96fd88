package api

import (
	"bytes"
	"context"
	"crypto/sha256"
	"errors"
	"io"
	"net/http"
	"strings"
	"time"

	"github.com/getkin/kin-openapi/openapi3"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// Idempotency-Key handling, as in the IETF httpapi "The Idempotency-Key HTTP
// Header Field" draft: a client sends a unique key with a creating POST and
// may resend the same request under it until it gets an answer.
const (
	headerIdempotencyKey = "Idempotency-Key"
	headerReplayed       = "Idempotent-Replayed"
	// claimLease is how long a running request holds its key before a retry
	// may take over a claim that wrote nothing.
	claimLease = 3 * time.Second
	// retryWait is how long a retry waits for the first request's answer.
	retryWait = 5 * time.Second
	// maxRemembered is the largest answer kept for a replay.
	maxRemembered = 4 << 20
)

// creates reports whether an operation creates a record (it answers 201),
// so that it takes an Idempotency-Key.
func creates(op *openapi3.Operation) bool {
	return op != nil && op.Responses != nil && op.Responses.Value("201") != nil
}

// idempotent makes a creating POST safe to retry under an Idempotency-Key:
// the same key and body get the first answer again without a second write;
// the same key with another body is 422; a retry while the first request
// runs waits for its answer, then gets 409.
func (s *Server) idempotent(next echo.HandlerFunc) echo.HandlerFunc {
	return func(c echo.Context) error {
		raw := c.Request().Header.Values(headerIdempotencyKey)
		if len(raw) == 0 {
			return next(c)
		}
		key, err := idempotencyKey(raw)
		if err != nil {
			return err
		}
		body, err := requestBody(c)
		if err != nil {
			return err
		}
		h := sha256.New()
		io.WriteString(h, c.Request().Method+" "+c.Request().URL.Path+"\n")
		h.Write(body)
		digest := h.Sum(nil)

		ctx := c.Request().Context()
		u := actorOf(c)
		claim, prior, err := s.store.ClaimKey(ctx, u.Site, u.Name, key, digest)
		if err != nil {
			return err
		}
		for deadline := time.Now().Add(retryWait); prior != nil; {
			if !bytes.Equal(prior.Digest, digest) {
				return unprocessable(FieldIssue{headerIdempotencyKey, "was already used for a different request; use a new key for a new request"})
			}
			if prior.Status > 0 {
				return replay(c, prior)
			}
			stale := time.Since(prior.ClaimedAt) > claimLease
			if stale && prior.Committed {
				return keyConflict("the first request with this key was written but its answer was lost; look the record up instead of retrying")
			}
			if stale {
				var ok bool
				if claim, ok, err = s.store.TakeOver(ctx, claim, prior.ClaimToken); err != nil {
					return err
				}
				if ok {
					break
				}
			}
			if time.Now().After(deadline) {
				return keyConflict("a request with this key is still running; retry later to get its answer")
			}
			select {
			case <-ctx.Done():
				return ctx.Err()
			case <-time.After(50 * time.Millisecond):
			}
			if prior, err = s.store.KeyState(ctx, claim); errors.Is(err, db.ErrNotFound) {
				// The first request wrote nothing and let the key go: claim it afresh.
				if claim, prior, err = s.store.ClaimKey(ctx, u.Site, u.Name, key, digest); err != nil {
					return err
				}
			} else if err != nil {
				return err
			}
		}
		return s.runClaimed(c, next, claim)
	}
}

// runClaimed runs the handler under a claim, answers, and remembers the
// answer, or lets the key go when nothing was written.
func (s *Server) runClaimed(c echo.Context, next echo.HandlerFunc, claim db.KeyClaim) error {
	req := c.Request()
	c.SetRequest(req.WithContext(db.WithClaim(req.Context(), claim)))
	rec := &recorder{ResponseWriter: c.Response().Writer}
	c.Response().Writer = rec
	if err := next(c); err != nil {
		c.Error(err)
	}
	c.Response().Writer = rec.ResponseWriter
	// The answer is kept even when the client has gone: its retry wants it.
	ctx, cancel := context.WithTimeout(context.WithoutCancel(req.Context()), 5*time.Second)
	defer cancel()
	status := c.Response().Status
	var err error
	switch {
	case status >= 500 || status == http.StatusTooManyRequests || status == statusClientClosed || rec.overflow:
		err = s.store.ReleaseKey(ctx, claim) // a no-op once the write committed
	default:
		h := c.Response().Header()
		err = s.store.FinishKey(ctx, claim, status, h.Get(echo.HeaderContentType), h.Get(echo.HeaderLocation), rec.buf.Bytes())
	}
	if err != nil {
		s.log.Warn("idempotency key not updated", "request_id", c.Response().Header().Get(echo.HeaderXRequestID), "err", err)
	}
	return nil
}

// replay sends a remembered answer again.
func replay(c echo.Context, st *db.KeyState) error {
	h := c.Response().Header()
	if st.Location != "" {
		h.Set(echo.HeaderLocation, st.Location)
	}
	h.Set(headerReplayed, "true")
	return c.Blob(st.Status, st.ContentType, st.Body)
}

// keyConflict is a 409 naming the Idempotency-Key header.
func keyConflict(reason string) error {
	return &invalidError{status: http.StatusConflict, issues: []FieldIssue{{headerIdempotencyKey, reason}}}
}

// idempotencyKey reads the header: one value of 1 to 255 visible ASCII
// characters, bare or as a structured-field string in double quotes.
func idempotencyKey(vals []string) (string, error) {
	if len(vals) != 1 {
		return "", badRequest(headerIdempotencyKey, "give the header once")
	}
	k := strings.TrimSpace(vals[0])
	if len(k) >= 2 && k[0] == '"' && k[len(k)-1] == '"' {
		k = k[1 : len(k)-1]
	}
	if k == "" || len(k) > 255 {
		return "", unprocessable(FieldIssue{headerIdempotencyKey, "want 1 to 255 visible ASCII characters"})
	}
	for i := 0; i < len(k); i++ {
		if k[i] < 0x21 || k[i] > 0x7e {
			return "", unprocessable(FieldIssue{headerIdempotencyKey, "want 1 to 255 visible ASCII characters"})
		}
	}
	return k, nil
}

// recorder keeps a copy of the answer as it is written.
type recorder struct {
	http.ResponseWriter
	buf      bytes.Buffer
	overflow bool
}

func (r *recorder) Write(p []byte) (int, error) {
	if !r.overflow {
		if r.buf.Len()+len(p) > maxRemembered {
			r.overflow = true
			r.buf = bytes.Buffer{}
		} else {
			r.buf.Write(p)
		}
	}
	return r.ResponseWriter.Write(p)
}
