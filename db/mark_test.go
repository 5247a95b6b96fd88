package db_test

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"sync"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestMarksStayUnique: a correction cannot give a coupon another current
// coupon's mark, nor a PQR another's number (the refusal names the mark and
// the record holding it); a mark freed by a correction can be used again, a
// voided record's cannot; current_marks stays exactly the marks of the
// current records.
func TestMarksStayUnique(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	a := actor(site)
	p := mustProcedure(t, s, site)
	ca, err := s.CreateCoupon(ctx, a, couponData(p.ID, "C-A"))
	if err != nil {
		t.Fatal(err)
	}
	cb, err := s.CreateCoupon(ctx, a, couponData(p.ID, "C-B"))
	if err != nil {
		t.Fatal(err)
	}
	wantTaken := func(what string, err error, mark string, holder uuid.UUID) {
		t.Helper()
		var dup *db.DuplicateError
		if !errors.As(err, &dup) || !errors.Is(err, db.ErrConflict) || !strings.Contains(dup.Reason, mark) || dup.ExistingID != holder {
			t.Errorf("%s: err = %v, want DuplicateError for %q held by %s", what, err, mark, holder)
		}
	}
	_, err = s.CreateCoupon(ctx, a, couponData(p.ID, "C-A"))
	wantTaken("create with C-A", err, "C-A", ca.ID)
	dup := cb.CouponData
	dup.CouponMark = "C-A"
	_, err = s.CorrectCoupon(ctx, a, cb.ID, db.Change{BaseRevision: 1, Reason: "mark mistyped"}, dup)
	wantTaken("correct C-B to C-A", err, "C-A", ca.ID)

	moved := ca.CouponData
	moved.CouponMark = "C-A2"
	if _, err := s.CorrectCoupon(ctx, a, ca.ID, db.Change{BaseRevision: 1, Reason: "mark re-stamped"}, moved); err != nil {
		t.Fatal(err)
	}
	moved.VoltageV = 21.5 // the same mark again in a later correction is no conflict with itself
	if _, err := s.CorrectCoupon(ctx, a, ca.ID, db.Change{BaseRevision: 2, Reason: "voltage re-read"}, moved); err != nil {
		t.Fatalf("correction keeping the mark: %v", err)
	}
	if _, err := s.CorrectCoupon(ctx, a, cb.ID, db.Change{BaseRevision: 1, Reason: "mark mistyped"}, dup); err != nil {
		t.Fatalf("C-B takes the freed C-A: %v", err)
	}
	if _, err := s.VoidCoupon(ctx, a, cb.ID, db.Change{BaseRevision: 2, Reason: "cut from scrap"}); err != nil {
		t.Fatal(err)
	}
	_, err = s.CreateCoupon(ctx, a, couponData(p.ID, "C-A"))
	wantTaken("create with the voided coupon's C-A", err, "C-A", cb.ID)

	qa, err := s.CreateQualificationRecord(ctx, a, rangesPQRData("PQR-A"))
	if err != nil {
		t.Fatal(err)
	}
	qb, err := s.CreateQualificationRecord(ctx, a, rangesPQRData("PQR-B"))
	if err != nil {
		t.Fatal(err)
	}
	qdup := qb.QualificationRecordData
	qdup.RecordNumber = "PQR-A"
	_, err = s.CorrectQualificationRecord(ctx, a, qb.ID, db.Change{BaseRevision: 1, Reason: "number mistyped"}, qdup)
	wantTaken("correct PQR-B to PQR-A", err, "PQR-A", qa.ID)
	_, err = s.CreateQualificationRecord(ctx, a, rangesPQRData("PQR-A"))
	wantTaken("create PQR-A again", err, "PQR-A", qa.ID)
	if _, err := s.CreateCoupon(ctx, a, couponData(p.ID, "PQR-A")); err != nil {
		t.Errorf("a coupon mark equal to a PQR number: %v (marks are unique per kind)", err)
	}
	if diffs, err := s.RecheckMarks(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("RecheckMarks = %v, %v; want no difference", diffs, err)
	}
}

// TestMarkRace: writers racing for one mark, by create and by correction,
// each in its own transaction: exactly one wins, the others are told who.
func TestMarkRace(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	a := actor(site)
	p := mustProcedure(t, s, site)
	const writers = 8
	for round := 0; round < 5; round++ {
		mark := fmt.Sprintf("RACE-%d", round)
		// Half the writers create a coupon with the mark, half correct an existing one to it.
		others := make([]db.Coupon, writers/2)
		for i := range others {
			c, err := s.CreateCoupon(ctx, a, couponData(p.ID, fmt.Sprintf("R%d-%d", round, i)))
			if err != nil {
				t.Fatal(err)
			}
			others[i] = c
		}
		var wg sync.WaitGroup
		won := make(chan uuid.UUID, writers)
		lost := make(chan error, writers)
		start := make(chan struct{})
		for i := 0; i < writers; i++ {
			wg.Add(1)
			go func(i int) {
				defer wg.Done()
				<-start
				var c db.Coupon
				var err error
				if i%2 == 0 {
					c, err = s.CreateCoupon(ctx, a, couponData(p.ID, mark))
				} else {
					d := others[i/2].CouponData
					d.CouponMark = mark
					c, err = s.CorrectCoupon(ctx, a, others[i/2].ID, db.Change{BaseRevision: 1, Reason: "re-stamped"}, d)
				}
				if err != nil {
					lost <- err
					return
				}
				won <- c.ID
			}(i)
		}
		close(start)
		wg.Wait()
		close(won)
		close(lost)
		var winners []uuid.UUID
		for id := range won {
			winners = append(winners, id)
		}
		if len(winners) != 1 {
			t.Fatalf("round %d: %d writers won mark %s, want exactly 1", round, len(winners), mark)
		}
		for err := range lost {
			var dup *db.DuplicateError
			if !errors.As(err, &dup) || dup.ExistingID != winners[0] {
				t.Errorf("round %d: loser err = %v, want DuplicateError naming %s", round, err, winners[0])
			}
		}
	}
	if diffs, err := s.RecheckMarks(ctx, site); err != nil || len(diffs) != 0 {
		t.Errorf("RecheckMarks = %v, %v; want no difference", diffs, err)
	}
}
