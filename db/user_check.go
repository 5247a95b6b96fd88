package db

import (
	"context"
	"errors"
	"strconv"
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
var userByTokenSQL = userByToken(1)

// userByToken is userByTokenSQL with the digest in parameter $digest.
func userByToken(digest int) string {
	return `
		SELECT site, name, role FROM api_users u
		WHERE token_sha256 = $` + strconv.Itoa(digest) + ` AND NOT voided
		  AND NOT EXISTS (SELECT 1 FROM api_users l WHERE l.id = u.id AND l.revision > u.revision)`
}

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
var userCheckSQL = `WITH ` + userCheckCTEs(1, 2) + `
		SELECT ok FROM checked`

// userCheckCTEs are userCheckSQL's lookup and condition as the CTEs found
// and checked (one row, one column: ok, 1) of a longer statement, with the
// digest in parameter $digest and the claimed user's site, name and role in
// $user, $user+1 and $user+2. A write of the statement that reads checked
// cannot write before the check has passed.
func userCheckCTEs(digest, user int) string {
	site, name, role := "$"+strconv.Itoa(user), "$"+strconv.Itoa(user+1), "$"+strconv.Itoa(user+2)
	return `found AS (` + userByToken(digest) + `),
		checked AS (SELECT CASE WHEN count(*) = 1 AND bool_and(site = ` + site + ` AND name = ` + name + ` AND role = ` + role + `)
		             THEN 1 ELSE etchlog_refuse('` + refuseUserChanged + `', 'the token''s user changed') END AS ok
		    FROM found)`
}

// refuseUserChanged is the SQLSTATE of userCheckSQL's refusal (mapError
// turns it into ErrUserChanged).
const refuseUserChanged = "EL001"

// A write may carry its request's token check inside a statement of its
// own instead of the check's own statement (CreateCoupon: in the claim of
// the mark, one statement fewer a create): its context says so
// (carryUserCheck), Store.tx queues no check before the steps, and the step
// that builds the carrying statement takes the check (carriedUserCheck).
// Should no step take it, Store.tx queues the check after the steps, still
// before COMMIT: a write never commits with its token unchecked.

type carryKey struct{}

// carryUserCheck returns ctx saying that a step of its write carries the
// token check in its own statement.
func carryUserCheck(ctx context.Context) context.Context {
	return context.WithValue(ctx, carryKey{}, true)
}

// carriesUserCheck reports whether ctx says so.
func carriesUserCheck(ctx context.Context) bool {
	v, _ := ctx.Value(carryKey{}).(bool)
	return v
}

// carriedUserCheck returns, to a step about to queue a statement carrying
// it on tx, ctx's unconfirmed token check, and records on tx that it was
// taken; nil when ctx has none to carry.
func carriedUserCheck(ctx context.Context, tx pgx.Tx) *UserCheck {
	t, ok := tx.(*pipeTx)
	c := pendingUserCheck(ctx)
	if !ok || c == nil || !carriesUserCheck(ctx) {
		return nil
	}
	t.userChecked = true
	return c
}

// args are the check's arguments in userCheckCTEs' order: the digest, then
// the claimed user's site, name and role.
func (c *UserCheck) args() []any {
	return []any{c.digest, c.user.Site, c.user.Name, c.user.Role}
}

// confirmRow reads the one row of a statement holding the check
// (userCheckSQL, or a create's statement carrying it), which it answers
// only for the claimed user, and records the user as confirmed: the
// check's ok first, then, when chk is not nil, the count of judgement
// changes chk compares (as chk.unchanged reads it alone).
func (c *UserCheck) confirmRow(chk *judgedCheck) func(pgx.Rows) error {
	return func(rows pgx.Rows) error {
		var ok, changes int64
		dst := []any{&ok}
		if chk != nil {
			dst = append(dst, &changes)
		}
		_, err := pgx.CollectOneRow(rows, func(r pgx.CollectableRow) (struct{}, error) { return struct{}{}, r.Scan(dst...) })
		switch {
		case rows.Err() != nil:
			return nil // the statement's own error is reported
		case err != nil:
			return err
		case ok != 1:
			return ErrUserChanged
		}
		c.confirmed.Store(true)
		if chk != nil && changes != chk.changes {
			return errJudgementChanged
		}
		return nil
	}
}

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
	return queueEnforced(ctx, tx, c.confirmRow(nil), userCheckSQL, c.args()...)
}

// pendingUserCheck is ctx's UserCheck when it is not yet confirmed, else nil.
func pendingUserCheck(ctx context.Context) *UserCheck {
	c, ok := ctx.Value(userCheckKey{}).(*UserCheck)
	if !ok || c.Confirmed() {
		return nil
	}
	return c
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
