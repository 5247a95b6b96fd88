package api_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net/http"
	"os"
	"runtime"
	"strconv"
	"sync/atomic"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/db"
)

// hash32 stands for a leaf hash and its tag in the raw copy with the log's rows.
var hash32 = make([]byte, 32)

// streamBenchRecords is how many records BenchmarkProductionStream writes:
// ETCHLOG_BENCH_STREAM_RECORDS (1000000 for the million), else 20,000.
func streamBenchRecords(b *testing.B) int {
	n := 20_000
	if v := os.Getenv("ETCHLOG_BENCH_STREAM_RECORDS"); v != "" {
		var err error
		if n, err = strconv.Atoi(v); err != nil || n < 1 {
			b.Fatalf("ETCHLOG_BENCH_STREAM_RECORDS=%q: want a positive count", v)
		}
	}
	return n
}

// benchRow is production record i of run as an NDJSON line: fixture values,
// one in ten above the procedure's current range, recorded over 12 months.
func benchRow(proc string, run, i int) []byte {
	a := 280
	if i%10 == 0 {
		a = 320
	}
	at := time.Date(2025, time.Month(1+i%12), 1+i%28, 6+i%12, i%60, 0, 0, time.UTC).Format(time.RFC3339)
	return fmt.Appendf(nil, `{"procedure_id":%q,"weld_id":"R%d-%d","welder_id":"W-%02d","recorded_at":%q,"current_a":%d,"voltage_v":29,"travel_speed_mm_s":6,"wire_feed_speed_m_min":9.5,"ctwd_mm":19}`+"\n",
		proc, run, i, i%40, at, a)
}

// BenchmarkProductionStream sends N production records (streamBenchRecords)
// as one NDJSON stream through POST /v1/production-records/stream end to end
// (HTTP, per-row binding and validation, chunks of 5000 each one transaction
// with its batch, records, weld claims, log leaves and flags), and side by
// side copies the same rows raw: pgx CopyFrom into production_records, in
// the same chunks, each one transaction with its batch row. It reports the
// stream's records/s, the raw COPY's, their ratio (x-of-raw), the time until
// the sequencer has logged every record, and the peak heap of the process
// (server and client) while the stream runs; the body is generated as it is
// sent, so the heap is the server's bound, not the stream's size.
func BenchmarkProductionStream(b *testing.B) {
	e := newEnv(b)
	proc := e.rangedProcedure()
	n := streamBenchRecords(b)
	ctx := context.Background()
	run := 0
	var streamS, rawS, logS, seqS float64
	var peak atomic.Uint64
	for b.Loop() {
		run++
		pr, pw := io.Pipe()
		go func() {
			for i := range n {
				if _, err := pw.Write(benchRow(proc, run, i)); err != nil {
					return
				}
			}
			pw.Close()
		}()
		done := make(chan struct{})
		go func() { // sample the heap while the stream runs
			var ms runtime.MemStats
			for {
				runtime.ReadMemStats(&ms)
				if ms.HeapInuse > peak.Load() {
					peak.Store(ms.HeapInuse)
				}
				select {
				case <-done:
					return
				case <-time.After(50 * time.Millisecond):
				}
			}
		}()
		req, err := http.NewRequest(http.MethodPost, e.url+"/v1/production-records/stream", pr)
		if err != nil {
			b.Fatal(err)
		}
		req.Header.Set("Content-Type", "application/x-ndjson")
		req.Header.Set("Authorization", "Bearer "+e.tokens["technician"])
		start := time.Now()
		res, err := http.DefaultClient.Do(req)
		streamS += time.Since(start).Seconds()
		if err != nil {
			b.Fatal(err)
		}
		body, _ := io.ReadAll(res.Body)
		res.Body.Close()
		close(done)
		if res.StatusCode != http.StatusOK {
			b.Fatalf("stream = %d %s", res.StatusCode, body)
		}
		fmt.Fprintf(os.Stderr, "stream of %d records: %.1f s (%.0f records/s), peak heap %.1f MiB\n",
			n, time.Since(start).Seconds(), float64(n)/time.Since(start).Seconds(), float64(peak.Load())/(1<<20))
		start = time.Now()
		err = e.store.AwaitLogged(ctx, e.site) // waits a bounded time: a big stream needs several waits
		for errors.Is(err, db.ErrNotLogged) && time.Since(start) < 30*time.Minute {
			err = e.store.AwaitLogged(ctx, e.site)
		}
		if err != nil {
			b.Fatal(err)
		}
		seqS += time.Since(start).Seconds()
		fmt.Fprintf(os.Stderr, "logged %.1f s after the stream's answer\n", time.Since(start).Seconds())
		rawS += rawCopy(b, e, proc, fmt.Sprintf("X%d-", run), n, false)
		fmt.Fprintf(os.Stderr, "raw COPY of the same rows: %.1f s\n", rawS)
		logS += rawCopy(b, e, proc, fmt.Sprintf("Y%d-", run), n, true)
	}
	streamRate, rawRate := float64(n*b.N)/streamS, float64(n*b.N)/rawS
	b.ReportMetric(streamRate, "records/s")
	b.ReportMetric(rawRate, "raw-records/s")
	b.ReportMetric(streamRate/rawRate, "x-of-raw")
	b.ReportMetric(float64(n*b.N)/logS/rawRate, "raw-with-log-x-of-raw")
	b.ReportMetric(streamS/float64(b.N), "stream-s")
	b.ReportMetric(seqS/float64(b.N), "logged-after-s")
	b.ReportMetric(float64(peak.Load())/(1<<20), "peak-heap-MiB")
}

// rawCopy copies the same n rows into production_records with pgx
// CopyFrom, in transactions of 5000 rows each with its batch row, and
// answers the seconds it took. With log it also copies what the log and the
// weld rule add per record, raw: a weld claim and a pending leaf (an
// untagged one, which the sequencer refuses: this is a measure, not a write
// the log takes).
func rawCopy(b *testing.B, e *testEnv, proc, prefix string, n int, log bool) float64 {
	ctx := context.Background()
	pid := uuid.MustParse(proc)
	cols := []string{"site", "id", "batch_id", "created_at", "created_by", "procedure_id", "weld_id", "welder_id",
		"recorded_at", "current_a", "voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min", "ctwd_mm"}
	const chunk = 5000
	start := time.Now()
	for from := 0; from < n; from += chunk {
		rows := make([][]any, 0, chunk)
		batch, now := uuid.Must(uuid.NewV7()), time.Now().UTC()
		for i := from; i < min(n, from+chunk); i++ {
			a := 280.0
			if i%10 == 0 {
				a = 320
			}
			at := time.Date(2025, time.Month(1+i%12), 1+i%28, 6+i%12, i%60, 0, 0, time.UTC)
			// Ids as [16]byte: pgx's fastest way to send a uuid (a uuid.UUID
			// goes through its driver.Valuer fallback, which costs CPU).
			rows = append(rows, []any{e.site, [16]byte(uuid.Must(uuid.NewV7())), [16]byte(batch), now, "bench", [16]byte(pid), prefix + strconv.Itoa(i),
				fmt.Sprintf("W-%02d", i%40), at, a, 29.0, 6.0, 9.5, 19.0})
		}
		var welds, pending [][]any
		if log {
			for _, r := range rows {
				welds = append(welds, []any{e.site, [16]byte(pid), r[6], r[1]})
				pending = append(pending, []any{e.site, "bench_raw", 1, r[1], 1, hash32, hash32, "bench", "create", "", now})
			}
		}
		err := pgx.BeginFunc(ctx, e.store.Pool(), func(tx pgx.Tx) error {
			if _, err := tx.Exec(ctx, `INSERT INTO production_batches (site, id, created_at, created_by, record_count, first_id, last_id, procedure_ids)
				VALUES ($1, $2, $3, 'bench', $4, $5, $6, $7)`, e.site, batch, now, len(rows), rows[0][1], rows[len(rows)-1][1], []uuid.UUID{pid}); err != nil {
				return err
			}
			if _, err := tx.CopyFrom(ctx, pgx.Identifier{"production_records"}, cols, pgx.CopyFromRows(rows)); err != nil || !log {
				return err
			}
			if _, err := tx.CopyFrom(ctx, pgx.Identifier{"production_welds"}, []string{"site", "procedure_id", "weld_id", "record_id"}, pgx.CopyFromRows(welds)); err != nil {
				return err
			}
			_, err := tx.CopyFrom(ctx, pgx.Identifier{"log_pending"}, []string{"site", "kind", "version", "record_id", "revision",
				"leaf_hash", "tag", "actor", "action", "reason", "at"}, pgx.CopyFromRows(pending))
			return err
		})
		if err != nil {
			b.Fatal(err)
		}
	}
	return time.Since(start).Seconds()
}
