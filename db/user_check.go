package db

import (
	"context"
	"errors"
	"sync/atomic"

	"github.com/jackc/pgx/v5"
)

// A request may be let in on the user its token was found to hold earlier
// (kept in the api process), instead of looking the token up again in a
// round trip of its own, when the user is confirmed before anything is
// written: WithUserCheck puts that user on the request's context, and the
// first write transaction made with it (Store.tx) runs the very lookup
// UserByToken runs as its first statement, in the round trip that carries
// BEGIN and the write's own first statements. That statement starts after
// the request did, so it sees every change of users committed before the
// request started, as a lookup at the start would. The write commits only
// when the statement found exactly the user the request was let in as;
// otherwise it fails with ErrUserChanged, before COMMIT, having written
// nothing, and the caller looks the token up afresh.

// ErrUserChanged fails a write made for a user that no longer holds the
// request's token as it did when it was let in (revoked, another role, a
// new token).
var ErrUserChanged = errors.New("the token's user changed since the request was let in")

// userByTokenSQL finds the user holding a token's digest ($1): the token
// must be on the user's latest revision, and the user not revoked.
const userByTokenSQL = `
		SELECT site, name, role FROM api_users u
		WHERE token_sha256 = $1 AND NOT voided
		  AND NOT EXISTS (SELECT 1 FROM api_users l WHERE l.id = u.id AND l.revision > u.revision)`

// UserCheck is the user a request was let in as on a kept lookup of its
// token, to be confirmed by the request's first write.
type UserCheck struct {
	digest    []byte
	user      User
	confirmed atomic.Bool
}

type userCheckKey struct{}

// WithUserCheck returns ctx carrying the claim that the token whose SHA-256
// digest is digest belongs to u, and the check that records whether a
// write confirmed it.
func WithUserCheck(ctx context.Context, digest []byte, u User) (context.Context, *UserCheck) {
	c := &UserCheck{digest: digest, user: u}
	return context.WithValue(ctx, userCheckKey{}, c), c
}

// Confirmed reports whether a write made with the check's context found
// the token's user to be the one claimed (a write that commits always has).
func (c *UserCheck) Confirmed() bool { return c.confirmed.Load() }

// userCheckSQL is userByTokenSQL's lookup made a condition of the write: it
// answers one row when the token ($1) is held by exactly the claimed user
// ($2 site, $3 name, $4 role), and otherwise fails with SQLSTATE
// refuseUserChanged, aborting the transaction there (etchlog_refuse,
// migration 000050), so no COMMIT sent behind it in the same round trip
// can take effect.
const userCheckSQL = `WITH found AS (` + userByTokenSQL + `)
		SELECT CASE WHEN (SELECT count(*) FROM found) = 1
		             AND EXISTS (SELECT 1 FROM found WHERE site = $2 AND name = $3 AND role = $4)
		       THEN 1 ELSE etchlog_refuse('` + refuseUserChanged + `', 'the token''s user changed') END`

// refuseUserChanged is the SQLSTATE of userCheckSQL's refusal (mapError
// turns it into ErrUserChanged).
const refuseUserChanged = "EL001"

// queueUserCheck queues, on a new write transaction, the check that the
// token of ctx's unconfirmed UserCheck is held by exactly the claimed user:
// the statement itself fails the write otherwise (ErrUserChanged), so the
// check needs no round trip of its own before COMMIT. A check already
// confirmed by an earlier write of the request is not repeated.
func queueUserCheck(ctx context.Context, tx pgx.Tx) error {
	c := pendingUserCheck(ctx)
	if c == nil {
		return nil
	}
	u := c.user
	return queueEnforced(ctx, tx, c.confirm, userCheckSQL, c.digest, u.Site, u.Name, u.Role)
}

// pendingUserCheck is ctx's UserCheck when it is not yet confirmed, else nil.
func pendingUserCheck(ctx context.Context) *UserCheck {
	c, ok := ctx.Value(userCheckKey{}).(*UserCheck)
	if !ok || c.Confirmed() {
		return nil
	}
	return c
}

// confirm reads userCheckSQL's one row, which it answers only for the
// claimed user, and records the user as confirmed.
func (c *UserCheck) confirm(rows pgx.Rows) error {
	n, err := pgx.CollectOneRow(rows, pgx.RowTo[int64])
	if rows.Err() != nil {
		return nil // the statement's own error is reported
	}
	if err != nil {
		return err
	}
	if n != 1 {
		return ErrUserChanged
	}
	c.confirmed.Store(true)
	return nil
}

// confirmLookup reads the rows of userByTokenSQL (a read's batch runs the
// lookup itself): ErrUserChanged unless they are exactly the claimed user,
// whom it then records as confirmed.
func (c *UserCheck) confirmLookup(rows pgx.Rows) error {
	found, err := pgx.CollectRows(rows, pgx.RowToStructByName[User])
	if rows.Err() != nil {
		return nil // the statement's own error is reported
	}
	if err != nil {
		return err
	}
	if len(found) != 1 || found[0] != c.user {
		return ErrUserChanged
	}
	c.confirmed.Store(true)
	return nil
}
