package api_test

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"net/http"
	"net/http/httptest"
	"os"
	"strconv"
	"sync"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// benchImportRows is the benchmark's file size in data rows (three sections
// per coupon): ETCHLOG_BENCH_IMPORT_ROWS, default 100,000.
func benchImportRows(tb testing.TB) int {
	n := 100_000
	if v := os.Getenv("ETCHLOG_BENCH_IMPORT_ROWS"); v != "" {
		var err error
		if n, err = strconv.Atoi(v); err != nil || n < 3 {
			tb.Fatalf("ETCHLOG_BENCH_IMPORT_ROWS=%q: want a whole number of at least 3", v)
		}
	}
	return n
}

// benchPart is one part of the benchmark's file: its CSV text (header
// included), the file row of its first data row, and the same rows as raw
// coupon and section rows in metric units.
type benchPart struct {
	body              []byte
	firstRow          int
	coupons, sections [][]any
}

// benchImportFile is n rows of plausible fillet coupons (three sections
// each, inch-pound thickness and travel speed) on procedure proc, marked
// with prefix, cut into parts of about partSize bytes between coupons, as
// "etchlog import coupons" sends it.
func benchImportFile(tb testing.TB, proc, prefix, rawSite string, n, partSize int) []benchPart {
	tb.Helper()
	header := []string{"procedure_id", "coupon_mark", "welder_id", "welded_on", "joint_type", "thickness_in", "pass_number",
		"current_a", "voltage_v", "travel_speed_in_min", "wire_feed_speed_m_min", "ctwd_mm", "position",
		"section", "penetration_mm", "bead_width_mm", "reinforcement_mm", "acceptance", "inspector"}
	var part bytes.Buffer
	w := csv.NewWriter(&part)
	start := func() {
		part.Reset()
		if err := w.Write(header); err != nil {
			tb.Fatal(err)
		}
	}
	start()
	var parts []benchPart
	cur := benchPart{firstRow: 2}
	now := time.Now().UTC()
	pid := uuid.MustParse(proc)
	var cid uuid.UUID
	for i := range n {
		c, s := i/3, i%3
		if s == 0 {
			w.Flush()
			if part.Len() > partSize {
				cur.body = bytes.Clone(part.Bytes())
				parts = append(parts, cur)
				cur = benchPart{firstRow: i + 2}
				start()
			}
			cid = uuid.Must(uuid.NewV7())
			cur.coupons = append(cur.coupons, []any{rawSite, cid, 1, now, "bench", "", false, pid, nil, fmt.Sprintf("%s-%d", prefix, c),
				"W-1", "", "", time.Date(2026, 11, 3, 0, 0, 0, 0, time.UTC), "fillet", 0.25 * 25.4, 1, 170.0 + float64(c%40), 21.0,
				12 * 25.4 / 60, 7.6, 15.0, nil, "", nil, "2F", nil, nil})
		}
		label := string(rune('A' + s))
		pen := 1.2 + 0.1*float64(s)
		if err := w.Write([]string{proc, fmt.Sprintf("%s-%d", prefix, c), "W-1", "2026-11-03", "fillet", "0.25", "1",
			strconv.Itoa(170 + c%40), "21", "12", "7.6", "15", "2F", label, strconv.FormatFloat(pen, 'g', -1, 64), "7.5", "1.1", "accept", "QC-3"}); err != nil {
			tb.Fatal(err)
		}
		cur.sections = append(cur.sections, []any{rawSite, uuid.Must(uuid.NewV7()), 1, now, "bench", "", false, cid, label, pen, 7.5, 1.1,
			nil, nil, nil, nil, "accept", "QC-3", ""})
	}
	w.Flush()
	cur.body = bytes.Clone(part.Bytes())
	return append(parts, cur)
}

// benchPartSize is the part size "etchlog import coupons" sends by default.
const benchPartSize = 256 << 10

// benchCouponCols and benchSectionCols are the columns of benchPart's raw rows.
var benchCouponCols = []string{"site", "id", "revision", "created_at", "created_by", "reason", "voided", "procedure_id",
	"qualification_record_id", "coupon_mark", "welder_id", "power_source_id", "filler_lot", "welded_on", "joint_type",
	"thickness_mm", "pass_number", "current_a", "voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min", "ctwd_mm",
	"wire_diameter_mm", "shielding_gas", "polarity", "position", "preheat_c", "interpass_c"}
var benchSectionCols = []string{"site", "id", "revision", "created_at", "created_by", "reason", "voided", "coupon_id", "section",
	"penetration_mm", "bead_width_mm", "reinforcement_mm", "leg1_mm", "leg2_mm", "throat_mm", "fused_area_mm2",
	"acceptance", "inspector", "remark"}

// rawPart copies one part's raw rows in one transaction, as the import
// writes it.
func rawPart(b *testing.B, e *testEnv, p benchPart) {
	ctx := context.Background()
	err := pgx.BeginFunc(ctx, e.store.Pool(), func(tx pgx.Tx) error {
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"coupons"}, benchCouponCols, pgx.CopyFromRows(p.coupons)); err != nil {
			return err
		}
		_, err := tx.CopyFrom(ctx, pgx.Identifier{"measurements"}, benchSectionCols, pgx.CopyFromRows(p.sections))
		return err
	})
	if err != nil {
		b.Error(err)
	}
}

// inOrder runs do(0), ..., do(n-1) in that order, k at a time.
func inOrder(k, n int, do func(i int)) {
	work := make(chan int)
	var wg sync.WaitGroup
	for range k {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				do(i)
			}
		}()
	}
	for i := range n {
		work <- i
	}
	close(work)
	wg.Wait()
}

// BenchmarkCouponImport imports a file of coupons with their sections
// through POST /v1/coupons/import (in parts, as the command sends them, two
// in flight: each part parsed, checked, written with its marks, log leaves
// and flags, in its own transaction) beside a raw COPY of the same coupon
// and section rows into the same tables, one transaction per part likewise,
// and reports both rates and their ratio (x-of-raw; raw2-x against the raw
// copy sent two parts at a time too), and apart from them how long the log took to
// take in the import's leaves after its last part was answered.
func BenchmarkCouponImport(b *testing.B) {
	e := newEnv(b)
	proc := e.procedure()
	n := benchImportRows(b)
	ctx := context.Background()
	var importTime, rawTime, raw2Time, logTime, firstTime, lastTime time.Duration
	var firstRows, lastRows, logged, logLeft int
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		parts := benchImportFile(b, proc, fmt.Sprintf("B%d-%d", i, time.Now().UnixNano()), benchRawSite(e.site), n, benchPartSize)
		b.StartTimer()

		t0 := time.Now()
		for _, p := range parts {
			rawPart(b, e, p)
		}
		rawTime += time.Since(t0)

		// The first and the last tenth of the parts are timed apart too: a
		// part that costs more as the site grows shows as a slower last tenth.
		// The final part, shorter than the others, is in neither.
		tenth := max(1, (len(parts)-1)/10)
		t0 = time.Now()
		var mu sync.Mutex
		inOrder(2, len(parts), func(k int) { // two parts in flight, as the command sends them (importInFlight)
			p := parts[k]
			tp := time.Now()
			req := httptest.NewRequest(http.MethodPost, fmt.Sprintf("/v1/coupons/import?mode=commit&first_row=%d", p.firstRow), bytes.NewReader(p.body))
			req.Header.Set("Content-Type", "text/csv")
			req.Header.Set("Authorization", "Bearer "+e.tokens["technician"])
			rec := httptest.NewRecorder()
			e.srv.ServeHTTP(rec, req)
			if rec.Code != http.StatusOK {
				b.Errorf("import part %d = %d %.300s", k, rec.Code, rec.Body)
			}
			mu.Lock()
			defer mu.Unlock()
			switch {
			case k < tenth:
				firstTime += time.Since(tp)
				firstRows += len(p.sections)
			case k >= len(parts)-1-tenth && k < len(parts)-1:
				lastTime += time.Since(tp)
				lastRows += len(p.sections)
			}
		})
		if b.Failed() {
			b.FailNow()
		}
		importTime += time.Since(t0)
		b.StopTimer()
		// The raw copy again, two parts at a time like the import, of rows
		// of their own: the baseline the import's two in flight could be
		// held to instead (raw2-x).
		raw2 := benchImportFile(b, proc, fmt.Sprintf("R%d-%d", i, time.Now().UnixNano()), benchRawSite(e.site)+"-2", n, benchPartSize)
		t0 = time.Now()
		inOrder(2, len(raw2), func(k int) { rawPart(b, e, raw2[k]) })
		raw2Time += time.Since(t0)
		// The sequencer's backlog is not the next round's: wait it out, and
		// report apart how long the log took to take in the import's leaves
		// after the last part was answered (log-s) and at what rate
		// (log-leaves/s). Waiting is bounded (ETCHLOG_BENCH_IMPORT_LOG_WAIT,
		// default 15m): after the last round, leaves still pending then are
		// reported (log-left) instead of failing the run.
		before, err := pendingLeaves(ctx, e)
		if err != nil {
			b.Fatal(err)
		}
		t0 = time.Now()
		deadline := t0.Add(benchLogWait(b))
		for {
			err := e.store.AwaitLogged(ctx, e.site)
			if err == nil {
				break
			}
			if !errors.Is(err, db.ErrNotLogged) {
				b.Fatal(err)
			}
			if time.Now().After(deadline) {
				if i < b.N-1 {
					b.Fatalf("log after %s: %v", time.Since(t0).Round(time.Second), err)
				}
				break
			}
		}
		logTime += time.Since(t0)
		left, err := pendingLeaves(ctx, e)
		if err != nil {
			b.Fatal(err)
		}
		logged += before - left
		logLeft = left
		b.StartTimer()
	}
	rows := float64(n) * float64(b.N)
	b.ReportMetric(rows/importTime.Seconds(), "import-rows/s")
	b.ReportMetric(rows/rawTime.Seconds(), "copy-rows/s")
	b.ReportMetric(rawTime.Seconds()/importTime.Seconds(), "x-of-raw")
	b.ReportMetric(raw2Time.Seconds()/importTime.Seconds(), "raw2-x")
	b.ReportMetric(float64(firstRows)/firstTime.Seconds(), "first-tenth-rows/s")
	b.ReportMetric(float64(lastRows)/lastTime.Seconds(), "last-tenth-rows/s")
	b.ReportMetric(logTime.Seconds()/float64(b.N), "log-s")
	b.ReportMetric(float64(logged)/logTime.Seconds(), "log-leaves/s")
	b.ReportMetric(float64(logLeft), "log-left")
	b.ReportMetric(0, "ns/op")
}

// pendingLeaves counts the env site's leaves not yet in the log (a pending
// entry of many leaves counts each leaf it names).
func pendingLeaves(ctx context.Context, e *testEnv) (int, error) {
	var n int
	err := e.store.Pool().QueryRow(ctx, `SELECT coalesce(sum(coalesce(cardinality(record_ids), 1)), 0)
		FROM log_pending WHERE site = $1`, e.site).Scan(&n)
	return n, err
}

// benchLogWait bounds the wait for the log after an import round:
// ETCHLOG_BENCH_IMPORT_LOG_WAIT (a Go duration), default 15 minutes.
func benchLogWait(tb testing.TB) time.Duration {
	v := os.Getenv("ETCHLOG_BENCH_IMPORT_LOG_WAIT")
	if v == "" {
		return 15 * time.Minute
	}
	d, err := time.ParseDuration(v)
	if err != nil || d <= 0 {
		tb.Fatalf("ETCHLOG_BENCH_IMPORT_LOG_WAIT=%q: want a duration such as 10m", v)
	}
	return d
}

// benchRawSite is the site of the raw copy's rows: one that sorts before
// the import's, so that in every index leading with the site both copies
// add their rows at the index's end. Named after the import's site with a
// suffix, it sorted after it, and the import, run second, inserted its rows
// before the raw copy's, in the middle of each index (where a full page
// splits in two halves, not at the end).
func benchRawSite(site string) string { return "0-raw-" + site }
