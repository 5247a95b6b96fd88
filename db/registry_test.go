package db_test

import (
	"context"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"etchlog/db/dbtest"
	"etchlog/predict"
)

// missingChecks are registered columns that the migrations leave without a
// CHECK, with the reason.
var missingChecks = map[string]string{
	"calibrations.arc_length_mm": "the fit's arc length is validated by the API; adding a CHECK needs its own migration",
}

// otherMeanings are columns that share a registered name but hold something else.
var otherMeanings = map[string]string{
	"idempotency_keys.status": "the state of a retried request, not a procedure's status",
}

// copiedTables hold values copied from a row of another table whose CHECKs
// already hold them.
var copiedTables = map[string]string{
	"calibration_activations":         "the group key and model are copied from the activated calibration row",
	"coupon_list":                     "the current revision of each coupon, copied from coupons",
	"coupon_list_derived":             "a view of coupons",
	"production_records_all":          "a view of production_records and production_records_detached, whose CHECKs it shows",
	"production_list":                 "each logged live production record, copied from production_records",
	"production_list_derived":         "a view of production_records",
	"production_list_pending_rows":    "a view of production_list_pending, written with the records of production_records",
	"production_list_pending_derived": "a view of production_records",
	"section_list":                    "the current revision's acceptance of each section, copied from measurements",
	"section_list_derived":            "a view of measurements",
	"qualification_list":              "the current logged revision of each PQR and its logged sign-off, copied from qualification_records and sign_offs",
	"qualification_list_derived":      "a view of qualification_records",
	"procedure_list":                  "the current logged revision of each procedure and its logged sign-off, copied from procedures and sign_offs",
	"procedure_list_derived":          "a view of procedures",
}

var (
	// bound matches one side of a numeric CHECK as pg_get_constraintdef
	// prints it: (current_a >= (10)::double precision), (preheat_c >= ('-20'::integer)::…), (pass_number <= 500).
	bound = regexp.MustCompile(`\((\w+) (>=|>|<=|<) \(*'?(-?[0-9.]+)'?`)
	// anyOf matches an enumerating CHECK: (process = ANY (ARRAY['GMAW'::text, …])).
	anyOf  = regexp.MustCompile(`\((\w+) = ANY \(ARRAY\[(.*?)\]\)`)
	quoted = regexp.MustCompile(`'([^']*)'::text`)
)

// TestChecksMatchRegistry reads every CHECK constraint of the migrated schema
// from the PostgreSQL catalog (pg_constraint, pg_get_constraintdef) and
// compares the bounds and allowed words of every column named like a
// registered quantity or enumeration with the registry: the database and
// the API refuse the same values.
func TestChecksMatchRegistry(t *testing.T) {
	ctx := context.Background()
	pool := dbtest.Store(t).Pool()
	type side struct {
		v    float64
		open bool
		seen bool
	}
	type colBounds struct{ lo, hi side }
	nums := map[string]*colBounds{}
	words := map[string][]string{}
	rows, err := pool.Query(ctx, `SELECT c.conrelid::regclass::text, pg_get_constraintdef(c.oid)
		FROM pg_constraint c WHERE c.contype = 'c' AND c.connamespace = 'public'::regnamespace`)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var table, def string
		if err := rows.Scan(&table, &def); err != nil {
			t.Fatal(err)
		}
		for _, m := range bound.FindAllStringSubmatch(def, -1) {
			v, err := strconv.ParseFloat(m[3], 64)
			if err != nil {
				t.Fatalf("%s: %s: %v", table, def, err)
			}
			key := table + "." + m[1]
			if nums[key] == nil {
				nums[key] = &colBounds{}
			}
			switch m[2] {
			case ">=", ">":
				nums[key].lo = side{v, m[2] == ">", true}
			default:
				nums[key].hi = side{v, m[2] == "<", true}
			}
		}
		for _, m := range anyOf.FindAllStringSubmatch(def, -1) {
			for _, w := range quoted.FindAllStringSubmatch(m[2], -1) {
				words[table+"."+m[1]] = append(words[table+"."+m[1]], w[1])
			}
		}
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}

	cols, err := pool.Query(ctx, `SELECT table_name || '.' || column_name, column_name FROM information_schema.columns
		WHERE table_schema = 'public' ORDER BY 1`)
	if err != nil {
		t.Fatal(err)
	}
	checked := 0
	for cols.Next() {
		var key, col string
		if err := cols.Scan(&key, &col); err != nil {
			t.Fatal(err)
		}
		if _, copied := copiedTables[strings.Split(key, ".")[0]]; copied {
			continue
		}
		if q, ok := predict.LookupQuantity(col); ok && q.Name == col {
			b := nums[key]
			if b == nil {
				if _, known := missingChecks[key]; !known {
					t.Errorf("%s: no CHECK; the registry says %s", key, q.BoundsText())
				}
				continue
			}
			checked++
			if !b.lo.seen || b.lo.v != q.Min || b.lo.open != q.MinOpen {
				t.Errorf("%s: CHECK lower bound %v (open %v), registry %v (open %v)", key, b.lo.v, b.lo.open, q.Min, q.MinOpen)
			}
			hi := b.hi
			if !hi.seen {
				hi.v = math.Inf(1)
			}
			if hi.v != q.Max || hi.open != q.MaxOpen {
				t.Errorf("%s: CHECK upper bound %v (open %v), registry %v (open %v)", key, hi.v, hi.open, q.Max, q.MaxOpen)
			}
		}
		if e, ok := predict.LookupEnum(col); ok && otherMeanings[key] == "" {
			got := words[key]
			if got == nil {
				t.Errorf("%s: no CHECK; the registry allows %v", key, e.Values)
				continue
			}
			checked++
			want := e.Values
			if e.Blank {
				want = append([]string{""}, want...)
			}
			if !slices.Equal(sorted(got), sorted(want)) {
				t.Errorf("%s: CHECK allows %q, registry %q", key, got, want)
			}
		}
	}
	if err := cols.Err(); err != nil {
		t.Fatal(err)
	}
	if checked < 55 { // every table's registered columns: 58 today
		t.Errorf("compared only %d columns with the registry; the catalog query finds too little", checked)
	}
	t.Logf("compared %d columns with the registry", checked)
}

func sorted(s []string) []string {
	s = slices.Clone(s)
	slices.Sort(s)
	return s
}
