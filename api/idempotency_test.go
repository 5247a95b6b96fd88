package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"net/http"
	"strings"
	"sync"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db/dbtest"
	"etchlog/openapi/spectest"
)

// post sends a JSON body as role with an Idempotency-Key ("" sends none).
func (e *testEnv) post(path, role, key string, body any) reply {
	e.t.Helper()
	js, _ := json.Marshal(body)
	req, _ := http.NewRequest(http.MethodPost, e.url+path, bytes.NewReader(js))
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+e.tokens[role])
	if key != "" {
		req.Header.Set("Idempotency-Key", key)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		e.t.Fatalf("POST %s: %v", path, err)
	}
	defer res.Body.Close()
	var b bytes.Buffer
	if _, err := b.ReadFrom(res.Body); err != nil {
		e.t.Fatal(err)
	}
	if err := spectest.Default.Check(req, res.StatusCode, res.Header, b.Bytes()); err != nil {
		e.t.Errorf("answer does not match the spec: %v (body %.300s)", err, b.Bytes())
	}
	if res.StatusCode >= 500 {
		e.t.Errorf("POST %s = %d %s, want no server error", path, res.StatusCode, b.Bytes())
	}
	return reply{res.StatusCode, res.Header, b.Bytes()}
}

// TestIdempotencyKey follows the IETF httpapi draft "The Idempotency-Key HTTP
// Header Field": a retry with the same key and payload gets the first answer
// and writes nothing; the same key with another payload is 422; keys are
// scoped to their user.
func TestIdempotencyKey(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	body := couponBody(e.procedure(), "", uniq("C"))
	mark := body["coupon_mark"].(string)
	key := "5f0c1b0e-3c2d-4f7a-9a51-idem-" + mark

	first := e.post("/v1/coupons", "technician", key, body)
	if first.status != http.StatusCreated {
		t.Fatalf("first POST = %d %s", first.status, first.body)
	}
	again := e.post("/v1/coupons", "technician", key, body)
	if again.status != http.StatusCreated || !bytes.Equal(again.body, first.body) ||
		again.header.Get("Location") != first.header.Get("Location") || again.header.Get("Idempotent-Replayed") != "true" {
		t.Errorf("retry = %d Location %q replayed %q %s, want the first answer %d %q %s again",
			again.status, again.header.Get("Location"), again.header.Get("Idempotent-Replayed"), again.body,
			first.status, first.header.Get("Location"), first.body)
	}
	quoted := e.post("/v1/coupons", "technician", `"`+key+`"`, body)
	if quoted.status != http.StatusCreated || !bytes.Equal(quoted.body, first.body) {
		t.Errorf("retry with the key as a structured-field string = %d %s, want the first answer", quoted.status, quoted.body)
	}
	if n := len(e.do(http.MethodGet, "/v1/coupons?coupon_mark="+mark, "auditor", nil).items(t)); n != 1 {
		t.Errorf("coupons marked %s after three sends under one key: %d, want 1", mark, n)
	}

	other := clone(body)
	other["current_a"] = 190.0
	wantProblem(t, "same key, other body", e.post("/v1/coupons", "technician", key, other), http.StatusUnprocessableEntity, "Idempotency-Key")

	// Another user's key space: the same key is a new request, refused as a duplicate mark naming the coupon.
	p := wantProblem(t, "same key, other user", e.post("/v1/coupons", "engineer", key, body), http.StatusConflict, "coupon_mark")
	var stored struct{ ID string }
	_ = json.Unmarshal(first.body, &stored)
	if p.ExistingID != stored.ID {
		t.Errorf("duplicate mark: existing_id = %q, want %s", p.ExistingID, stored.ID)
	}

	for _, bad := range []string{"has space", strings.Repeat("k", 256), "tab\tkey"} {
		wantProblem(t, "key "+bad, e.post("/v1/coupons", "technician", bad, body), http.StatusUnprocessableEntity, "Idempotency-Key")
	}
}

// TestIdempotentBatchAndMeasurement retries writes that have no natural key
// of their own (a section, a production batch): under one Idempotency-Key
// they are written once.
func TestIdempotentBatchAndMeasurement(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	coupon := e.mustCoupon(e.procedure())
	path := "/v1/coupons/" + coupon + "/measurements"
	for i := 0; i < 3; i++ {
		if r := e.post(path, "technician", "section-A-"+coupon, measurementBody("A")); r.status != http.StatusCreated {
			t.Fatalf("send %d = %d %s", i, r.status, r.body)
		}
	}
	if n := len(e.do(http.MethodGet, path, "auditor", nil).items(t)); n != 1 {
		t.Errorf("sections after three sends under one key: %d, want 1", n)
	}
	weld := uniq("J")
	batch := map[string]any{"records": []any{productionRecordBody(e.procedure(), weld)}}
	for i := 0; i < 3; i++ {
		if r := e.post("/v1/production-records", "technician", "batch-"+weld, batch); r.status != http.StatusCreated {
			t.Fatalf("batch send %d = %d %s", i, r.status, r.body)
		}
	}
	if n := len(e.do(http.MethodGet, "/v1/production-records?weld_id="+weld, "auditor", nil).items(t)); n != 1 {
		t.Errorf("production records after three sends under one key: %d, want 1", n)
	}
}

// TestIdempotentConcurrent sends one section eight times at once under one
// key: one write; every answer is the first one (a waiter replays it) or 409.
func TestIdempotentConcurrent(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	coupon := e.mustCoupon(e.procedure())
	path := "/v1/coupons/" + coupon + "/measurements"
	var wg sync.WaitGroup
	answers := make([]reply, 8)
	for i := range answers {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			answers[i] = e.post(path, "technician", "race-"+coupon, measurementBody("B"))
		}(i)
	}
	wg.Wait()
	var created []byte
	counts := map[int]int{}
	for _, r := range answers {
		counts[r.status]++
		switch r.status {
		case http.StatusCreated:
			if created != nil && !bytes.Equal(created, r.body) {
				t.Errorf("two different 201 answers under one key:\n%s\n%s", created, r.body)
			}
			created = r.body
		case http.StatusConflict:
		default:
			t.Errorf("concurrent duplicate = %d %s, want 201 or 409", r.status, r.body)
		}
	}
	t.Logf("8 concurrent sends under one key: %v", counts)
	if n := len(e.do(http.MethodGet, path, "auditor", nil).items(t)); n != 1 {
		t.Errorf("sections after 8 concurrent sends under one key: %d, want 1", n)
	}
}

// TestIdempotencyKeyLifetime ages a stored key: at 23 hours a retry still
// gets the first answer; past 24 hours the key is forgotten and the same
// request writes again.
func TestIdempotencyKeyLifetime(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	coupon := e.mustCoupon(e.procedure())
	path := "/v1/coupons/" + coupon + "/measurements"
	key := "lifetime-" + coupon
	first := e.post(path, "technician", key, measurementBody("C"))
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, dbtest.URL(t))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	age := func(interval string) {
		if _, err := conn.Exec(ctx, `UPDATE idempotency_keys SET created_at = now() - $2::interval WHERE site = $1 AND key = $3`,
			e.site, interval, key); err != nil {
			t.Fatal(err)
		}
	}
	age("23 hours")
	if r := e.post(path, "technician", key, measurementBody("C")); !bytes.Equal(r.body, first.body) {
		t.Errorf("retry after 23 h = %d %s, want the first answer", r.status, r.body)
	}
	age("25 hours")
	r := e.post(path, "technician", key, measurementBody("C"))
	if r.status == http.StatusCreated && bytes.Equal(r.body, first.body) {
		t.Errorf("retry after 25 h replayed the first answer, want the key forgotten")
	}
}
