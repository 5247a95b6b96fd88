package api

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"io"
	"net/http"
	"slices"
	"strings"
	"sync"

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

const (
	ctxUser = "etchlog.user"
	ctxBody = "etchlog.body" // the request body guard read: for the compiled schema check and to run a request again
)

// requireRole authenticates the bearer token and admits only the given
// roles. A call of the lab pages, made in process, carries its signed-in
// user on the request context instead (lab.WithUser; the lab checked the
// session): a context value cannot come over the network. On a route whose
// every answer but a refusal follows a write (keptUser), the token's user
// may be taken from the users kept in the process, confirmed by that write
// (admitKept); elsewhere the token is looked up for every request.
func (s *Server) requireRole(roles []string, keptUser bool) echo.MiddlewareFunc {
	return func(next echo.HandlerFunc) echo.HandlerFunc {
		return func(c echo.Context) error {
			if u, inProcess := lab.UserOf(c.Request().Context()); inProcess {
				return s.admit(c, roles, u, next)
			}
			digest, err := bearerDigest(c)
			if err != nil {
				return err
			}
			if keptUser && c.Request().Header.Get(headerIdempotencyKey) == "" { // a key's claim is written before the write
				if u, ok := s.users.get(digest); ok && slices.Contains(roles, u.Role) {
					if answered, err := s.admitKept(c, roles, digest, u, next); answered {
						return err
					}
				}
			}
			u, err := s.lookUpUser(c, digest)
			if err != nil {
				return err
			}
			return s.admit(c, roles, u, next)
		}
	}
}

// admit lets user u make the request when its role is one of roles and
// the per-user limit allows.
func (s *Server) admit(c echo.Context, roles []string, u db.User, next echo.HandlerFunc) error {
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

// admitKept runs the request as u, the user a lookup of the token found
// before, without looking the token up: the request's write looks it up
// again in its own first round trip and commits only when it finds u
// (db.WithUserCheck), so a change of the user committed before the request
// started (revoked, another role, a new token) is seen as a lookup here
// would see it. When no write confirmed u (one found another user, or the
// request was refused before writing), the token is looked up afresh: a
// refusal given to the same user stands; otherwise nothing was written or
// answered, and admitKept answers false with the request as it came in (its
// body to be read again), for requireRole to run it on the fresh lookup.
func (s *Server) admitKept(c echo.Context, roles []string, digest [sha256.Size]byte, u db.User, next echo.HandlerFunc) (bool, error) {
	req := c.Request()
	ctx, check := db.WithUserCheck(req.Context(), digest[:], u)
	c.SetRequest(req.WithContext(ctx))
	err := s.admit(c, roles, u, next)
	if check.Confirmed() || c.Response().Committed {
		return true, err
	}
	s.users.drop(digest)
	if !errors.Is(err, db.ErrUserChanged) {
		if fresh, ferr := s.lookUpUser(c, digest); ferr == nil && fresh == u {
			return true, err
		}
	}
	if body, ok := c.Get(ctxBody).([]byte); ok {
		req.Body = io.NopCloser(bytes.NewReader(body))
	}
	c.SetRequest(req)
	c.Set(ctxUser, nil)
	return false, nil
}

// bearerDigest reads the request's bearer token and returns its SHA-256 digest.
func bearerDigest(c echo.Context) ([sha256.Size]byte, error) {
	h := c.Request().Header.Get(echo.HeaderAuthorization)
	// The scheme name is case-insensitive (RFC 9110, section 11.1).
	scheme, token, _ := strings.Cut(h, " ")
	token = strings.TrimSpace(token)
	if !strings.EqualFold(scheme, "Bearer") || token == "" {
		c.Response().Header().Set(echo.HeaderWWWAuthenticate, `Bearer realm="etchlog"`)
		return [sha256.Size]byte{}, echo.NewHTTPError(http.StatusUnauthorized, "send Authorization: Bearer <token>")
	}
	return sha256.Sum256([]byte(token)), nil
}

// lookUpUser finds the user holding the token of digest and keeps it for
// the routes that confirm it in their write.
func (s *Server) lookUpUser(c echo.Context, digest [sha256.Size]byte) (db.User, error) {
	u, err := s.store.UserByDigest(c.Request().Context(), digest[:])
	if errors.Is(err, db.ErrNotFound) {
		c.Response().Header().Set(echo.HeaderWWWAuthenticate, `Bearer realm="etchlog", error="invalid_token"`)
		return db.User{}, echo.NewHTTPError(http.StatusUnauthorized, "unknown token")
	}
	if kept, ok := s.users.get(digest); err == nil && (!ok || kept != u) {
		s.users.put(digest, u)
	}
	return u, err
}

// keptUsers maps a token's SHA-256 digest to the user its latest lookup
// found. An entry is never trusted by age: a request let in on it is
// confirmed by its write (admitKept). The zero value is empty.
type keptUsers struct {
	mu sync.RWMutex
	m  map[[sha256.Size]byte]db.User
}

// keptUsersLimit bounds the entries: past it, all are dropped.
const keptUsersLimit = 4096

func (k *keptUsers) get(d [sha256.Size]byte) (db.User, bool) {
	k.mu.RLock()
	defer k.mu.RUnlock()
	u, ok := k.m[d]
	return u, ok
}

func (k *keptUsers) put(d [sha256.Size]byte, u db.User) {
	k.mu.Lock()
	defer k.mu.Unlock()
	if k.m == nil || len(k.m) >= keptUsersLimit {
		k.m = map[[sha256.Size]byte]db.User{}
	}
	k.m[d] = u
}

func (k *keptUsers) drop(d [sha256.Size]byte) {
	k.mu.Lock()
	defer k.mu.Unlock()
	delete(k.m, d)
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
