package db_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// The endpoint's export (Store.ExportTo) writes coupon records and leaves
// straight from the rows' bytes. The reference for every byte is
// encoding/json (the Go standard library) encoding each {"kind", "record"}
// line from the values Store.Export hands out: the leaf as
// logfmt.ExportLeaf with its fields decoded, the form the export's lines are
// defined by and the offline verifier reads. The two must give the same
// file: on a site with every kind of fact the tamper fixture logs, texts
// JSON escapes, leaves of a kind and of a version this build does not
// know, a leaf whose row is gone, and enough leaves to pass through several
// batches; once with the rows read beside the leaves on a second
// connection, once (a kind with leaves of two versions) through the cursors
// of one connection.
func TestExportToMatchesEncodingJSON(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	s := dbtest.Store(t)
	conn := superuser(t)
	f := newTamperFixture(t, s)
	a := actor(f.site)
	a.Name = `a<b>&"q"\ é漢` + "\u2028\u2029"
	odd := rangesCoupon(*f.coupon.ProcedureID, `C-<&>"\ `+"\t\u2028漢😀\x01", 210, 24)
	odd.WelderID, odd.FillerLot = "W/\u00e9\x7f", "L&<>"
	c, err := s.CreateCoupon(ctx, a, odd)
	if err != nil {
		t.Fatal(err)
	}
	odd.VoltageV = 24.000000000000004
	if _, err := s.CorrectCoupon(ctx, a, c.ID, db.Change{BaseRevision: 1, Reason: "re-read: <0.1 V> & \"drift\"\n\\"}, odd); err != nil {
		t.Fatal(err)
	}
	mustLogged(t, s, f.site)

	// Many coupons and their leaves, written by SQL (the leaf hashes are
	// not the facts': only the encoding is compared here).
	const many = 2600
	now := time.Now()
	var next int64
	if err := conn.QueryRow(ctx, `SELECT coalesce(max(leaf_index) + 1, 0) FROM log_leaves WHERE site = $1`, f.site).Scan(&next); err != nil {
		t.Fatal(err)
	}
	ids := make([]uuid.UUID, many)
	for i := range ids {
		ids[i] = uuid.New()
	}
	if _, err := conn.CopyFrom(ctx, pgx.Identifier{"coupons"}, []string{"site", "id", "revision", "created_at",
		"created_by", "procedure_id", "coupon_mark", "welder_id", "welded_on", "joint_type", "thickness_mm",
		"pass_number", "current_a", "voltage_v", "travel_speed_mm_s", "wire_diameter_mm", "polarity", "position"},
		pgx.CopyFromSlice(many, func(i int) ([]any, error) {
			return []any{f.site, ids[i], 1, now.Add(time.Duration(i) * time.Microsecond), "sql", f.coupon.ProcedureID,
				fmt.Sprint("M-", i), fmt.Sprint("W", i%7), now, "butt", 10.0 + float64(i%30)/3, 1, 250.0, 25.0, 5.0, 1.2, "DCEP", "1G"}, nil
		})); err != nil {
		t.Fatal(err)
	}
	leaf := func(i int64, kind string, version int, id uuid.UUID, actor, reason string) []any {
		h := sha256.Sum256(id[:])
		return []any{f.site, i, kind, version, id, 1, h[:], actor, "create", reason, now, now, i + 1}
	}
	var leaves [][]any
	for i, id := range ids {
		leaves = append(leaves, leaf(next+int64(i), "coupon", 1, id, "sql", ""))
	}
	next += many
	leaves = append(leaves,
		leaf(next, "coupon", 1, uuid.New(), "sql", "a leaf whose row is gone"),
		leaf(next+1, "gauge_reading", 1, uuid.New(), `x<y>&"z"\`+"\x02", "a kind this build does not know \u2028"))
	next += 2
	leafColumns := []string{"site", "leaf_index", "kind", "version", "record_id", "revision", "leaf_hash",
		"actor", "action", "reason", "at", "integrated_at", "pending_seq"}
	if _, err := conn.CopyFrom(ctx, pgx.Identifier{"log_leaves"}, leafColumns, pgx.CopyFromRows(leaves)); err != nil {
		t.Fatal(err)
	}
	sameExport(t, s, f.site, many, "no such row at the site", "does not know the fact kind gauge_reading",
		`"fact_kind":"coupon","version":1,"record_id":"`+c.ID.String()+`","revision":2`)

	// A second version of a known kind, unknown to this build: the export
	// reads each kind's leaves through a cursor on its one connection.
	if _, err := conn.CopyFrom(ctx, pgx.Identifier{"log_leaves"}, leafColumns,
		pgx.CopyFromRows([][]any{leaf(next, "coupon", 99, uuid.New(), "sql", "")})); err != nil {
		t.Fatal(err)
	}
	sameExport(t, s, f.site, many, "does not know the fact kind coupon")
}

// sameExport compares the site's export through ExportTo with encoding/json's
// encoding of Export's values, line by line; the export must hold at least
// atLeast leaves and each of texts.
func sameExport(t *testing.T, s *db.Store, site string, atLeast int, texts ...string) {
	t.Helper()
	ctx := context.Background()
	var want bytes.Buffer
	enc := json.NewEncoder(&want)
	if _, err := s.Export(ctx, site, func(kind string, v any) error {
		return enc.Encode(struct {
			Kind   string `json:"kind"`
			Record any    `json:"record"`
		}{kind, v})
	}); err != nil {
		t.Fatalf("Export: %v", err)
	}
	var got bytes.Buffer
	w := db.NewExportWriter(&got)
	if _, err := s.ExportTo(ctx, site, w); err != nil {
		t.Fatalf("ExportTo: %v", err)
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	for _, x := range texts {
		if !strings.Contains(want.String(), x) {
			t.Fatalf("the export lacks %q", x)
		}
	}
	gl, wl := strings.Split(got.String(), "\n"), strings.Split(want.String(), "\n")
	if len(wl) < 2*atLeast {
		t.Fatalf("the export holds %d lines, want at least %d", len(wl), 2*atLeast)
	}
	for i := range min(len(gl), len(wl)) {
		if gl[i] != wl[i] {
			t.Fatalf("line %d:\nExportTo      %s\nencoding/json %s", i+1, gl[i], wl[i])
		}
	}
	if len(gl) != len(wl) {
		t.Fatalf("ExportTo wrote %d lines, encoding/json %d", len(gl), len(wl))
	}
}
