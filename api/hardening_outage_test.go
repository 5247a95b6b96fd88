package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"etchlog/api"
	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/openapi/spectest"
)

// lockedBuffer is a log sink safe for concurrent writers.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// freshEnv is the API over a database of the test's own (dbtest.Fresh), so
// the test may cut it off without disturbing other tests. The server logs at
// info into the returned buffer.
func freshEnv(t *testing.T) (*testEnv, string, *pgx.Conn, *lockedBuffer) {
	return freshEnvWith(t, api.Options{}, nil)
}

// freshEnvWith is freshEnv with server options and a change to the HTTP
// server (e.g. its write timeout) made before it starts.
func freshEnvWith(t *testing.T, opt api.Options, hs func(*http.Server)) (*testEnv, string, *pgx.Conn, *lockedBuffer) {
	t.Helper()
	url, name, admin := dbtest.Fresh(t)
	ctx := context.Background()
	store := dbtest.OpenApp(t, url)
	owner, err := db.OpenOwner(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(owner.Close)
	if err := owner.SetLogKey(dbtest.PrivateKey); err != nil {
		t.Fatal(err)
	}
	seqCtx, stopSeq := context.WithCancel(context.Background())
	go store.RunSequencer(seqCtx, db.SequencerOptions{Retry: 100 * time.Millisecond}) //nolint:errcheck // ends with the test
	t.Cleanup(stopSeq)
	logs := &lockedBuffer{}
	opt.Logger = slog.New(slog.NewJSONHandler(logs, nil))
	srv, err := api.New(store, opt)
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewUnstartedServer(srv)
	if hs != nil {
		hs(ts.Config)
	}
	ts.Start()
	t.Cleanup(ts.Close)
	e := &testEnv{t: t, srv: srv, url: ts.URL, store: store, site: "outage", tokens: map[string]string{}, cache: map[string]string{}}
	for _, role := range []string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor} {
		tok, _ := db.NewToken()
		if err := owner.PutUser(ctx, db.User{Site: e.site, Name: userName(role), Role: role}, tok); err != nil {
			t.Fatal(err)
		}
		e.tokens[role] = tok
	}
	return e, name, admin, logs
}

// send is one request without the test failure on 5xx that do adds.
func (e *testEnv) send(method, path, role string, body any) (int, http.Header, []byte, error) {
	return e.sendKey(method, path, role, "", body)
}

// sendKey is send with an Idempotency-Key ("" sends none).
func (e *testEnv) sendKey(method, path, role, key string, body any) (int, http.Header, []byte, error) {
	var rd *bytes.Reader
	if body != nil {
		js, _ := json.Marshal(body)
		rd = bytes.NewReader(js)
	} else {
		rd = bytes.NewReader(nil)
	}
	req, _ := http.NewRequest(method, e.url+path, rd)
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+e.tokens[role])
	if key != "" {
		req.Header.Set("Idempotency-Key", key)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		return 0, nil, nil, err
	}
	defer res.Body.Close()
	var b bytes.Buffer
	if _, err = b.ReadFrom(res.Body); err != nil {
		return 0, nil, nil, err
	}
	if err := spectest.Default.Check(req, res.StatusCode, res.Header, b.Bytes()); err != nil {
		e.t.Errorf("answer does not match the spec: %v (body %.300s)", err, b.Bytes())
	}
	return res.StatusCode, res.Header, b.Bytes(), nil
}

// TestDatabaseOutage cuts the server off its database while eight writers
// record coupons: every backend of the database is terminated
// (pg_terminate_backend) and new connections are refused (ALTER DATABASE ...
// ALLOW_CONNECTIONS false). Every route, token checks and /readyz included,
// must answer 503 problem+json with Retry-After (RFC 9110 section 10.2.3),
// never another 5xx; once connections are allowed again the same server
// recovers without a restart, and every write it acknowledged (201) is
// readable, stored once although writers resent it under its
// Idempotency-Key, and in the verified audit chain.
func TestDatabaseOutage(t *testing.T) {
	e, name, admin, _ := freshEnv(t)
	proc := e.procedure()
	ctx := context.Background()

	var (
		mu       sync.Mutex
		acked    []string
		marks    []string
		statuses = map[int]int{}
		phase    atomic.Int32 // 0 before, 1 cut off, 2 restored
		during   = map[int]int{}
		after    = map[int]int{}
	)
	stop := make(chan struct{})
	var wg sync.WaitGroup
	// Each writer records coupons one after another; a coupon answered 503
	// or 409 (its key still held) is sent again, same body, same key, until
	// it is acknowledged, as a careful client would.
	for w := 0; w < 8; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := 0; ; i++ {
				mark := fmt.Sprintf("OUT-%d-%d", w, i)
				body := couponBody(proc, "", mark)
				for {
					select {
					case <-stop:
						return
					default:
					}
					p := phase.Load()
					status, _, b, err := e.sendKey(http.MethodPost, "/v1/coupons", "technician", "key-"+mark, body)
					if err != nil {
						t.Errorf("writer %d: %v", w, err)
						return
					}
					mu.Lock()
					statuses[status]++
					switch p {
					case 1:
						during[status]++
					case 2:
						after[status]++
					}
					if status == http.StatusCreated {
						var rec struct{ ID string }
						_ = json.Unmarshal(b, &rec)
						acked = append(acked, rec.ID)
						marks = append(marks, mark)
					}
					if status == http.StatusConflict && !strings.Contains(string(b), `"field":"Idempotency-Key"`) {
						t.Errorf("writer %d: %s = 409 %s: written twice?", w, mark, b)
					}
					mu.Unlock()
					if status == http.StatusCreated {
						break
					}
					time.Sleep(20 * time.Millisecond) // a client backing off
				}
			}
		}(w)
	}

	time.Sleep(300 * time.Millisecond)
	phase.Store(1)
	if _, err := admin.Exec(ctx, "ALTER DATABASE "+name+" ALLOW_CONNECTIONS false"); err != nil {
		t.Fatal(err)
	}
	if _, err := admin.Exec(ctx, "SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = $1", name); err != nil {
		t.Fatal(err)
	}
	time.Sleep(300 * time.Millisecond)
	// Every kind of route while the database is out of reach: 503 with Retry-After.
	for _, rq := range []struct{ method, path, role string }{
		{http.MethodGet, "/readyz", ""},
		{http.MethodGet, "/v1/coupons", "auditor"},
		{http.MethodGet, "/v1/coupons/" + proc, "auditor"},
		{http.MethodGet, "/v1/audit/verify", "auditor"},
		{http.MethodGet, "/v1/export", "auditor"},
		{http.MethodPost, "/v1/procedures", "engineer"},
	} {
		var body any
		if rq.method == http.MethodPost {
			body = procedureBody(uniq("WPS"))
		}
		status, h, b, err := e.send(rq.method, rq.path, rq.role, body)
		if err != nil {
			t.Fatal(err)
		}
		if status != http.StatusServiceUnavailable || h.Get("Retry-After") == "" || h.Get("Content-Type") != "application/problem+json" {
			t.Errorf("%s %s while the database is cut off = %d Retry-After %q %s, want 503 problem+json with Retry-After",
				rq.method, rq.path, status, h.Get("Retry-After"), b)
		}
	}
	if h := e.healthz(); h != http.StatusOK {
		t.Errorf("/healthz while the database is cut off = %d, want 200 (it touches no database)", h)
	}
	time.Sleep(200 * time.Millisecond)

	phase.Store(2)
	if _, err := admin.Exec(ctx, "ALTER DATABASE "+name+" ALLOW_CONNECTIONS true"); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(15 * time.Second)
	for {
		mu.Lock()
		ok := after[http.StatusCreated] >= 40
		mu.Unlock()
		if ok || time.Now().After(deadline) {
			break
		}
		time.Sleep(50 * time.Millisecond)
	}
	close(stop)
	wg.Wait()

	t.Logf("statuses: all %v; while cut off %v; after %v; acknowledged %d", statuses, during, after, len(acked))
	for s := range statuses {
		if s != http.StatusCreated && s != http.StatusServiceUnavailable && s != http.StatusConflict {
			t.Errorf("a writer got %d, want only 201, 503 or 409 (its key still held)", s)
		}
	}
	if during[http.StatusServiceUnavailable] == 0 {
		t.Errorf("no writer saw 503 while the database was cut off: %v", during)
	}
	if after[http.StatusCreated] < 40 {
		t.Errorf("only %d writes after the database came back, want the server to recover without a restart", after[http.StatusCreated])
	}
	if status, _, b, _ := e.send(http.MethodGet, "/readyz", "", nil); status != http.StatusOK {
		t.Errorf("/readyz after recovery = %d %s, want 200", status, b)
	}
	for _, id := range acked {
		if r := e.do(http.MethodGet, "/v1/coupons/"+id, "auditor", nil); r.status != http.StatusOK {
			t.Errorf("acknowledged coupon %s = %d after the outage, want 200", id, r.status)
		}
	}
	// Every mark sent (retries included) is stored exactly once.
	for _, m := range marks {
		if n := len(e.do(http.MethodGet, "/v1/coupons?coupon_mark="+m, "auditor", nil).items(t)); n != 1 {
			t.Errorf("coupon %s stored %d times, want once", m, n)
		}
	}
	r := e.do(http.MethodGet, "/v1/audit/verify", "auditor", nil)
	if r.status != http.StatusOK || !strings.Contains(string(r.body), `"ok":true`) {
		t.Errorf("audit verify after the outage = %d %s, want ok", r.status, r.body)
	}
}

// healthz reads /healthz.
func (e *testEnv) healthz() int {
	status, _, _, err := e.send(http.MethodGet, "/healthz", "", nil)
	if err != nil {
		e.t.Fatal(err)
	}
	return status
}

// TestClientClosedRequest abandons a list that waits on a lock: the server
// logs it at info as "client closed request" and logs no error.
func TestClientClosedRequest(t *testing.T) {
	e, name, _, logs := freshEnv(t)
	ctx := context.Background()
	e.coupon()
	// The coupon logged first: the sequencer writes coupon_list while it
	// reads coupons, so locking the two tables while it takes the coupon in
	// could deadlock with it.
	if err := e.store.AwaitLogged(ctx, e.site); err != nil {
		t.Fatal(err)
	}
	u := strings.Replace(dbtest.URL(t), dbName(dbtest.URL(t)), name, 1)
	conn, err := pgx.Connect(ctx, u)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	tx, err := conn.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(ctx, "LOCK TABLE coupons, coupon_list IN ACCESS EXCLUSIVE MODE"); err != nil {
		t.Fatal(err)
	}
	rctx, cancel := context.WithTimeout(ctx, 300*time.Millisecond)
	req, _ := http.NewRequestWithContext(rctx, http.MethodGet, e.url+"/v1/coupons", nil)
	req.Header.Set("Authorization", "Bearer "+e.tokens["auditor"])
	if res, err := http.DefaultClient.Do(req); err == nil {
		res.Body.Close()
		t.Fatalf("the list answered %d while its table was locked", res.StatusCode)
	}
	cancel()
	// Release the lock only once the abandoned list has stopped waiting for
	// it (the server saw the client leave and cancelled its query): released
	// sooner, the list could finish and answer 200 before the server noticed.
	for waitUntil := time.Now().Add(5 * time.Second); time.Now().Before(waitUntil); time.Sleep(20 * time.Millisecond) {
		var waiting int
		if err := tx.QueryRow(ctx, `SELECT count(*) FROM pg_locks WHERE NOT granted AND relation IN ('coupons'::regclass, 'coupon_list'::regclass)`).Scan(&waiting); err != nil {
			t.Fatal(err)
		}
		if waiting == 0 {
			break
		}
	}
	_ = tx.Rollback(ctx)
	deadline := time.Now().Add(5 * time.Second)
	for !strings.Contains(logs.String(), "client closed request") && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond)
	}
	out := logs.String()
	if !strings.Contains(out, `"level":"INFO","msg":"client closed request"`) {
		t.Errorf("log has no info line \"client closed request\":\n%s", out)
	}
	if strings.Contains(out, `"level":"ERROR"`) {
		t.Errorf("an abandoned request was logged as an error:\n%s", out)
	}
}

// dbName is the database name at the end of a URL's path.
func dbName(u string) string {
	u, _, _ = strings.Cut(u, "?")
	return u[strings.LastIndex(u, "/")+1:]
}
