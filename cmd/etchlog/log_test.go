package main

import (
	"bytes"
	"context"
	"errors"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/db/logfmt"
)

// TestServeRefusesWithoutKey: serve does not start without a log signing
// key; it says how to make one.
func TestServeRefusesWithoutKey(t *testing.T) {
	t.Parallel()
	var stdout, stderr bytes.Buffer
	env := map[string]string{"DATABASE_URL": dbtest.URL(t)}
	err := run(context.Background(), []string{"serve", "-addr", "127.0.0.1:0"}, func(k string) string { return env[k] }, &stdout, &stderr)
	if !errors.Is(err, errNoLogKey) || !strings.Contains(err.Error(), "etchlog keygen") {
		t.Errorf("serve without a key: err = %v, want errNoLogKey naming etchlog keygen", err)
	}
}

// TestKeygen makes a key pair: the private key file is readable by its
// owner only, and a checkpoint signed with it opens with the public key
// through golang.org/x/mod/sumdb/note (logfmt.OpenCheckpoint).
func TestKeygen(t *testing.T) {
	t.Parallel()
	out := filepath.Join(t.TempDir(), "log.key")
	var stdout, stderr bytes.Buffer
	if err := run(context.Background(), []string{"keygen", "-out", out, "-name", "shop-log"}, nil, &stdout, &stderr); err != nil {
		t.Fatalf("keygen: %v\n%s", err, &stderr)
	}
	st, err := os.Stat(out)
	if err != nil || st.Mode().Perm() != 0o600 {
		t.Fatalf("private key file: %v, mode %v; want 0600", err, st.Mode().Perm())
	}
	skey, _ := os.ReadFile(out)
	vkey, _ := os.ReadFile(out + ".pub")
	signer, err := logfmt.NewSigner(string(skey))
	if err != nil {
		t.Fatal(err)
	}
	note, err := logfmt.SignCheckpoint(signer, "s1", 3, make([]byte, 32))
	if err != nil {
		t.Fatal(err)
	}
	if site, cp, err := logfmt.OpenCheckpoint([]byte(note), string(vkey)); err != nil || site != "s1" || cp.Size != 3 {
		t.Errorf("checkpoint signed with the new key: site %q size %d err %v", site, cp.Size, err)
	}
	if err := run(context.Background(), []string{"keygen", "-out", out}, nil, &stdout, &stderr); err == nil {
		t.Error("keygen over an existing key file succeeded; want refused")
	}
}

// TestAuditorOfflineVerify follows the README's auditor: save a checkpoint,
// come back after more writes, take a checkpoint and an export, and run
// "etchlog verify" with the older checkpoint, offline. Then the database is
// altered behind the service's back, and the same command fails naming the
// altered record.
func TestAuditorOfflineVerify(t *testing.T) {
	t.Parallel()
	store, site := dbtest.Store(t), dbtest.Site(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	dir := t.TempDir()
	keyFile := filepath.Join(dir, "log.key.pub")
	if err := os.WriteFile(keyFile, []byte(dbtest.PublicKey+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	token, _ := db.NewToken()
	if err := dbtest.Owner(t).PutUser(ctx, db.User{Site: site, Name: "ruth", Role: db.RoleAuditor}, token); err != nil {
		t.Fatal(err)
	}
	a := db.Actor{Site: site, Name: "eng", Role: db.RoleEngineer}
	proc, err := store.CreateProcedure(ctx, a, db.ProcedureData{
		Code: "WPS-V-1", Title: "fixture", Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: 0.9,
		Polarity: "DCEP", Positions: []string{"2F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 3, ThicknessMaxMM: 12, Status: "draft",
	})
	if err != nil {
		t.Fatal(err)
	}
	r := start(t, ctx, dbtest.URL(t), "serve", "-addr", "127.0.0.1:0")
	fetch := func(path, file string) {
		t.Helper()
		status, _, body := get(t, r.base, path, token)
		if status != http.StatusOK {
			t.Fatalf("GET %s = %d %s", path, status, body)
		}
		if err := os.WriteFile(filepath.Join(dir, file), body, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	fetch("/v1/log/checkpoint", "visit1.cp")
	mark := db.CouponData{ProcedureID: &proc.ID, CouponMark: "C-V-1", WelderID: "W-07", WeldedOn: db.DateOf(proc.CreatedAt),
		JointType: "fillet", ThicknessMM: 6, PassNumber: 1, CurrentA: 180, VoltageV: 21, TravelSpeedMMPerS: 5,
		WireDiameterMM: ptr(0.9), Polarity: ptr("DCEP"), Position: "2F"}
	c, err := store.CreateCoupon(ctx, a, mark)
	if err != nil {
		t.Fatal(err)
	}
	fetch("/v1/log/checkpoint", "visit2.cp")
	fetch("/v1/export", "visit2.ndjson")
	verify := func() (string, error) {
		var stdout, stderr bytes.Buffer
		err := run(context.Background(), []string{"verify", "--export", filepath.Join(dir, "visit2.ndjson"),
			"--checkpoint", filepath.Join(dir, "visit2.cp"), "--key", keyFile, "--older-checkpoint", filepath.Join(dir, "visit1.cp")},
			nil, &stdout, &stderr)
		return stdout.String(), err
	}
	out, err := verify()
	if err != nil || !strings.Contains(out, "OK:") || !strings.Contains(out, "the log only grew") {
		t.Fatalf("verify of an untouched log: %v\n%s", err, out)
	}
	t.Logf("etchlog verify:\n%s", out)

	conn := superuser(t)
	if _, err := conn.Exec(ctx, `ALTER TABLE coupons DISABLE TRIGGER coupons_append_only;
		UPDATE coupons SET current_a = 250 WHERE id = '`+c.ID.String()+`';
		ALTER TABLE coupons ENABLE TRIGGER coupons_append_only`); err != nil {
		t.Fatal(err)
	}
	fetch("/v1/export", "visit2.ndjson")
	out, err = verify()
	if err == nil || !strings.Contains(out, "PROBLEM:") || !strings.Contains(out, c.ID.String()) {
		t.Errorf("verify after an edit in SQL: err %v, want a problem naming coupon %s\n%s", err, c.ID, out)
	}
}

// superuser connects to the package's test database as its superuser, who
// can do what the service never does.
func superuser(t *testing.T) *pgx.Conn {
	t.Helper()
	conn, err := pgx.Connect(context.Background(), dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { conn.Close(context.Background()) })
	return conn
}
