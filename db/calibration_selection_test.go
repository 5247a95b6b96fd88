package db_test

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"strings"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestCalibrationStoresSelection checks that a calibration stores its
// selection, count and digest instead of its samples, that the digest is
// the SHA-256 (FIPS 180-4, Go's crypto/sha256) of the encoding the README
// defines under "Sample digest", computed here from the stored rows, and
// that reading it back re-derives the fitted samples as of its time: a
// correction and a coupon made after the fit change nothing, while a
// section whose creation time is at or before the fit but which was not
// in the fit (as a late commit would be) makes the check say "differs".
func TestCalibrationStoresSelection(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	pool := s.Pool()
	p := mustProcedure(t, s, site)
	cs := storeFitCoupons(t, s, site, p.ID, 6)
	c, err := s.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}

	// The digest by the README's definition, from the rows as stored.
	h := sha256.New()
	for _, sc := range cs {
		b := append([]byte{}, sc.id[:]...)
		rows, err := pool.Query(ctx, `SELECT id FROM measurements WHERE site = $1 AND coupon_id = $2 ORDER BY id`, site, sc.id)
		if err != nil {
			t.Fatal(err)
		}
		var secs []uuid.UUID
		for rows.Next() {
			var id uuid.UUID
			if err := rows.Scan(&id); err != nil {
				t.Fatal(err)
			}
			secs = append(secs, id)
		}
		rows.Close()
		// coupon revision 1, procedure revision 1, no qualification record (0), the section count
		for _, v := range []uint32{1, 1, 0, uint32(len(secs))} {
			b = binary.BigEndian.AppendUint32(b, v)
		}
		for _, id := range secs {
			b = binary.BigEndian.AppendUint32(append(b, id[:]...), 1)
		}
		h.Write(b)
	}
	if want := hex.EncodeToString(h.Sum(nil)); c.SampleDigest != want || c.SampleCount != len(cs) {
		t.Errorf("digest %s over %d coupons, want %s over %d", c.SampleDigest, c.SampleCount, want, len(cs))
	}
	var inline bool
	var count int
	if err := pool.QueryRow(ctx, `SELECT samples IS NOT NULL OR coupon_ids IS NOT NULL, sample_count FROM calibrations
		WHERE site = $1 AND id = $2`, site, c.ID).Scan(&inline, &count); err != nil || inline || count != len(cs) {
		t.Errorf("stored row: samples or ids inline %v, count %d (err %v); want neither inline and %d", inline, count, err, len(cs))
	}

	// After the fit: a correction and a new coupon of the group are not in it.
	fixed := cs[1].data
	fixed.CurrentA = 172
	if _, err := s.CorrectCoupon(ctx, actor(site), cs[1].id, db.Change{BaseRevision: 1, Reason: "meter re-read"}, fixed); err != nil {
		t.Fatal(err)
	}
	later, err := s.CreateCoupon(ctx, actor(site), fitCoupon(p.ID, 7))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateMeasurement(ctx, actor(site), measurementData(later.ID, "A", "accept")); err != nil {
		t.Fatal(err)
	}
	read, err := s.Calibration(ctx, site, c.ID)
	if err != nil {
		t.Fatal(err)
	}
	if read.SampleCheck == nil || read.SampleCheck.Finding != "matches" || len(read.CouponIDs) != len(cs) ||
		read.Samples.Penetration[1].CurrentA != cs[1].data.CurrentA {
		t.Fatalf("read after later writes: check %+v, %d coupons, coupon 1 at %v A; want matches, %d, %v A",
			read.SampleCheck, len(read.CouponIDs), read.Samples.Penetration[1].CurrentA, len(cs), cs[1].data.CurrentA)
	}

	// A section created before the fit but not in it: the re-derivation differs and says so.
	tx, err := pool.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(ctx, `CREATE TEMP TABLE late ON COMMIT DROP AS
		SELECT * FROM measurements WHERE site = $1 AND coupon_id = $2 LIMIT 1`, site, cs[0].id); err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(ctx, `UPDATE late SET id = gen_random_uuid(), section = 'C', created_at = $1::timestamptz - interval '1 ms'`,
		c.CreatedAt); err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(ctx, `INSERT INTO measurements SELECT * FROM late`); err != nil {
		t.Fatal(err)
	}
	if err := tx.Commit(ctx); err != nil {
		t.Fatal(err)
	}
	read, err = s.Calibration(ctx, site, c.ID)
	if err != nil {
		t.Fatal(err)
	}
	if read.SampleCheck == nil || read.SampleCheck.Finding != "differs" || !strings.Contains(read.SampleCheck.Note, c.SampleDigest) {
		t.Errorf("read after a late section: check %+v; want differs, naming the fitted digest %s", read.SampleCheck, c.SampleDigest)
	}

	// Above InlineSampleLimit a plain read re-derives nothing; check=samples does.
	// (A copy of the row claiming more samples than the selection gives.)
	big := uuid.New()
	if _, err := pool.Exec(ctx, `INSERT INTO calibrations SELECT (jsonb_populate_record(c, jsonb_build_object('id', $3::uuid, 'sample_count', $4::int))).*
		FROM calibrations c WHERE site = $1 AND id = $2`, site, c.ID, big, db.InlineSampleLimit+1); err != nil {
		t.Fatal(err)
	}
	read, err = s.Calibration(ctx, site, big)
	if err != nil {
		t.Fatal(err)
	}
	if read.SampleCheck == nil || read.SampleCheck.Finding != "not_checked" || read.Samples != nil || len(read.CouponIDs) != 0 ||
		!strings.Contains(read.SampleCheck.Note, "check=samples") {
		t.Errorf("plain read of %d samples: check %+v, samples %v, %d ids; want not_checked naming check=samples, none listed",
			db.InlineSampleLimit+1, read.SampleCheck, read.Samples, len(read.CouponIDs))
	}
	read, err = s.CalibrationChecked(ctx, site, big, true)
	if err != nil {
		t.Fatal(err)
	}
	if read.SampleCheck == nil || read.SampleCheck.Finding != "differs" || !strings.Contains(read.SampleCheck.Note, fmt.Sprint(db.InlineSampleLimit+1)) {
		t.Errorf("checked read: %+v; want differs, naming the stored count %d", read.SampleCheck, db.InlineSampleLimit+1)
	}
}
