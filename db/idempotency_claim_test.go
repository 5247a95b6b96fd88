package db_test

import (
	"context"
	"errors"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestClaimLostWritesNothing runs a create under an Idempotency-Key claim
// that a retry has taken over: the write must fail with ErrClaimLost and
// leave no coupon, while the same create under the live claim commits and
// marks the key committed. (The check leaves with COMMIT on a pipelined
// write, so this is what proves it still stops the commit.)
func TestClaimLostWritesNothing(t *testing.T) {
	ctx := context.Background()
	s := dbtest.Store(t)
	site := dbtest.Site(t)
	p := mustProcedure(t, s, site)
	claim, st, err := s.ClaimKey(ctx, site, "tester", "key-1", []byte("digest"))
	if err != nil || st != nil {
		t.Fatalf("claim: %v %v", st, err)
	}
	retry, ok, err := s.TakeOver(ctx, claim, claim.Token)
	if err != nil || !ok {
		t.Fatalf("take over: %v %v", ok, err)
	}
	_, err = s.CreateCoupon(db.WithClaim(ctx, claim), actor(site), couponData(p.ID, "CL-1"))
	if !errors.Is(err, db.ErrClaimLost) || !errors.Is(err, db.ErrConflict) {
		t.Fatalf("create under a lost claim: %v, want ErrClaimLost", err)
	}
	page, err := s.Coupons(ctx, site, db.CouponFilter{CouponMark: "CL-1"}, "", 10)
	if err != nil || len(page.Items) != 0 {
		t.Fatalf("a write under a lost claim left %d coupons (%v)", len(page.Items), err)
	}
	if _, err := s.CreateCoupon(db.WithClaim(ctx, retry), actor(site), couponData(p.ID, "CL-1")); err != nil {
		t.Fatalf("create under the live claim: %v", err)
	}
	st, err = s.KeyState(ctx, retry)
	if err != nil || !st.Committed {
		t.Fatalf("key after the write: %+v %v", st, err)
	}
}
