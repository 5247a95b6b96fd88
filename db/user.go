package db

import (
	"bytes"
	"context"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Roles an API user may hold. Technicians record coupons and measurements,
// engineers also manage procedures and qualification records, auditors only read.
const (
	RoleTechnician = "technician"
	RoleEngineer   = "engineer"
	RoleAuditor    = "auditor"
)

// User is an API user of one site.
type User struct {
	Site string `db:"site" json:"site"`
	Name string `db:"name" json:"name"`
	Role string `db:"role" json:"role"`
}

// users holds one revision per change of a user: created, given a new role or
// token, or revoked (voided). Only an administrator writes it (as the owner
// role); the service reads it. Each revision is an audit event like a record's.
var users = table{name: "api_users", entity: "user", fields: []string{"name", "role", "token_sha256"}}

// UserAdmin is the actor named on user changes made from the command line.
const UserAdmin = "etchlog-admin"

// NewToken returns a random bearer token (32 bytes, URL-safe base64).
func NewToken() (string, error) {
	b := make([]byte, 32)
	if _, err := rand.Read(b); err != nil {
		return "", err
	}
	return base64.RawURLEncoding.EncodeToString(b), nil
}

func tokenDigest(token string) []byte {
	d := sha256.Sum256([]byte(token))
	return d[:]
}

// PutUser creates a user, or gives an existing one a new role and token as its
// next revision (a token is never reused: a role change comes with a new one).
// Putting the role and token a user already holds changes nothing. Only the
// token's SHA-256 digest is stored. It needs a store opened with OpenOwner.
func (s *Store) PutUser(ctx context.Context, u User, token string) error {
	if len(token) < 16 {
		return &FieldError{Field: "token", Reason: "must be at least 16 characters"}
	}
	digest := tokenDigest(token)
	err := s.tx(ctx, func(tx pgx.Tx) error {
		var m Meta
		var role string
		var held []byte
		err := tx.QueryRow(ctx, `
			SELECT id, revision, voided, role, token_sha256 FROM api_users
			WHERE site = $1 AND name = $2 ORDER BY revision DESC LIMIT 1 FOR UPDATE`, u.Site, u.Name).
			Scan(&m.ID, &m.Revision, &m.Voided, &role, &held)
		switch {
		case errors.Is(err, pgx.ErrNoRows):
			if m.ID, err = uuid.NewV7(); err != nil {
				return err
			}
		case err != nil:
			return err
		case !m.Voided && role == u.Role && bytes.Equal(held, digest):
			return nil // already so
		default:
			m.Reason = fmt.Sprintf("role %s, new token (was %s)", u.Role, role)
			if m.Voided {
				m.Reason = fmt.Sprintf("restored as %s with a new token", u.Role)
			}
		}
		m.Site, m.Revision, m.CreatedAt, m.CreatedBy, m.Voided = u.Site, m.Revision+1, s.now(), UserAdmin, false
		action := actionCreate
		if m.Revision > 1 {
			action = actionCorrect
		}
		if err := users.writeRevision(ctx, m, []any{u.Name, u.Role, digest})(tx); err != nil {
			return err
		}
		return s.logged(ctx, users, m, action)(tx)
	})
	if err != nil {
		return fmt.Errorf("db: put user %s: %w", u.Name, mapError(err))
	}
	return nil
}

// UserByToken finds the user holding a bearer token: the token must be on the
// user's latest revision, and the user not revoked.
func (s *Store) UserByToken(ctx context.Context, token string) (User, error) {
	return s.UserByDigest(ctx, tokenDigest(token))
}

// UserByDigest is UserByToken for the token's SHA-256 digest.
func (s *Store) UserByDigest(ctx context.Context, digest []byte) (User, error) {
	rows, _ := s.pool.Query(ctx, userByTokenSQL, digest)
	u, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[User])
	if errors.Is(err, pgx.ErrNoRows) {
		return User{}, ErrNotFound
	}
	return u, err
}
