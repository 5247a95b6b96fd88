package api_test

import (
	"context"
	"fmt"
	"net/http"
	"slices"
	"sort"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db/dbtest"
)

// inheritedOf returns a coupon answer's inherited list.
func inheritedOf(t *testing.T, c map[string]any) []string {
	t.Helper()
	var out []string
	list, ok := c["inherited"].([]any)
	if !ok {
		t.Fatalf("coupon answer has no inherited list: %v", c)
	}
	for _, f := range list {
		out = append(out, f.(string))
	}
	return out
}

// wantEffective checks one coupon answer against the fixture procedure
// (procedureBody: GMAW, 0.9 mm wire, Ar-25CO2, DCEP) and its inherited list.
func wantEffective(t *testing.T, what string, c map[string]any, wireMM float64, inherited ...string) {
	t.Helper()
	if c["process"] != "GMAW" || c["wire_diameter_mm"] != wireMM || c["shielding_gas"] != "Ar-25CO2" || c["polarity"] != "DCEP" {
		t.Errorf("%s: process %v, wire %v, gas %v, polarity %v; want GMAW, %v, Ar-25CO2, DCEP",
			what, c["process"], c["wire_diameter_mm"], c["shielding_gas"], c["polarity"], wireMM)
	}
	if got := inheritedOf(t, c); !slices.Equal(got, inherited) {
		t.Errorf("%s: inherited %v, want %v", what, got, inherited)
	}
}

// TestCouponInheritsFromProcedure: a coupon that leaves out its wire
// diameter, polarity and shielding gas is stored with them left out (NULL,
// NULL, ” in its row; its log leaf still verifies with the RFC 9162
// verifier) and every read (create answer, single, list, revisions, model
// view) shows the procedure's values, naming them in inherited. A correction
// that states the wire diameter stores and shows it as the coupon's own.
func TestCouponInheritsFromProcedure(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.mustProcedure()
	b := couponBody(proc, "", uniq("C-INH"))
	delete(b, "wire_diameter_mm")
	delete(b, "polarity")
	delete(b, "shielding_gas")
	created := e.create("/v1/coupons", "technician", b)
	id := created["id"].(string)
	all := []string{"process", "wire_diameter_mm", "shielding_gas", "polarity"}
	wantEffective(t, "create answer", created, 0.9, all...)
	wantEffective(t, "GET", e.do(http.MethodGet, "/v1/coupons/"+id, "auditor", nil).object(t), 0.9, all...)
	list := e.do(http.MethodGet, "/v1/coupons?coupon_mark="+b["coupon_mark"].(string), "auditor", nil).items(t)
	if len(list) != 1 {
		t.Fatalf("list by mark: %d coupons, want 1", len(list))
	}
	wantEffective(t, "list", list[0], 0.9, all...)
	// Inch-pound reads convert the inherited value too: 0.9 mm / 25.4 mm per in
	// (exact definition of the inch, NIST SP 811) to 12 significant digits.
	inch := e.do(http.MethodGet, "/v1/coupons/"+id+"?units=inch-pound", "auditor", nil).object(t)
	if inch["wire_diameter_in"] != answered(0.9/25.4) {
		t.Errorf("inch-pound read: wire_diameter_in %v, want %v", inch["wire_diameter_in"], answered(0.9/25.4))
	}

	// The row keeps exactly what was written.
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	var wire *float64
	var polarity *string
	var gas string
	if err := conn.QueryRow(ctx, `SELECT wire_diameter_mm, polarity, shielding_gas FROM coupons WHERE id = $1 AND revision = 1`, id).
		Scan(&wire, &polarity, &gas); err != nil {
		t.Fatal(err)
	}
	if wire != nil || polarity != nil || gas != "" {
		t.Errorf("stored row: wire %v, polarity %v, gas %q; want NULL, NULL, empty (as written)", wire, polarity, gas)
	}

	// A correction that states the wire diameter keeps it as the coupon's own.
	fix := couponBody(proc, "", b["coupon_mark"].(string))
	delete(fix, "polarity")
	delete(fix, "shielding_gas")
	fix["wire_diameter_mm"], fix["base_revision"], fix["reason"] = 1.2, 1, "wire diameter read from the spool label"
	r := e.do(http.MethodPut, "/v1/coupons/"+id, "technician", fix)
	if r.status != http.StatusOK {
		t.Fatalf("correction: %d %s", r.status, r.body)
	}
	wantEffective(t, "correction answer", r.object(t), 1.2, "process", "shielding_gas", "polarity")
	revs := e.do(http.MethodGet, "/v1/coupons/"+id+"/revisions", "auditor", nil).items(t)
	if len(revs) != 2 {
		t.Fatalf("revisions: %d, want 2", len(revs))
	}
	wantEffective(t, "revision 1", revs[0], 0.9, all...)
	wantEffective(t, "revision 2", revs[1], 1.2, "process", "shielding_gas", "polarity")
	view := e.do(http.MethodGet, "/v1/coupons/"+id+"/model", "auditor", nil).object(t)
	if got := fmt.Sprint(view["inherited"]); got != "[process shielding_gas polarity]" {
		t.Errorf("model view inherited %s, want [process shielding_gas polarity]", got)
	}

	// A coupon that states everything inherits only its process.
	own := e.create("/v1/coupons", "technician", couponBody(proc, "", uniq("C-OWN")))
	wantEffective(t, "coupon stating all", own, 0.9, "process")

	// Every revision's leaf verifies, NULLs included (RFC 9162 inclusion proof).
	for _, ev := range e.do(http.MethodGet, "/v1/audit/events?entity_id="+id, "auditor", nil).items(t) {
		if got := provedRevision(t, e, ev); got != ev["revision"] {
			t.Errorf("leaf of revision %v proves revision %v", ev["revision"], got)
		}
	}
}

// TestInheritedValuesGroupFitAndFlag: a coupon that leaves out its wire
// diameter, polarity and gas belongs to its procedure's calibration group
// (0.9 mm, Ar-25CO2) and is fitted with it; on a procedure with derived
// ranges it gets exactly the flags of the same coupon stating the
// procedure's values.
func TestInheritedValuesGroupFitAndFlag(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	e.storeFitCoupons(6, 0)
	bare := couponBody(e.mustProcedure(), "", uniq("C-BARE"))
	delete(bare, "wire_diameter_mm")
	delete(bare, "polarity")
	delete(bare, "shielding_gas")
	id := e.create("/v1/coupons", "technician", bare)["id"].(string)
	if r := e.section(id, "A", 1.9); r.status != http.StatusCreated {
		t.Fatalf("section: %d %s", r.status, r.body)
	}
	cal := e.fit(calibrationBody("jackson_fixed", nil))
	if len(cal.CouponIDs) != 7 || !slices.Contains(cal.CouponIDs, id) {
		t.Errorf("fit of the 0.9 mm Ar-25CO2 fillet group: %d coupons %v, want the 6 fit coupons and %s", len(cal.CouponIDs), cal.CouponIDs, id)
	}

	ranged := e.rangedProcedure()
	flagsOf := func(c map[string]any) []string {
		var out []string
		for _, f := range e.flagsOf(e.create("/v1/coupons", "technician", c)["id"].(string), "") {
			out = append(out, fmt.Sprint(f["kind"], " ", f["variable"], " ", f["direction"]))
		}
		sort.Strings(out)
		return out
	}
	stated := flagsOf(couponBody(ranged, "", uniq("C-STATED")))
	left := couponBody(ranged, "", uniq("C-LEFT"))
	delete(left, "wire_diameter_mm")
	delete(left, "polarity")
	delete(left, "shielding_gas")
	if got := flagsOf(left); !slices.Equal(got, stated) {
		t.Errorf("flags of a coupon leaving wire, polarity and gas out: %v; of the same coupon stating the procedure's: %v", got, stated)
	}
	if len(stated) == 0 {
		t.Errorf("the fixture coupon (0.9 mm, Ar-25CO2 against a 1.2 mm Ar-10CO2 record) has no range flags; the comparison proves nothing")
	}
}

// TestInheritingCouponRoundTrip: a read of a coupon that leaves its wire
// diameter and polarity out, sent back as a correction with one other field
// changed, keeps them left out (the stored row stays NULL); the same read
// with the wire diameter changed makes that value the coupon's own. On a new
// record process and inherited are refused (set by the server).
func TestInheritingCouponRoundTrip(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	proc := e.mustProcedure()
	b := couponBody(proc, "", uniq("C-RT"))
	delete(b, "wire_diameter_mm")
	delete(b, "polarity")
	id := e.create("/v1/coupons", "technician", b)["id"].(string)
	read := e.do(http.MethodGet, "/v1/coupons/"+id+"?units=inch-pound", "auditor", nil).object(t)
	body := clone(read)
	body["current_a"], body["base_revision"], body["reason"] = 185.0, 1, "current re-read from the log"
	r := e.do(http.MethodPut, "/v1/coupons/"+id, "technician", body)
	if r.status != http.StatusOK {
		t.Fatalf("PUT the inch-pound read back: %d %s", r.status, r.body)
	}
	wantEffective(t, "round trip", e.do(http.MethodGet, "/v1/coupons/"+id, "auditor", nil).object(t), 0.9, "process", "wire_diameter_mm", "polarity")

	body = clone(e.do(http.MethodGet, "/v1/coupons/"+id, "auditor", nil).object(t))
	body["wire_diameter_mm"], body["base_revision"], body["reason"] = 1.2, 2, "wire diameter read from the spool label"
	if r := e.do(http.MethodPut, "/v1/coupons/"+id, "technician", body); r.status != http.StatusOK {
		t.Fatalf("PUT with the wire changed: %d %s", r.status, r.body)
	}
	wantEffective(t, "changed wire", e.do(http.MethodGet, "/v1/coupons/"+id, "auditor", nil).object(t), 1.2, "process", "polarity")

	fresh := couponBody(proc, "", uniq("C-RT"))
	fresh["inherited"] = []any{"process"}
	wantProblem(t, "POST with inherited", e.do(http.MethodPost, "/v1/coupons", "technician", fresh), http.StatusUnprocessableEntity, "inherited")
}
