package db

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
)

// Session is a signed-in person of the lab pages. ID is the secret the
// browser holds (its cookie); the database keeps only its SHA-256.
type Session struct {
	ID      string
	User    User
	Expires time.Time
}

// SessionLength is how long a session lasts after signing in: a shift.
const SessionLength = 12 * time.Hour

// sessionDigest is the stored form of a session id.
func sessionDigest(id string) []byte {
	d := sha256.Sum256([]byte(id))
	return d[:]
}

// OpenSession signs a user in with their bearer token: it checks the token
// like the API does (latest revision, not revoked) and opens a session of
// SessionLength under a fresh random 256-bit id. An unknown token is
// ErrNotFound.
func (s *Store) OpenSession(ctx context.Context, token string) (Session, error) {
	var u User
	var revision int
	err := s.pool.QueryRow(ctx, `
		SELECT site, name, role, revision FROM api_users u
		WHERE token_sha256 = $1 AND NOT voided
		  AND NOT EXISTS (SELECT 1 FROM api_users l WHERE l.id = u.id AND l.revision > u.revision)`,
		tokenDigest(token)).Scan(&u.Site, &u.Name, &u.Role, &revision)
	if errors.Is(err, pgx.ErrNoRows) {
		return Session{}, ErrNotFound
	}
	if err != nil {
		return Session{}, fmt.Errorf("db: open session: %w", mapError(err))
	}
	b := make([]byte, 32)
	if _, err := rand.Read(b); err != nil {
		return Session{}, err
	}
	now := s.now()
	ses := Session{ID: base64.RawURLEncoding.EncodeToString(b), User: u, Expires: now.Add(SessionLength)}
	if _, err := s.pool.Exec(ctx, `
		INSERT INTO lab_sessions (id_sha256, site, user_name, user_revision, created_at, expires_at)
		VALUES ($1, $2, $3, $4, $5, $6)`,
		sessionDigest(ses.ID), u.Site, u.Name, revision, now, ses.Expires); err != nil {
		return Session{}, fmt.Errorf("db: open session: %w", mapError(err))
	}
	return ses, nil
}

// SessionUser returns the user of a session that is open: not expired, not
// signed out, and opened under the user's latest revision (a new token, a
// new role or a revocation ends every session opened before it). Anything
// else is ErrNotFound.
func (s *Store) SessionUser(ctx context.Context, id string) (User, error) {
	var u User
	err := s.pool.QueryRow(ctx, `
		SELECT u.site, u.name, u.role FROM lab_sessions ses
		JOIN api_users u ON u.site = ses.site AND u.name = ses.user_name AND u.revision = ses.user_revision
		WHERE ses.id_sha256 = $1 AND ses.expires_at > $2 AND NOT u.voided
		  AND NOT EXISTS (SELECT 1 FROM api_users l WHERE l.id = u.id AND l.revision > u.revision)
		  AND NOT EXISTS (SELECT 1 FROM lab_sign_outs o WHERE o.site = ses.site AND o.session_sha256 = ses.id_sha256)`,
		sessionDigest(id), s.now()).Scan(&u.Site, &u.Name, &u.Role)
	if errors.Is(err, pgx.ErrNoRows) {
		return User{}, ErrNotFound
	}
	if err != nil {
		return User{}, fmt.Errorf("db: session: %w", mapError(err))
	}
	return u, nil
}

// EndSession signs a session out for good (a row of lab_sign_outs). Ending
// an unknown or already ended session does nothing.
func (s *Store) EndSession(ctx context.Context, id string) error {
	_, err := s.pool.Exec(ctx, `
		INSERT INTO lab_sign_outs (site, session_sha256, signed_out_at)
		SELECT site, id_sha256, $2 FROM lab_sessions WHERE id_sha256 = $1
		ON CONFLICT (site, session_sha256) DO NOTHING`, sessionDigest(id), s.now())
	if err != nil {
		return fmt.Errorf("db: end session: %w", mapError(err))
	}
	return nil
}
