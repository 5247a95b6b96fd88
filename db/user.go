package db

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"fmt"

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

// PutUser creates a user, or replaces the role and token of an existing one.
// Only the token's SHA-256 digest is stored.
func (s *Store) PutUser(ctx context.Context, u User, token string) error {
	if len(token) < 16 {
		return &FieldError{Field: "token", Reason: "must be at least 16 characters"}
	}
	_, err := s.pool.Exec(ctx, `
		INSERT INTO api_users (site, name, role, token_sha256, created_at)
		VALUES ($1, $2, $3, $4, $5)
		ON CONFLICT (site, name) DO UPDATE SET role = EXCLUDED.role, token_sha256 = EXCLUDED.token_sha256`,
		u.Site, u.Name, u.Role, tokenDigest(token), s.now())
	if err != nil {
		return fmt.Errorf("db: put user %s: %w", u.Name, mapError(err))
	}
	return nil
}

// UserByToken finds the user holding a bearer token.
func (s *Store) UserByToken(ctx context.Context, token string) (User, error) {
	rows, _ := s.pool.Query(ctx, `SELECT site, name, role FROM api_users WHERE token_sha256 = $1`, tokenDigest(token))
	u, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[User])
	if errors.Is(err, pgx.ErrNoRows) {
		return User{}, ErrNotFound
	}
	return u, err
}
