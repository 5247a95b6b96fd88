package db_test

import (
	"context"
	"testing"

	"github.com/jackc/pgx/v5"
)

// planSite holds the rows the list plans test reads; planOther is a second
// site of the same shape, so every table holds more than one site as it does
// in service.
const planSite, planOther = "plans", "plans-other"

// Seed sizes: large enough that the planner prices a full scan of a record
// table above an index path, small enough to seed in seconds.
const (
	planCoupons    = 12000
	planProduction = 8000
	planPQRs       = 6000
	planProcedures = 5000
	planProcIDs    = 60  // procedures coupons and production records refer to
	planWelders    = 250 // welder ids in use
	planDays       = 2500
)

// seedPlans writes synthetic rows and their log leaves straight into the
// tables (as the superuser: no tags, no sequencer), then ANALYZEs them so the
// planner sees realistic statistics. The values only need plausible spreads
// (many procedures, welders and days, one coupon mark each); they are not
// reference data.
func seedPlans(ctx context.Context, tb testing.TB, conn *pgx.Conn) {
	tb.Helper()
	seedSites(ctx, tb, conn, planSite, planOther)
	// The coupons, sections, production records, sign-offs, PQRs and procedures lists' keys, as the sequencer would have
	// written them (derived once the records have statistics).
	if _, err := conn.Exec(ctx, "ANALYZE"); err != nil {
		tb.Fatal(err)
	}
	deriveLists(ctx, tb, conn, "", true)
}

// seedSites writes seedStatements' rows for each site. Row triggers (a
// section's uniqueness takes a lock per coupon) are for the service's
// writes; the seed's rows are unique by construction, so they are off.
func seedSites(ctx context.Context, tb testing.TB, conn *pgx.Conn, sites ...string) {
	tb.Helper()
	if _, err := conn.Exec(ctx, "SET session_replication_role = replica"); err != nil {
		tb.Fatal(err)
	}
	for _, site := range sites {
		for _, q := range seedStatements {
			if _, err := conn.Exec(ctx, q, pgx.NamedArgs{"site": site, "coupons": planCoupons,
				"production": planProduction, "pqrs": planPQRs, "procedures": planProcedures,
				"procids": planProcIDs, "welders": planWelders, "days": planDays}); err != nil {
				tb.Fatalf("seed %s: %v\n%s", site, err, q)
			}
		}
	}
	if _, err := conn.Exec(ctx, "RESET session_replication_role"); err != nil {
		tb.Fatal(err)
	}
}

// listKeys are the list key tables, each filled from its derivation view.
var listKeys = []string{"coupon_list", "section_list", "production_list", "sign_off_list", "qualification_list", "procedure_list"}

// deriveLists fills the list keys from their derivations, as the sequencer
// would have written them: every site's rows, or site's alone; with analyze
// each key is analysed after.
func deriveLists(ctx context.Context, tb testing.TB, conn *pgx.Conn, site string, analyze bool) {
	tb.Helper()
	for _, k := range listKeys {
		q := "INSERT INTO " + k + " SELECT * FROM " + k + "_derived"
		args := []any{}
		if site != "" {
			q += " WHERE site = $1"
			args = append(args, site)
		}
		if _, err := conn.Exec(ctx, q, args...); err != nil {
			tb.Fatal(err)
		}
		if analyze {
			if _, err := conn.Exec(ctx, "ANALYZE "+k); err != nil {
				tb.Fatal(err)
			}
		}
	}
}

// Parameters: @site site, @coupons coupons, @production production records, @pqrs PQRs,
// @procedures procedures, @procids procedure ids in use, @welders welders, @days days. Ids are md5
// of the site, kind and number, so both sites have their own.
var seedStatements = []string{
	`INSERT INTO procedures (site, id, revision, created_at, created_by, code, title, process,
		filler_classification, wire_diameter_mm, polarity, positions, base_metal_group,
		thickness_min_mm, thickness_max_mm, status)
	SELECT @site, md5(@site::text || 'p' || g)::uuid, 1, now(), 'seed', 'WPS-' || g, 'seeded', (ARRAY['GMAW','FCAW'])[1 + g % 2],
		'ER70S-6', 1.2, 'DCEP', '{1G}', 'carbon steel', 3, 12, (ARRAY['draft','qualified','superseded'])[1 + g % 3]
	FROM generate_series(0, @procedures::int - 1) g`,
	`INSERT INTO qualification_records (site, id, revision, created_at, created_by, record_number, process,
		welded_on, welder_id, filler_classification, wire_diameter_mm, polarity, position, base_metal_group,
		thickness_mm, current_a, voltage_v, travel_speed_mm_s, visual_result, bend_result, tensile_result,
		macro_result, outcome)
	SELECT @site, md5(@site::text || 'q' || g)::uuid, 1, now(), 'seed', 'PQR-' || g, (ARRAY['GMAW','FCAW'])[1 + g % 2],
		date '2019-01-01' + (g * 7 % @days::int), 'W' || (g * 31 % @welders::int), 'ER70S-6', 1.2, 'DCEP', '1G',
		'carbon steel', 10, 250, 25, 5, 'pass', 'pass', 'pass', 'pass', (ARRAY['pending','pass','fail'])[1 + g % 3]
	FROM generate_series(0, @pqrs::int - 1) g`,
	`INSERT INTO coupons (site, id, revision, created_at, created_by, procedure_id, qualification_record_id,
		coupon_mark, welder_id, welded_on, joint_type, thickness_mm, pass_number, current_a, voltage_v,
		travel_speed_mm_s, wire_diameter_mm, polarity, position)
	SELECT @site, md5(@site::text || 'c' || g)::uuid, 1, now(), 'seed', md5(@site::text || 'p' || (g * 13 % @procids::int))::uuid,
		md5(@site::text || 'q' || (g % @pqrs::int))::uuid, 'C-' || g, 'W' || (g * 31 % @welders::int),
		date '2019-01-01' + (g * @days::int / @coupons::int), 'butt', 10, 1, 250, 25, 5, 1.2, 'DCEP', '1G'
	FROM generate_series(0, @coupons::int - 1) g`,
	// Every second coupon has a section; every tenth of those is rejected.
	`INSERT INTO measurements (site, id, revision, created_at, created_by, coupon_id, section, penetration_mm,
		bead_width_mm, reinforcement_mm, acceptance, inspector)
	SELECT @site, md5(@site::text || 'm' || g)::uuid, 1, now(), 'seed', md5(@site::text || 'c' || g)::uuid, 'A', 2, 8, 1,
		CASE WHEN g % 20 = 0 THEN 'reject' ELSE 'accept' END, 'QC'
	FROM generate_series(0, @coupons::int - 1, 2) g`,
	`INSERT INTO production_batches (site, id, created_at, created_by, record_count, first_id, last_id, procedure_ids)
	SELECT @site, md5(@site::text || 'batch')::uuid, now(), 'seed', @production, md5(@site::text || 'r0')::uuid, md5(@site::text || 'r0')::uuid, '{}'`,
	`SELECT etchlog_production_month((date '2019-01-01' + m * interval '1 month')::date)
	FROM generate_series(0, (@production::int / 48 / 28) + 1) m`,
	`INSERT INTO production_records (site, id, batch_id, procedure_id, weld_id, welder_id, recorded_at,
		current_a, voltage_v, travel_speed_mm_s, wire_feed_speed_m_min, created_at, created_by)
	SELECT @site, md5(@site::text || 'r' || g)::uuid, md5(@site::text || 'batch')::uuid, md5(@site::text || 'p' || (g * 13 % @procids::int))::uuid,
		'J-' || g, 'W' || (g * 31 % @welders::int), timestamptz '2019-01-01' + g * interval '30 minutes',
		250, 25, 5, 8, now(), 'seed'
	FROM generate_series(0, @production::int - 1) g`,
	// Each record's weld claim, as the write that stores it makes.
	`INSERT INTO production_welds (site, procedure_id, weld_id, record_id)
	SELECT site, procedure_id, weld_id, id FROM production_records WHERE site = @site`,
	// Every third coupon and every fifth production record carry a flag.
	`INSERT INTO flags (site, subject_kind, subject_id, subject_at, procedure_id, ranges_version, kind, variable, detail, computed_at)
	SELECT @site, 'coupon', md5(@site::text || 'c' || g)::uuid, date '2019-01-01' + (g * @days::int / @coupons::int),
		md5(@site::text || 'p' || (g * 13 % @procids::int))::uuid, 1, (ARRAY['range','model','not_checkable'])[1 + g % 3],
		(ARRAY['current_a','voltage_v','travel_speed_mm_s','thickness_mm'])[1 + g % 4], 'seeded', now()
	FROM generate_series(0, @coupons::int - 1, 3) g
	UNION ALL
	SELECT @site, 'production_record', md5(@site::text || 'r' || g)::uuid, timestamptz '2019-01-01' + g * interval '30 minutes',
		md5(@site::text || 'p' || (g * 13 % @procids::int))::uuid, 1, 'range', 'current_a', 'seeded', now()
	FROM generate_series(0, @production::int - 1, 5) g`,
	// Every PQR and every procedure is signed off once, by one of a few engineers.
	`INSERT INTO sign_offs (site, id, record_kind, record_id, record_revision, statement, signed_hash,
		signed_hash_of, signed_by, signer_role, signed_at)
	SELECT @site, md5(@site::text || 's' || kind || g)::uuid, kind, md5(@site::text || left(kind, 1) || g)::uuid, 1,
		'Reviewed.', sha256(g::text::bytea), 'log_leaf', 'E' || g % 7, 'engineer', now()
	FROM (SELECT 'qualification_record' AS kind, g FROM generate_series(0, @pqrs::int - 1) g
		UNION ALL SELECT 'procedure', g FROM generate_series(0, @procedures::int - 1) g) signed`,
	// The log: procedures, then PQRs, then coupons with their sections and
	// production records interleaved as they arrive (leaf indexes computed,
	// not sorted: procedures, PQRs, then four slots per coupon number), then
	// the sign-offs, the PQRs' first.
	`INSERT INTO log_leaves (site, leaf_index, kind, version, record_id, revision, leaf_hash, actor, action, at, integrated_at, pending_seq)
	SELECT @site, i, kind, 1, id, 1, sha256(id::text::bytea), 'seed', 'create', now(), now(), i + 1
	FROM (
		SELECT 'procedure' AS kind, md5(@site::text || 'p' || g)::uuid AS id, g::bigint AS i FROM generate_series(0, @procedures::int - 1) g
		UNION ALL SELECT 'qualification_record', md5(@site::text || 'q' || g)::uuid, @procedures::int + g FROM generate_series(0, @pqrs::int - 1) g
		UNION ALL SELECT 'coupon', md5(@site::text || 'c' || g)::uuid, @procedures::int + @pqrs::int + 4 * g FROM generate_series(0, @coupons::int - 1) g
		UNION ALL SELECT 'measurement', md5(@site::text || 'm' || g)::uuid, @procedures::int + @pqrs::int + 4 * g + 1 FROM generate_series(0, @coupons::int - 1, 2) g
		UNION ALL SELECT 'production_record', md5(@site::text || 'r' || g)::uuid, @procedures::int + @pqrs::int + 4 * (g * @coupons::int / @production::int) + 2 + g % 2
		FROM generate_series(0, @production::int - 1) g
		UNION ALL SELECT 'sign_off', s.id, @procedures::int + @pqrs::int + 4 * @coupons::int
			+ row_number() OVER (ORDER BY s.record_kind DESC, s.record_id) - 1
		FROM sign_offs s WHERE s.site = @site
	) leaves`,
}
