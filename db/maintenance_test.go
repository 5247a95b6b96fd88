package db_test

import (
	"context"
	"testing"

	"etchlog/db/dbtest"
)

// TestStatisticsKept reads the server's own setting (SHOW autovacuum, as
// psql would) and checks the Store reports it.
func TestStatisticsKept(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	var on string
	if err := dbtest.Conn(t).QueryRow(ctx, "SHOW autovacuum").Scan(&on); err != nil {
		t.Fatal(err)
	}
	kept, err := dbtest.Store(t).StatisticsKept(ctx)
	if err != nil || kept != (on == "on") {
		t.Errorf("StatisticsKept = %v, %v; the server's autovacuum is %q", kept, err, on)
	}
}
