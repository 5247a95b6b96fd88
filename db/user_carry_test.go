package db_test

import (
	"context"
	"crypto/sha256"
	"errors"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestCreateCarriesUserCheck: a create carries its request's token check in
// the statement that claims the mark. A claim of another user than the
// token's (a role changed since the token was looked up) fails the create
// with ErrUserChanged and leaves nothing written: the mark stays free for
// the next create. Both forms of the statement are tried: a procedure's
// first create (its inputs read) and a later one (its inputs kept, the
// count of judgement changes compared in the same statement).
func TestCreateCarriesUserCheck(t *testing.T) {
	ctx := context.Background()
	s, site := dbtest.Store(t), dbtest.Site(t)
	p := mustProcedure(t, s, site)
	token := "carried-check-token-" + site
	u := db.User{Site: site, Name: "ines", Role: db.RoleTechnician}
	if err := dbtest.Owner(t).PutUser(ctx, u, token); err != nil {
		t.Fatal(err)
	}
	digest := sha256.Sum256([]byte(token))
	claimed := u
	claimed.Role = db.RoleEngineer // not what the token holds
	for _, form := range []string{"inputs read", "inputs kept"} {
		mark := "CARRY-" + form
		wctx, check := db.WithUserCheck(ctx, digest[:], claimed)
		if _, err := s.CreateCoupon(wctx, actor(site), couponData(p.ID, mark)); !errors.Is(err, db.ErrUserChanged) {
			t.Fatalf("%s: a create claiming another user: err = %v, want ErrUserChanged", form, err)
		}
		if check.Confirmed() {
			t.Errorf("%s: the refused check is confirmed", form)
		}
		wctx, check = db.WithUserCheck(ctx, digest[:], u)
		c, err := s.CreateCoupon(wctx, actor(site), couponData(p.ID, mark))
		if err != nil {
			t.Fatalf("%s: the same mark as the token's user: %v (the refused create held it?)", form, err)
		}
		if !check.Confirmed() {
			t.Errorf("%s: the create committed without confirming its user", form)
		}
		if c.Revision != 1 {
			t.Errorf("%s: revision %d, want 1", form, c.Revision)
		}
	}
	var rows, marks int
	if err := s.Pool().QueryRow(ctx, `SELECT (SELECT count(*) FROM coupons WHERE site = $1),
		(SELECT count(*) FROM current_marks WHERE site = $1)`, site).Scan(&rows, &marks); err != nil {
		t.Fatal(err)
	}
	if rows != 2 || marks != 2 {
		t.Errorf("the site holds %d coupon rows and %d marks, want 2 and 2 (the refused creates wrote nothing)", rows, marks)
	}
}
