package db_test

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// BenchmarkProductionListCost measures what the production records list's
// key adds to a write and to the log sequencer: chunks of 5,000 records (in
// time order, ids in creation order, as a stream sends them) are stored as a
// stream stores them (StoreProductionChunk, the key's row of
// arrays included), and beside each, in a transaction rolled back, the key's
// write step alone (the row of arrays) and the sequencer's move of the same
// records into production_list (ProductionListRefresh, their log indexes
// given). It reports each one's time per chunk and per record, and the two
// steps as shares of the chunk's whole write.
func BenchmarkProductionListCost(b *testing.B) {
	const chunk = 5000
	s, site := dbtest.Store(b), dbtest.Site(b)
	a, ctx := actor(site), context.Background()
	proc, err := s.CreateProcedure(ctx, a, procedureData("WPS-"+uuid.NewString()[:8]))
	if err != nil {
		b.Fatal(err)
	}
	p := proc.ID
	var store, pending, move time.Duration
	for i := 0; i < b.N; i++ {
		rows := make([]db.ProductionRecordData, chunk)
		for j := range rows {
			rows[j] = productionRow(p, fmt.Sprintf("B-%d-%d", i, j), 200)
			// As a weld monitor sends them: in time order, a record every 5 s.
			rows[j].RecordedAt = time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC).Add(time.Duration(i*chunk+j) * 5 * time.Second)
		}
		prep, err := s.PrepareProductionChunk(ctx, a, rows, lineOf)
		if err != nil {
			b.Fatal(err)
		}
		t0 := time.Now()
		if _, err := s.StoreProductionChunk(ctx, prep); err != nil {
			b.Fatal(err)
		}
		store += time.Since(t0)
		// The same records again as the key's write and the sequencer's
		// move see them, with fresh ids, rolled back.
		recs := make([]db.ProductionRecord, chunk)
		ids, at := make([]uuid.UUID, chunk), make([]int64, chunk)
		for j := range recs {
			recs[j] = db.ProductionRecord{Site: site, ID: uuid.Must(uuid.NewV7()), BatchID: uuid.New(), CreatedAt: time.Now(), CreatedBy: "bench",
				ProductionRecordData: rows[j]}
			ids[j], at[j] = recs[j].ID, int64(1_000_000_000+i*chunk+j)
		}
		entry := uuid.New()
		tx, err := s.Pool().Begin(ctx)
		if err != nil {
			b.Fatal(err)
		}
		t1 := time.Now()
		if err := db.QueueProductionPending(ctx, tx, entry, recs); err != nil {
			b.Fatal(err)
		}
		t2 := time.Now()
		if _, err := tx.Exec(ctx, db.ProductionListRefresh, site, []uuid.UUID{entry}, ids, at); err != nil {
			b.Fatal(err)
		}
		pending, move = pending+t2.Sub(t1), move+time.Since(t2)
		if err := tx.Rollback(ctx); err != nil {
			b.Fatal(err)
		}
	}
	n := float64(b.N)
	b.ReportMetric(float64(store.Milliseconds())/n, "chunk-ms")
	b.ReportMetric(float64(pending.Microseconds())/n/1000, "key-write-ms")
	b.ReportMetric(float64(move.Microseconds())/n/1000, "sequencer-move-ms")
	b.ReportMetric(float64(move.Microseconds())/n/chunk, "sequencer-move-us/record")
	b.ReportMetric(float64(pending)/float64(store), "key-write-x-of-chunk")
	b.ReportMetric(float64(move)/float64(store), "sequencer-move-x-of-chunk")
}
