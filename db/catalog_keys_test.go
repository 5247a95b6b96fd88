package db_test

import (
	"context"
	"slices"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"etchlog/db"
	"etchlog/db/dbtest"
)

// TestKeysHoldSite reads the catalog of a migrated database and fails on any
// primary key, unique constraint, unique index or foreign key of a site's data
// that does not hold the column site. A table distributed by a column can only
// enforce a key that contains it (Citus documentation, "Distributed data
// modeling" and "Table management": unique constraints and foreign keys between
// distributed tables must include the distribution column; from memory). The
// tables that hold the same data for every site are named in
// db.ReferenceTables, and the Scaling section of DEVELOPERS.md says why.
func TestKeysHoldSite(t *testing.T) {
	t.Parallel()
	ctx := context.Background()
	conn := dbtest.Conn(t)

	// Keys: constraints (p, u, f) and unique indexes that back no constraint
	// (the partial ones, e.g. one code per procedure at revision 1), with
	// their columns by name; for a foreign key also the referenced table and
	// columns. Constraints a partition inherits from its parent are the
	// parent's and are checked there.
	rows, err := conn.Query(ctx, `
		SELECT c.conrelid::regclass::text, c.conname, c.contype::text,
		       ARRAY(SELECT a.attname::text FROM unnest(c.conkey) k
		             JOIN pg_attribute a ON a.attrelid = c.conrelid AND a.attnum = k),
		       COALESCE(c.confrelid::regclass::text, ''),
		       ARRAY(SELECT a.attname::text FROM unnest(COALESCE(c.confkey, '{}')) k
		             JOIN pg_attribute a ON a.attrelid = c.confrelid AND a.attnum = k)
		FROM pg_constraint c
		JOIN pg_namespace n ON n.oid = c.connamespace
		WHERE n.nspname = 'public' AND c.contype IN ('p', 'u', 'f') AND c.conparentid = 0
		UNION ALL
		SELECT i.indrelid::regclass::text, i.indexrelid::regclass::text, 'i',
		       ARRAY(SELECT a.attname::text FROM unnest(i.indkey) k
		             JOIN pg_attribute a ON a.attrelid = i.indrelid AND a.attnum = k),
		       '', '{}'::text[]
		FROM pg_index i
		JOIN pg_class t ON t.oid = i.indrelid
		JOIN pg_namespace n ON n.oid = t.relnamespace
		WHERE n.nspname = 'public' AND i.indisunique
		  AND NOT EXISTS (SELECT 1 FROM pg_constraint c WHERE c.conindid = i.indexrelid)
		  AND NOT EXISTS (SELECT 1 FROM pg_inherits h WHERE h.inhrelid = i.indrelid)
		ORDER BY 1, 2`)
	if err != nil {
		t.Fatal(err)
	}
	type key struct {
		table, name, kind string
		cols              []string
		refTable          string
		refCols           []string
	}
	keys, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (key, error) {
		var k key
		err := r.Scan(&k.table, &k.name, &k.kind, &k.cols, &k.refTable, &k.refCols)
		return k, err
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(keys) < 20 {
		t.Fatalf("read %d keys from the catalog; a migrated database has more than 20", len(keys))
	}
	reference := func(table string) bool { return slices.Contains(db.ReferenceTables, table) }
	// Tables whose keys are still without site, each waiting for the
	// migration that rebuilds it. The list may only shrink: a table in it
	// whose keys all hold site fails the test until it is taken out.
	pending := map[string]bool{}
	checked := 0
	for _, k := range keys {
		if reference(k.table) {
			continue
		}
		if _, ok := pending[k.table]; ok {
			if !slices.Contains(k.cols, "site") {
				pending[k.table] = true
			}
			continue
		}
		if k.kind == "f" && reference(k.refTable) {
			continue // a reference table is on every node: any row may point to it
		}
		checked++
		what := map[string]string{"p": "primary key", "u": "unique constraint", "i": "unique index", "f": "foreign key"}[k.kind]
		if !slices.Contains(k.cols, "site") {
			t.Errorf("%s %s of %s is (%s): it does not hold site, so the table cannot be distributed by site",
				what, k.name, k.table, strings.Join(k.cols, ", "))
			continue
		}
		// A foreign key to another site-distributed table must match site
		// with site, so that both rows live on the same shard.
		if k.kind == "f" {
			i := slices.Index(k.cols, "site")
			if i >= len(k.refCols) || k.refCols[i] != "site" {
				t.Errorf("foreign key %s of %s: (%s) → %s (%s) does not match site with site",
					k.name, k.table, strings.Join(k.cols, ", "), k.refTable, strings.Join(k.refCols, ", "))
			}
		}
	}
	for table, without := range pending {
		if !without {
			t.Errorf("every key of %s holds site now: take it out of the pending list", table)
		}
	}
	t.Logf("%d keys of site data checked; reference tables %v", checked, db.ReferenceTables)
}
