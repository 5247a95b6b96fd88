package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/http/httptrace"
	"regexp"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/openapi"
	"etchlog/openapi/spectest"
)

func TestMain(m *testing.M) { dbtest.Main(counted{m}) }

// counted runs the tests, then says how many answers were checked against the spec.
type counted struct{ m *testing.M }

func (c counted) Run() int {
	code := c.m.Run()
	fmt.Printf("spectest: %d answers checked against openapi/openapi.yaml\n", spectest.Default.Checked())
	return code
}

// lineBuffer collects what a command writes, safe for the command's
// goroutines and the test, and hands each complete line to a channel.
type lineBuffer struct {
	mu    sync.Mutex
	buf   bytes.Buffer
	part  []byte
	lines chan string
}

func newLineBuffer() *lineBuffer { return &lineBuffer{lines: make(chan string, 1000)} }

func (b *lineBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	b.buf.Write(p)
	b.part = append(b.part, p...)
	for {
		i := bytes.IndexByte(b.part, '\n')
		if i < 0 {
			return len(p), nil
		}
		select {
		case b.lines <- string(b.part[:i]):
		default:
		}
		b.part = b.part[i+1:]
	}
}

// String returns everything written so far.
func (b *lineBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

// running is a command started with run in the background.
type running struct {
	base           string // http://host:port from the "listening on" line
	done           chan error
	stdout, stderr *lineBuffer
}

var listening = regexp.MustCompile(`listening on (http://\S+)`)

// start runs the command with DATABASE_URL set to dbURL and waits until it
// says where it listens.
func start(t *testing.T, ctx context.Context, dbURL string, args ...string) *running {
	t.Helper()
	env := map[string]string{"DATABASE_URL": dbURL, "ETCHLOG_LOG_KEY": dbtest.PrivateKey}
	r := &running{done: make(chan error, 1), stdout: newLineBuffer(), stderr: newLineBuffer()}
	go func() { r.done <- run(ctx, args, func(k string) string { return env[k] }, r.stdout, r.stderr) }()
	timeout := time.After(60 * time.Second)
	for {
		select {
		case line := <-r.stdout.lines:
			if m := listening.FindStringSubmatch(line); m != nil {
				r.base = m[1]
				return r
			}
		case err := <-r.done:
			t.Fatalf("run %v ended before listening: %v\nstderr:\n%s", args, err, r.stderr)
		case <-timeout:
			t.Fatalf("run %v: no \"listening on\" line within 60 s\nstdout:\n%s", args, r.stdout)
		}
	}
}

// stop waits for the command to return after its context was cancelled.
func (r *running) stop(t *testing.T) error {
	t.Helper()
	select {
	case err := <-r.done:
		return err
	case <-time.After(15 * time.Second):
		t.Fatalf("run did not return within 15 s of cancellation (the drain limit is 10 s)")
		return nil
	}
}

// get fetches base+path with an optional bearer token and returns status,
// Content-Type and body; an answer that does not match openapi.yaml fails the test.
func get(t *testing.T, base, path, token string) (int, string, []byte) {
	t.Helper()
	req, _ := http.NewRequest(http.MethodGet, base+path, nil)
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatalf("GET %s: %v", path, err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	if err := spectest.Default.Check(req, res.StatusCode, res.Header, b); err != nil {
		t.Errorf("answer does not match the spec: %v", err)
	}
	return res.StatusCode, res.Header.Get("Content-Type"), b
}

// jsonLines checks that every line of a log is one JSON object and returns their messages.
func jsonLines(t *testing.T, log string) []string {
	t.Helper()
	var msgs []string
	sc := bufio.NewScanner(strings.NewReader(log))
	for sc.Scan() {
		var rec struct {
			Msg string `json:"msg"`
		}
		if err := json.Unmarshal(sc.Bytes(), &rec); err != nil {
			t.Errorf("log line is not JSON: %q", sc.Text())
			continue
		}
		msgs = append(msgs, rec.Msg)
	}
	return msgs
}

// refused reports whether nothing accepts connections at base any more.
func refused(base string) bool {
	c, err := net.DialTimeout("tcp", strings.TrimPrefix(base, "http://"), time.Second)
	if err == nil {
		c.Close()
		return false
	}
	return true
}

// TestServe boots the whole server as "etchlog serve" does, calls its public
// endpoints, then cancels it while a request is still being uploaded: the
// listener closes, the request completes, and run returns nil.
func TestServe(t *testing.T) {
	t.Parallel()
	store, site := dbtest.Store(t), dbtest.Site(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	token, _ := db.NewToken()
	if err := dbtest.Owner(t).PutUser(ctx, db.User{Site: site, Name: "tech", Role: db.RoleTechnician}, token); err != nil {
		t.Fatal(err)
	}
	proc, err := store.CreateProcedure(ctx, db.Actor{Site: site, Name: "eng", Role: db.RoleEngineer}, db.ProcedureData{
		Code: "WPS-S-1", Title: "fixture", Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: 0.9,
		Polarity: "DCEP", Positions: []string{"2F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 3, ThicknessMaxMM: 12, Status: "draft",
	})
	if err != nil {
		t.Fatal(err)
	}
	r := start(t, ctx, dbtest.URL(t), "serve", "-addr", "127.0.0.1:0")

	for _, c := range []struct {
		path, contentType, body string
		status                  int
	}{
		{"/healthz", "application/json", `{"status":"ok"}`, 200},
		{"/readyz", "application/json", `{"status":"ready"}`, 200},
		{"/openapi.yaml", "application/yaml", string(openapi.Spec), 200},
		{"/v1/coupons", "application/problem+json", "", 401},
	} {
		status, ct, body := get(t, r.base, c.path, "")
		if status != c.status || !strings.HasPrefix(ct, c.contentType) || (c.body != "" && strings.TrimSpace(string(body)) != strings.TrimSpace(c.body)) {
			t.Errorf("GET %s = %d %q %.80s, want %d %q %.80s", c.path, status, ct, body, c.status, c.contentType, c.body)
		}
	}

	// A coupon whose body is still on its way when the server is told to stop (a fixture).
	coupon := `{"procedure_id": "` + proc.ID.String() + `", "coupon_mark": "C-S-1", "welder_id": "W-07",
		"welded_on": "2026-11-03", "joint_type": "fillet", "thickness_mm": 6, "pass_number": 1, "current_a": 180,
		"voltage_v": 21, "travel_speed_mm_s": 5, "wire_diameter_mm": 0.9, "polarity": "DCEP", "position": "2F"}`
	pr, pw := io.Pipe()
	req, _ := http.NewRequest(http.MethodPost, r.base+"/v1/coupons", pr)
	req.Header.Set("Authorization", "Bearer "+token)
	req.Header.Set("Content-Type", "application/json")
	// The server drops a connection whose request headers it reads only after
	// shutdown began, so the test must know they were read before it cancels.
	// "Expect: 100-continue" (RFC 9110 section 10.1.1) gives that signal: the
	// server answers 100 once the handler starts reading the body.
	req.Header.Set("Expect", "100-continue")
	reading := make(chan struct{}) // the handler is reading the body
	req = req.WithContext(httptrace.WithClientTrace(context.Background(), &httptrace.ClientTrace{Got100Continue: func() { close(reading) }}))
	answer := make(chan int, 1)
	go func() {
		client := &http.Client{Transport: &spectest.Transport{Base: &http.Transport{DisableKeepAlives: true, ExpectContinueTimeout: time.Minute},
			Checker: spectest.Default, Fail: t.Errorf}}
		res, err := client.Do(req)
		if err != nil {
			t.Errorf("in-flight POST: %v", err)
			answer <- 0
			return
		}
		res.Body.Close()
		answer <- res.StatusCode
	}()
	select {
	case <-reading:
	case <-time.After(10 * time.Second):
		t.Fatal("the in-flight POST got no 100 Continue within 10 s")
	}
	// io.Pipe: the write returns once the client has taken the first half.
	if _, err := io.WriteString(pw, coupon[:len(coupon)/2]); err != nil {
		t.Fatal(err)
	}
	cancel()
	for deadline := time.Now().Add(10 * time.Second); !refused(r.base); time.Sleep(20 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Fatal("the listener still accepts connections 10 s after cancellation")
		}
	}
	io.WriteString(pw, coupon[len(coupon)/2:])
	pw.Close()
	if status := <-answer; status != http.StatusCreated {
		t.Errorf("request in flight during shutdown: status %d, want 201 (drained, not cut)\nserver log:\n%s", status, r.stderr)
	}
	if err := r.stop(t); err != nil {
		t.Errorf("run after cancellation = %v, want nil (graceful shutdown)", err)
	}
	if msgs := jsonLines(t, r.stderr.String()); !slices.Contains(msgs, "shutting down") {
		t.Errorf("log messages %q lack \"shutting down\"", msgs)
	}
}

// TestDemo runs "etchlog demo" twice on a fresh database of its own: the
// first run loads the invented shop, the second finds it and loads nothing more.
func TestDemo(t *testing.T) {
	t.Parallel()
	dbURL := dbtest.EmptyDatabase(t)
	var counts []int
	for i, want := range []string{"demo: loaded the invented shop", "demo: the demo shop was already loaded"} {
		ctx, cancel := context.WithCancel(context.Background())
		r := start(t, ctx, dbURL, "demo", "-addr", "127.0.0.1:0")
		if out := r.stdout.String(); !strings.Contains(out, want) {
			t.Errorf("run %d stdout:\n%s\nwant a line %q", i+1, out, want)
		}
		status, _, body := get(t, r.base, "/v1/coupons?limit=500&include_voided=true", demoUsers[2].token)
		var page struct{ Items []json.RawMessage }
		if err := json.Unmarshal(body, &page); status != 200 || err != nil || len(page.Items) == 0 {
			t.Errorf("run %d: GET /v1/coupons as the demo auditor = %d, %d coupons (%v), want some", i+1, status, len(page.Items), err)
		}
		counts = append(counts, len(page.Items))
		if status, _, body := get(t, r.base, "/v1/audit/verify", demoUsers[2].token); status != 200 || !bytes.Contains(body, []byte(`"ok":true`)) {
			t.Errorf("run %d: audit verify = %d %s, want ok", i+1, status, body)
		}
		// The cold-lapped coupon TR-101-06 has sections under WPS-TR-101's 1 mm
		// minimum: a requirement flag in plain words, not only a model flag.
		if status, _, body := get(t, r.base, "/v1/flags?kind=requirement&limit=500", demoUsers[2].token); status != 200 ||
			!bytes.Contains(body, []byte("mm that WPS-TR-101 rev 1 requires")) {
			t.Errorf("run %d: requirement flags = %d %s, want one naming WPS-TR-101 rev 1", i+1, status, body)
		} else if i == 0 {
			t.Logf("requirement flags: %s", body)
		}
		cancel()
		if err := r.stop(t); err != nil {
			t.Errorf("run %d after cancellation = %v, want nil", i+1, err)
		}
	}
	if counts[1] != counts[0] {
		t.Errorf("coupons after the second run = %d, want %d as after the first (loaded once)", counts[1], counts[0])
	}
}
