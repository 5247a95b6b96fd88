package db

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgerrcode"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// KeyLifetime is how long an Idempotency-Key is remembered at least.
const KeyLifetime = 24 * time.Hour

// ErrClaimLost means a write ran under an Idempotency-Key whose claim another
// request took over; the write was rolled back.
var ErrClaimLost = errors.New("the Idempotency-Key was taken over by a retry; this attempt wrote nothing")

// KeyClaim is the right of one request to write under one user's key.
type KeyClaim struct {
	Site, User, Key string
	Token           uuid.UUID
}

// KeyState is what is stored for a key: the request's digest, whether its
// write committed, and the answer once there is one (Status > 0).
type KeyState struct {
	Digest      []byte
	ClaimToken  uuid.UUID
	ClaimedAt   time.Time
	Committed   bool
	Status      int
	ContentType string
	Location    string
	Body        []byte
}

type claimKey struct{}

// WithClaim returns ctx carrying claim: every write transaction run with it
// marks the key committed, and refuses to commit once the claim is lost.
func WithClaim(ctx context.Context, claim KeyClaim) context.Context {
	return context.WithValue(ctx, claimKey{}, claim)
}

// markCommitted runs inside a write transaction started under a claim. It
// needs no answer of its own, so on a pipelined write it leaves with COMMIT:
// the statement itself fails (dividing by the number of keys it marked) when
// the claim is gone, and the failure rolls the write back.
func markCommitted(ctx context.Context, tx pgx.Tx) error {
	c, ok := ctx.Value(claimKey{}).(KeyClaim)
	if !ok {
		return nil
	}
	return queueExecMapped(ctx, tx, func(err error) error {
		var pg *pgconn.PgError
		if errors.As(err, &pg) && pg.Code == pgerrcode.DivisionByZero {
			return fmt.Errorf("%w: %w", ErrConflict, ErrClaimLost)
		}
		return mapError(err)
	}, `WITH marked AS (
			UPDATE idempotency_keys SET committed = true
			WHERE site = $1 AND user_name = $2 AND key = $3 AND claim_token = $4 RETURNING 1)
		SELECT 1 / count(*) FROM marked`, c.Site, c.User, c.Key, c.Token)
}

// ClaimKey claims a user's key for a request with the given digest. When the
// key is already held (by a running, finished or abandoned request) it
// returns that state instead. A key older than KeyLifetime is forgotten first.
func (s *Store) ClaimKey(ctx context.Context, site, user, key string, digest []byte) (KeyClaim, *KeyState, error) {
	claim := KeyClaim{Site: site, User: user, Key: key}
	var err error
	if claim.Token, err = uuid.NewV7(); err != nil {
		return claim, nil, err
	}
	now := s.now()
	var state *KeyState
	err = pgx.BeginFunc(ctx, s.pool, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `DELETE FROM idempotency_keys WHERE site = $1 AND user_name = $2 AND created_at < $3`,
			site, user, now.Add(-KeyLifetime)); err != nil {
			return err
		}
		tag, err := tx.Exec(ctx, `INSERT INTO idempotency_keys (site, user_name, key, request_sha256, created_at, claim_token, claimed_at)
			VALUES ($1, $2, $3, $4, $5, $6, $5) ON CONFLICT DO NOTHING`, site, user, key, digest, now, claim.Token)
		if err != nil || tag.RowsAffected() == 1 {
			return err
		}
		state, err = readKey(ctx, tx, claim)
		return err
	})
	if err != nil {
		return claim, nil, fmt.Errorf("db: claim idempotency key: %w", mapError(err))
	}
	return claim, state, nil
}

// KeyState reads the stored state of a key.
func (s *Store) KeyState(ctx context.Context, claim KeyClaim) (*KeyState, error) {
	st, err := readKey(ctx, s.pool, claim)
	if err != nil {
		return nil, fmt.Errorf("db: read idempotency key: %w", err)
	}
	return st, nil
}

func readKey(ctx context.Context, q querier, c KeyClaim) (*KeyState, error) {
	var st KeyState
	var status *int
	var ct, loc *string
	err := q.QueryRow(ctx, `SELECT request_sha256, claim_token, claimed_at, committed, status, content_type, location, body
		FROM idempotency_keys WHERE site = $1 AND user_name = $2 AND key = $3`, c.Site, c.User, c.Key).
		Scan(&st.Digest, &st.ClaimToken, &st.ClaimedAt, &st.Committed, &status, &ct, &loc, &st.Body)
	if errors.Is(err, pgx.ErrNoRows) {
		return nil, ErrNotFound
	}
	if err != nil {
		return nil, err
	}
	if status != nil {
		st.Status = *status
	}
	if ct != nil {
		st.ContentType = *ct
	}
	if loc != nil {
		st.Location = *loc
	}
	return &st, nil
}

// TakeOver moves an abandoned claim (no answer, nothing committed, held by
// token old) to a new request; it reports false when the key moved on meanwhile.
func (s *Store) TakeOver(ctx context.Context, c KeyClaim, old uuid.UUID) (KeyClaim, bool, error) {
	tok, err := uuid.NewV7()
	if err != nil {
		return c, false, err
	}
	tag, err := s.pool.Exec(ctx, `UPDATE idempotency_keys SET claim_token = $5, claimed_at = $6
		WHERE site = $1 AND user_name = $2 AND key = $3 AND claim_token = $4 AND NOT committed AND status IS NULL`,
		c.Site, c.User, c.Key, old, tok, s.now())
	if err != nil {
		return c, false, fmt.Errorf("db: take over idempotency key: %w", err)
	}
	c.Token = tok
	return c, tag.RowsAffected() == 1, nil
}

// FinishKey stores the answer given under a claim.
func (s *Store) FinishKey(ctx context.Context, c KeyClaim, status int, contentType, location string, body []byte) error {
	_, err := s.pool.Exec(ctx, `UPDATE idempotency_keys SET status = $5, content_type = $6, location = $7, body = $8
		WHERE site = $1 AND user_name = $2 AND key = $3 AND claim_token = $4`,
		c.Site, c.User, c.Key, c.Token, status, contentType, location, body)
	if err != nil {
		return fmt.Errorf("db: store idempotent answer: %w", err)
	}
	return nil
}

// ReleaseKey forgets a claim whose request wrote nothing (it failed before
// its write committed), so a retry runs afresh.
func (s *Store) ReleaseKey(ctx context.Context, c KeyClaim) error {
	_, err := s.pool.Exec(ctx, `DELETE FROM idempotency_keys
		WHERE site = $1 AND user_name = $2 AND key = $3 AND claim_token = $4 AND NOT committed`, c.Site, c.User, c.Key, c.Token)
	if err != nil {
		return fmt.Errorf("db: release idempotency key: %w", err)
	}
	return nil
}
