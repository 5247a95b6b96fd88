package db_test

import (
	"context"
	"testing"

	"github.com/google/uuid"

	"etchlog/db/dbtest"
)

// TestUUIDParameters checks that a uuid.UUID parameter reaches PostgreSQL
// as the same UUID whatever the parameter's type: as uuid, and as text in
// the canonical hyphenated lower-case form (RFC 9562, section 4), which
// the advisory lock keys are made of, as a string id gives it.
func TestUUIDParameters(t *testing.T) {
	s, ctx := dbtest.Store(t), context.Background()
	u := uuid.MustParse("01a23698-E026-7ac1-abeb-48b527058877")
	var asUUID uuid.UUID
	var asText, fromString string
	var same bool
	if err := s.Pool().QueryRow(ctx, `SELECT $1::uuid, $2::uuid = $3::uuid`, u, u, u.String()).Scan(&asUUID, &same); err != nil {
		t.Fatal(err)
	}
	// A parameter whose type is text, as in 'etchlog-record:' || $1::text.
	if err := s.Pool().QueryRow(ctx, `SELECT 'k:' || $1::text, 'k:' || $2::text`, u, u.String()).Scan(&asText, &fromString); err != nil {
		t.Fatal(err)
	}
	if asUUID != u || asText != "k:01a23698-e026-7ac1-abeb-48b527058877" || asText != fromString || !same {
		t.Errorf("uuid parameter read back as %s, %q (string parameter %q, equal %v), want %s", asUUID, asText, fromString, same, u)
	}
	// Through a pointer (an optional link such as a coupon's procedure_id),
	// and a nil pointer as NULL.
	var ptrUUID uuid.UUID
	var ptrText string
	var null bool
	var none *uuid.UUID
	if err := s.Pool().QueryRow(ctx, `SELECT $1::uuid, 'k:' || $2::uuid::text, $3::uuid IS NULL`, &u, &u, none).Scan(&ptrUUID, &ptrText, &null); err != nil {
		t.Fatal(err)
	}
	if ptrUUID != u || ptrText != asText || !null {
		t.Errorf("*uuid.UUID parameter read back as %s, %q (nil pointer NULL: %v), want %s", ptrUUID, ptrText, null, u)
	}
	var arr []uuid.UUID
	if err := s.Pool().QueryRow(ctx, `SELECT $1::uuid[]`, []uuid.UUID{u, uuid.Nil}).Scan(&arr); err != nil || len(arr) != 2 || arr[0] != u || arr[1] != uuid.Nil {
		t.Errorf("uuid array parameter read back as %v (err %v)", arr, err)
	}
}
