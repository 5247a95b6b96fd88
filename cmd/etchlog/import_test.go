package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestImportParts: a file is cut only where the coupon mark changes, each
// part carries the header, and the parts' rows are the file's rows.
func TestImportParts(t *testing.T) {
	t.Parallel()
	file := "coupon_mark,section\nC-1,A\nC-1,B\nC-2,A\n\"C-3\",\"A\nwith a line break\"\nC-3,B\n"
	got, err := importParts([]byte("\uFEFF"+file), 1) // every part as small as it can be: one coupon
	if err != nil {
		t.Fatal(err)
	}
	want := []importPart{
		{body: []byte("coupon_mark,section\nC-1,A\nC-1,B\n"), firstRow: 2, rows: 2},
		{body: []byte("coupon_mark,section\nC-2,A\n"), firstRow: 4, rows: 1},
		{body: []byte("coupon_mark,section\n\"C-3\",\"A\nwith a line break\"\nC-3,B\n"), firstRow: 5, rows: 2},
	}
	if len(got.list) != len(want) || got.rows != 5 {
		t.Fatalf("importParts = %d parts, %d rows, want %d parts, 5 rows", len(got.list), got.rows, len(want))
	}
	for i, p := range got.list {
		if !bytes.Equal(p.body, want[i].body) || p.firstRow != want[i].firstRow || p.rows != want[i].rows {
			t.Errorf("part %d = %q from row %d (%d rows), want %q from row %d (%d rows)",
				i, p.body, p.firstRow, p.rows, want[i].body, want[i].firstRow, want[i].rows)
		}
	}
	if got.shared {
		t.Error("importParts: shared set, but each mark's rows lie in one part")
	}
	again, err := importParts([]byte(file+"C-1,C\n"), 1) // C-1's rows in the first part and the last
	if err != nil || !again.shared {
		t.Errorf("importParts(C-1 again at the end) = shared %v, %v; want shared", again.shared, err)
	}
	one, err := importParts([]byte(file), 1<<20)
	if err != nil || len(one.list) != 1 || !bytes.Equal(one.list[0].body, []byte(file)) {
		t.Errorf("importParts(limit 1 MiB) = %d parts, %v; want the whole file in one", len(one.list), err)
	}
}

// TestImportCommand runs "etchlog import coupons" against a served site:
// the dry run names the bad row by its file row (the file goes in parts)
// and writes nothing, the commit draws its progress and writes the rest,
// and a second commit writes nothing new.
func TestImportCommand(t *testing.T) {
	t.Parallel()
	store, site := dbtest.Store(t), dbtest.Site(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	token, _ := db.NewToken()
	if err := dbtest.Owner(t).PutUser(ctx, db.User{Site: site, Name: "tech", Role: db.RoleTechnician}, token); err != nil {
		t.Fatal(err)
	}
	proc, err := store.CreateProcedure(ctx, db.Actor{Site: site, Name: "eng", Role: db.RoleEngineer}, db.ProcedureData{
		Code: "WPS-I-1", Title: "fixture", Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: 0.9,
		Polarity: "DCEP", Positions: []string{"2F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 3, ThicknessMaxMM: 12, Status: "draft",
	})
	if err != nil {
		t.Fatal(err)
	}
	r := start(t, ctx, dbtest.URL(t), "serve", "-addr", "127.0.0.1:0")
	defer func() {
		cancel()
		_ = r.stop(t)
	}()
	// Plausible GMAW fillet coupons (fixtures); thickness in inches.
	var b strings.Builder
	b.WriteString("procedure_id,coupon_mark,welder_id,welded_on,joint_type,thickness_in,pass_number,current_a,voltage_v,travel_speed_mm_s,position,section,penetration_mm,bead_width_mm,reinforcement_mm,acceptance,inspector\n")
	for i, s := range []string{"A", "B", "A", "A", "B"} {
		mark := []string{"CLI-1", "CLI-1", "CLI-2", "CLI-3", "CLI-3"}[i]
		current := "180"
		if i == 2 {
			current = "1800" // row 4: above the plausible 1000 A
		}
		fmt.Fprintf(&b, "%s,%s,W-1,2026-11-03,fillet,0.25,1,%s,21,5,2F,%s,1.5,7,1,accept,QC\n", proc.ID, mark, current, s)
	}
	path := filepath.Join(t.TempDir(), "coupons.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	importCmd := func(extra ...string) (string, string, error) {
		var stdout, stderr bytes.Buffer
		args := append([]string{"import", "coupons", "-url", r.base, "-token", token, "-part-size", "1"}, extra...)
		err := run(ctx, append(args, path), func(string) string { return "" }, &stdout, &stderr)
		return stdout.String(), stderr.String(), err
	}
	refusal := "row 4, current_a: 1800 A is above the plausible maximum 1000 A" // domain primer: current 10–1,000 A
	out, _, err := importCmd()
	if err == nil || !strings.Contains(out, refusal) || !strings.Contains(out, "dry run (nothing written): 5 rows, 3 coupons: 2 new with 4 sections, 0 unchanged, 1 refused") {
		t.Errorf("dry run = %v\n%s\nwant a failure naming %q", err, out, refusal)
	}
	if p, err := store.Coupons(ctx, site, db.CouponFilter{}, "", 10); err != nil || len(p.Items) != 0 {
		t.Errorf("after the dry run the site has %d coupons (%v), want 0", len(p.Items), err)
	}
	out, progressBar, err := importCmd("-commit")
	if err == nil || !strings.Contains(out, "imported: 5 rows, 3 coupons: 2 new with 4 sections, 0 unchanged, 1 refused") || !strings.Contains(out, refusal) {
		t.Errorf("commit = %v\n%s", err, out)
	}
	if !strings.Contains(progressBar, "importing [") || !strings.Contains(progressBar, "5/5 rows") {
		t.Errorf("commit drew %q, want a progress bar ending at 5/5 rows", progressBar)
	}
	p, err := store.Coupons(ctx, site, db.CouponFilter{}, "", 10)
	if err != nil || len(p.Items) != 2 || p.Items[0].ThicknessMM != 6.35 { // 0.25 in × 25.4 mm/in (NIST SP 811, Appendix B)
		t.Errorf("after the commit: %d coupons (%v), want 2 with thickness 6.35 mm", len(p.Items), err)
	}
	out, _, err = importCmd("-commit")
	if !strings.Contains(out, "0 new with 0 sections, 2 unchanged, 1 refused") {
		t.Errorf("second commit = %v\n%s\nwant nothing new, 2 unchanged", err, out)
	}
}

// TestSendParts: parts are posted at most n unread at a time, each answer
// is read as its part's, and after a refused part at most n-1 later ones
// were sent.
func TestSendParts(t *testing.T) {
	t.Parallel()
	parts := make([]importPart, 9)
	release := make([]chan struct{}, len(parts))
	for i := range parts {
		parts[i].firstRow, release[i] = i, make(chan struct{}, 1)
	}
	started := make(chan int, len(parts))
	post := func(p importPart) (importReport, error) {
		started <- p.firstRow
		<-release[p.firstRow]
		if p.firstRow == 4 {
			return importReport{}, fmt.Errorf("refused")
		}
		return importReport{Rows: p.firstRow}, nil
	}
	sender := sendParts(2, parts, post)
	quiet := func(when string) { // no further part starts
		select {
		case k := <-started:
			t.Fatalf("%s: part %d sent", when, k)
		case <-time.After(50 * time.Millisecond):
		}
	}
	first := map[int]bool{<-started: true, <-started: true}
	if !first[0] || !first[1] {
		t.Fatalf("first parts sent: %v, want 0 and 1", first)
	}
	quiet("two unread")
	for i := range 4 {
		release[i] <- struct{}{}
		if a := sender.answer(i); a.err != nil || a.rep.Rows != i {
			t.Fatalf("answer %d = %+v, %v; want rows %d", i, a.rep, a.err, i)
		}
		if k := <-started; k != i+2 {
			t.Fatalf("after answer %d, part %d sent, want %d", i, k, i+2)
		}
	}
	release[4] <- struct{}{}
	if a := sender.answer(4); a.err == nil {
		t.Fatal("answer 4: no error, want the refusal")
	}
	if sent := sender.stop(); sent != 6 {
		t.Errorf("%d parts sent by the refusal at part 4, want 6 (part 5 was in flight)", sent)
	}
	release[5] <- struct{}{}
	<-sender.answers[5]
	quiet("after stop")
}
