package db_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"errors"
	"reflect"
	"strings"
	"testing"

	"github.com/google/uuid"
	"github.com/transparency-dev/merkle/proof"
	"github.com/transparency-dev/merkle/rfc6962"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// leafHash is the RFC 9162 section 2.1.1 leaf hash, SHA-256(0x00 || data)
// (SHA-256: FIPS 180-4), computed here with the standard library alone.
func leafHash(data []byte) []byte {
	h := sha256.Sum256(append([]byte{0}, data...))
	return h[:]
}

// TestSignOff: an engineer signs the current revision of a PQR; the sign-off
// holds the leaf hash of exactly that revision (recomputed here from its
// fact, and proved included in the signed checkpoint with the RFC 9162
// inclusion check of github.com/transparency-dev/merkle), reads and lists
// show it, a correction starts unsigned, a stale or repeated or voided
// sign-off is refused, other roles cannot sign, and the sign-off is itself a
// leaf of the log that verify checks.
func TestSignOff(t *testing.T) {
	// Not parallel: it takes table-wide locks (ALTER TABLE, TRUNCATE) that
	// can make another test's write a deadlock victim.
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	eng := actor(site)
	q, err := s.CreateQualificationRecord(ctx, eng, rangesPQRData("PQR-SIGN-1"))
	if err != nil {
		t.Fatal(err)
	}
	for _, role := range []string{db.RoleTechnician, db.RoleAuditor} {
		a := db.Actor{Site: site, Name: "x", Role: role}
		if _, err := s.SignOffRecord(ctx, a, db.SignQualificationRecord, q.ID, db.SignOffRequest{Revision: 1, Statement: "ok"}); !errors.Is(err, db.ErrForbidden) {
			t.Errorf("%s signs: err = %v, want ErrForbidden", role, err)
		}
	}
	so, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, q.ID, db.SignOffRequest{Revision: 1, Statement: "Results reviewed; bend and macro accepted."})
	if err != nil {
		t.Fatal(err)
	}
	fact, err := s.Fact(ctx, db.SignQualificationRecord, site, q.ID, 1)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(fact.Encode(), []byte("PQR-SIGN-1")) || !bytes.Equal(so.SignedHash, leafHash(fact.Encode())) || so.SignedHashOf != "log_leaf" {
		t.Errorf("signed_hash = %x (%s), want the leaf hash %x of revision 1's fact", so.SignedHash, so.SignedHashOf, leafHash(fact.Encode()))
	}
	if err := s.AwaitLogged(ctx, site); err != nil {
		t.Fatal(err)
	}
	inc, err := s.Inclusion(ctx, site, db.SignQualificationRecord, q.ID, 1)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(inc.LeafHash, so.SignedHash) {
		t.Errorf("inclusion proof leaf hash %x, want the signed hash %x", inc.LeafHash, so.SignedHash)
	}
	if err := proof.VerifyInclusion(rfc6962.DefaultHasher, inc.Index, inc.Checkpoint.Size, so.SignedHash, inc.Hashes, inc.Checkpoint.Root); err != nil {
		t.Errorf("the signed hash is not proved in the checkpoint: %v", err)
	}

	got, err := s.QualificationRecord(ctx, site, q.ID, 0)
	if err != nil || got.SignOff == nil || got.SignOff.ID != so.ID || got.SignOff.SignedBy != eng.Name {
		t.Fatalf("read after sign-off: %+v, %v; want sign-off %s by %s", got.SignOff, err, so.ID, eng.Name)
	}
	page, err := s.QualificationRecords(ctx, site, db.QualificationRecordFilter{}, "", 10)
	if err != nil || len(page.Items) != 1 || !reflect.DeepEqual(page.Items[0].SignOff, got.SignOff) {
		t.Errorf("list after sign-off: %+v, %v; want the PQR with its sign-off as the read shows it, %+v", page.Items, err, got.SignOff)
	}

	fixed := q.QualificationRecordData
	fixed.Remarks = "tensile report attached"
	q2, err := s.CorrectQualificationRecord(ctx, eng, q.ID, db.Change{BaseRevision: 1, Reason: "remarks completed"}, fixed)
	if err != nil || q2.SignOff != nil {
		t.Fatalf("correction of a signed PQR: %+v, %v; want revision 2, unsigned", q2.SignOff, err)
	}
	if got, _ := s.QualificationRecord(ctx, site, q.ID, 0); got.SignOff != nil || got.Revision != 2 {
		t.Errorf("current revision after the correction: revision %d signed %v; want 2, unsigned", got.Revision, got.SignOff)
	}
	if page, err := s.QualificationRecords(ctx, site, db.QualificationRecordFilter{}, "", 10); err != nil || len(page.Items) != 1 || page.Items[0].SignOff != nil {
		t.Errorf("list after the correction: %+v, %v; want revision 2, unsigned", page.Items, err)
	}
	revs, err := s.QualificationRecordRevisions(ctx, site, q.ID)
	if err != nil || len(revs) != 2 || revs[0].SignOff == nil || revs[1].SignOff != nil {
		t.Errorf("revisions: %d, %v; want revision 1 signed, revision 2 not", len(revs), err)
	}
	if _, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, q.ID, db.SignOffRequest{Revision: 1, Statement: "again"}); !errors.Is(err, db.ErrConflict) {
		t.Errorf("signing revision 1 once 2 exists: err = %v, want ErrConflict", err)
	}
	so2, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, q.ID, db.SignOffRequest{Revision: 2, Statement: "Re-reviewed after the remarks."})
	if err != nil || bytes.Equal(so2.SignedHash, so.SignedHash) {
		t.Fatalf("signing revision 2: %+v, %v; want a sign-off with revision 2's own hash", so2, err)
	}
	var dup *db.DuplicateError
	if _, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, q.ID, db.SignOffRequest{Revision: 2, Statement: "twice"}); !errors.As(err, &dup) || dup.ExistingID != so2.ID {
		t.Errorf("signing revision 2 twice: err = %v, want DuplicateError naming %s", err, so2.ID)
	}
	if _, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, uuid.New(), db.SignOffRequest{Revision: 1, Statement: "x"}); !errors.Is(err, db.ErrNotFound) {
		t.Errorf("signing an unknown PQR: err = %v, want ErrNotFound", err)
	}
	if _, err := s.VoidQualificationRecord(ctx, eng, q.ID, db.Change{BaseRevision: 2, Reason: "wrong welder"}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, q.ID, db.SignOffRequest{Revision: 3, Statement: "x"}); !errors.Is(err, db.ErrVoided) {
		t.Errorf("signing a voided PQR: err = %v, want ErrVoided", err)
	}

	list, err := s.SignOffs(ctx, site, db.SignOffFilter{RecordID: &q.ID}, "", 10)
	if err != nil || len(list.Items) != 2 || list.Items[0].ID != so.ID || list.Items[1].ID != so2.ID {
		t.Errorf("SignOffs of the PQR = %+v, %v; want both, oldest first", list.Items, err)
	}
	sev, err := s.AuditEvents(ctx, site, db.AuditFilter{Entity: "sign_off"}, "", 10)
	if err != nil || len(sev.Items) != 2 || sev.Items[0].EntityID != so.ID || sev.Items[0].Actor != eng.Name {
		t.Errorf("sign-off log entries = %+v, %v; want one per sign-off", sev.Items, err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Fatalf("verify: %+v, %v", v, err)
	}
	if _, err := superuser(t).Exec(ctx, `ALTER TABLE sign_offs DISABLE TRIGGER sign_offs_append_only;
		UPDATE sign_offs SET statement = 'Not reviewed.' WHERE id = '`+so.ID.String()+`';
		ALTER TABLE sign_offs ENABLE TRIGGER sign_offs_append_only;`); err != nil {
		t.Fatal(err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || v.OK || !strings.Contains(strings.Join(v.Problems, "\n"), so.ID.String()) {
		t.Errorf("verify after editing a sign-off's statement: %+v, %v; want a problem naming it", v, err)
	}
}

// TestSignOffProcedureAndCalibration: the other two kinds sign the same way
// and show it on their reads.
func TestSignOffProcedureAndCalibration(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	eng := actor(site)
	p := mustProcedure(t, s, site)
	if _, err := s.SignOffRecord(ctx, eng, db.SignProcedure, p.ID, db.SignOffRequest{Revision: 1, Statement: "WPS approved for production."}); err != nil {
		t.Fatal(err)
	}
	read, err := s.Procedure(ctx, site, p.ID, 0)
	if err != nil || read.SignOff == nil || read.SignOff.RecordKind != db.SignProcedure {
		t.Errorf("procedure read: %+v, %v; want signed", read.SignOff, err)
	}
	if list, err := s.Procedures(ctx, site, db.ProcedureFilter{}, "", 10); err != nil || len(list.Items) != 1 || !reflect.DeepEqual(list.Items[0].SignOff, read.SignOff) {
		t.Errorf("procedure list: %+v, %v; want the procedure with its sign-off as the read shows it, %+v", list.Items, err, read.SignOff)
	}
	storeFitCoupons(t, s, site, p.ID, 6)
	c, err := s.CreateCalibration(ctx, eng, spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.SignOffRecord(ctx, eng, db.SignCalibration, c.ID, db.SignOffRequest{Revision: 2, Statement: "x"}); !errors.Is(err, db.ErrConflict) {
		t.Errorf("calibration revision 2: err = %v, want ErrConflict (a calibration has revision 1 only)", err)
	}
	if _, err := s.SignOffRecord(ctx, eng, db.SignCalibration, c.ID, db.SignOffRequest{Revision: 1, Statement: "Fit reviewed; residuals acceptable."}); err != nil {
		t.Fatal(err)
	}
	got, err := s.Calibration(ctx, site, c.ID)
	if err != nil || got.SignOff == nil {
		t.Errorf("calibration read: %+v, %v; want signed", got.SignOff, err)
	}
	page, err := s.Calibrations(ctx, site, db.CalibrationFilter{}, "", 10)
	if err != nil || len(page.Items) != 1 || page.Items[0].SignOff == nil {
		t.Errorf("calibration list: %+v, %v; want signed", page.Items, err)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("verify: %+v, %v", v, err)
	}
}
