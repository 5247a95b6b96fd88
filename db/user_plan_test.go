package db_test

import (
	"context"
	"crypto/sha256"
	"fmt"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestTokenLookupUsesIndexes: every request looks its token up (or checks
// the user it was let in as in its write), so the lookup must read
// api_users by index whatever the number of users and revisions: with 3,000
// users of 30 sites, each with a second revision, analysed, the plans of
// both statements read api_users with no sequential scan. The users are
// invented for the test.
func TestTokenLookupUsesIndexes(t *testing.T) {
	ctx := context.Background()
	_, conn := dbtest.FreshConn(t)
	if _, err := conn.Exec(ctx, `
		INSERT INTO api_users (site, name, role, token_sha256, created_at, id, revision, created_by, reason, voided)
		SELECT 'site-' || (g % 30), 'user-' || g, 'technician', sha256(('token-' || g || '-' || r)::bytea), now(),
			md5('user-' || g)::uuid, r, 'seed', CASE WHEN r = 1 THEN '' ELSE 'new token' END, false
		FROM generate_series(1, 3000) g CROSS JOIN generate_series(1, 2) r`); err != nil {
		t.Fatal(err)
	}
	if _, err := conn.Exec(ctx, "ANALYZE api_users"); err != nil {
		t.Fatal(err)
	}
	digest := sha256.Sum256([]byte("token-1500-2"))
	for _, st := range []struct {
		name, sql string
		args      []any
	}{
		{"lookup", db.UserByTokenSQL, []any{digest[:]}},
		{"write's check", db.UserCheckSQL, []any{digest[:], "site-0", "user-1500", "technician"}},
	} {
		var plan []map[string]any
		if err := conn.QueryRow(ctx, "EXPLAIN (FORMAT JSON) "+st.sql, st.args...).Scan(&plan); err != nil {
			t.Fatal(err)
		}
		root, _ := plan[0]["Plan"].(map[string]any)
		if scans := seqScansOf(root, "api_users"); scans > 0 {
			t.Errorf("%s: api_users read by a sequential scan (%d):\n%s", st.name, scans, planText(root))
		} else {
			t.Logf("%s: %s", st.name, planText(root))
		}
	}
}

// seqScansOf counts the sequential scans of table in a JSON plan.
func seqScansOf(node map[string]any, table string) int {
	n := 0
	if node["Node Type"] == "Seq Scan" && fmt.Sprint(node["Relation Name"]) == table {
		n++
	}
	plans, _ := node["Plans"].([]any)
	for _, p := range plans {
		if m, ok := p.(map[string]any); ok {
			n += seqScansOf(m, table)
		}
	}
	return n
}
