package api_test

import (
	"context"
	"fmt"
	"net/http"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// benchRecords is how many production records one benchmark iteration
// writes, in batches of benchBatch (the endpoint's largest).
const (
	benchRecords = 100_000
	benchBatch   = 1000
)

// BenchmarkProductionBatch writes 100,000 production records (fixture
// values, one in ten outside the current range) through POST
// /v1/production-records end to end (JSON, OpenAPI check, validation,
// CopyFrom, flag evaluation and CopyFrom of the flags, audit event), and
// side by side the same rows with a raw pgx CopyFrom per batch. Compare
// the records/s of the two (ratio = endpoint / raw).
func BenchmarkProductionBatch(b *testing.B) {
	e := newEnv(b)
	proc := e.rangedProcedure()
	bodies := make([]map[string]any, benchRecords/benchBatch)
	for j := range bodies {
		rows := make([]any, benchBatch)
		for i := range rows {
			a := 280.0
			if i%10 == 0 {
				a = 320
			}
			rows[i] = productionBody(proc, fmt.Sprintf("B%d-%d", j, i), a)
		}
		bodies[j] = map[string]any{"records": rows}
	}
	b.Run("Endpoint", func(b *testing.B) {
		for b.Loop() {
			for _, body := range bodies {
				if r := e.do(http.MethodPost, "/v1/production-records", "technician", body); r.status != http.StatusCreated {
					b.Fatalf("POST = %d %s", r.status, r.body)
				}
			}
		}
		b.ReportMetric(float64(benchRecords)*float64(b.N)/b.Elapsed().Seconds(), "records/s")
	})
	b.Run("RawCopyFrom", func(b *testing.B) {
		ctx := context.Background()
		pool := e.store.Pool()
		pid := uuid.MustParse(proc)
		cols := []string{"site", "id", "batch_id", "created_at", "created_by", "procedure_id", "weld_id", "welder_id",
			"recorded_at", "current_a", "voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min", "ctwd_mm"}
		at := time.Date(2026, 11, 20, 9, 30, 0, 0, time.UTC)
		for b.Loop() {
			for j := 0; j < benchRecords/benchBatch; j++ {
				batch := uuid.Must(uuid.NewV7())
				rows := make([][]any, benchBatch)
				for i := range rows {
					rows[i] = []any{e.site, uuid.Must(uuid.NewV7()), batch, at, "bench", pid, fmt.Sprintf("R%d-%d", j, i),
						"W-07", at, 280.0, 29.0, 6.0, 9.5, 19.0}
				}
				err := pgx.BeginFunc(ctx, pool, func(tx pgx.Tx) error {
					if _, err := tx.Exec(ctx, `INSERT INTO production_batches (site, id, created_at, created_by, record_count, first_id, last_id, procedure_ids)
						VALUES ($1, $2, $3, 'bench', $4, $5, $6, $7)`, e.site, batch, at, benchBatch, rows[0][1], rows[benchBatch-1][1], []uuid.UUID{pid}); err != nil {
						return err
					}
					_, err := tx.CopyFrom(ctx, pgx.Identifier{"production_records"}, cols, pgx.CopyFromRows(rows))
					return err
				})
				if err != nil {
					b.Fatal(err)
				}
			}
		}
		b.ReportMetric(float64(benchRecords)*float64(b.N)/b.Elapsed().Seconds(), "records/s")
	})
}
