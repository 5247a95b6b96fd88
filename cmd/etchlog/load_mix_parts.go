package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// mixCounts is how many of each user a mixed run puts on the server.
type mixCounts struct{ writers, pagers, exporters, producers int }

// productionBatch is how many production records one monitor sends at once.
const productionBatch = 500

// mixClients are a mixed run's users of the API, each with a token of its
// own, since the server admits each user's requests only up to its
// per-user limit: technicians write coupons, auditors page and export, weld
// monitors send production records.
type mixClients struct{ tech, auditor, monitor *client }

// mixParts builds the parts of a mixed run: the API side through cls, the
// raw side in schema (tables shaped like etchlog's, made by rawSchema).
func mixParts(cls mixClients, site, procID, schema string, m mixCounts) []mixedPart {
	stamp := time.Now().UnixNano()
	cursors := make([]string, m.pagers)
	keys := make([]uuid.UUID, m.pagers)
	lit := "'" + strings.ReplaceAll(site, "'", "''") + "'"
	return []mixedPart{
		{name: "technicians: POST /v1/coupons", unit: "coupons", workers: m.writers,
			api: func(ctx context.Context, w, i int) (int, error) {
				return 1, cls.tech.do(ctx, "POST", "/v1/coupons", loadCoupon(procID, fmt.Sprintf("LOAD-%d-%d-%d", stamp, w, i)), 201)
			},
			raw: func(ctx context.Context, conn *pgx.Conn, w, i int) (int, error) {
				_, err := conn.Exec(ctx, `INSERT INTO `+schema+`.coupons (site, id, revision, created_at, created_by,
					procedure_id, coupon_mark, welder_id, welded_on, joint_type, thickness_mm, pass_number, current_a,
					voltage_v, travel_speed_mm_s, wire_feed_speed_m_min, ctwd_mm, wire_diameter_mm, polarity, position)
					VALUES ($1, $2, 1, now(), 'load', $3, $4, 'LOAD', '2026-11-30', 'fillet', 9.5, 1, 180, 21, 5, 7.6, 14, 0.9, 'DCEP', '2F')`,
					site, uuid.New(), procID, fmt.Sprintf("RAW-%d-%d-%d", stamp, w, i))
				return 1, err
			}},
		{name: "auditors: GET /v1/coupons?limit=50", unit: "coupons", workers: m.pagers,
			api: func(ctx context.Context, w, _ int) (int, error) {
				path := "/v1/coupons?limit=50"
				if cursors[w] != "" {
					path += "&cursor=" + url.QueryEscape(cursors[w])
				}
				var page struct {
					Items      []json.RawMessage `json:"items"`
					NextCursor string            `json:"next_cursor"`
				}
				if err := cls.auditor.getJSON(ctx, path, &page); err != nil {
					return 0, err
				}
				cursors[w] = page.NextCursor
				if len(page.Items) == 0 { // the end: start again from the first page
					cursors[w] = ""
				}
				return len(page.Items), nil
			},
			raw: func(ctx context.Context, conn *pgx.Conn, w, _ int) (int, error) {
				rows, _ := conn.Query(ctx, `SELECT site, id, revision, created_at, created_by, procedure_id, coupon_mark,
					welder_id, welded_on, joint_type, current_a, voltage_v, travel_speed_mm_s
					FROM coupons WHERE site = $1 AND id > $2 ORDER BY id LIMIT 50`, site, keys[w])
				n := 0
				var last uuid.UUID
				_, err := pgx.ForEachRow(rows, []any{nil, &last, nil, nil, nil, nil, nil, nil, nil, nil, nil, nil, nil},
					func() error { n++; return nil })
				keys[w] = last
				if n < 50 {
					keys[w] = uuid.Nil
				}
				return n, err
			}},
		{name: "auditors: GET /v1/export", unit: "lines", workers: m.exporters,
			api: func(ctx context.Context, _, _ int) (int, error) {
				return cls.auditor.countLines(ctx, "/v1/export")
			},
			raw: func(ctx context.Context, conn *pgx.Conn, _, _ int) (int, error) {
				n := 0
				for _, q := range []string{
					"COPY (SELECT * FROM coupons WHERE site = " + lit + ") TO STDOUT",
					"COPY (SELECT * FROM log_leaves WHERE site = " + lit + ") TO STDOUT",
				} {
					tag, err := conn.PgConn().CopyTo(ctx, io.Discard, q)
					if err != nil {
						return n, err
					}
					n += int(tag.RowsAffected())
				}
				return n, nil
			}},
		{name: "monitors: POST /v1/production-records", unit: "records", workers: m.producers,
			api: func(ctx context.Context, w, i int) (int, error) {
				recs := make([]map[string]any, productionBatch)
				for k := range recs {
					recs[k] = loadProduction(procID, fmt.Sprintf("LOAD-%d-%d-%d-%d", stamp, w, i, k))
				}
				return productionBatch, cls.monitor.do(ctx, "POST", "/v1/production-records", map[string]any{"records": recs}, 201)
			},
			raw: func(ctx context.Context, conn *pgx.Conn, w, i int) (int, error) {
				now := time.Now()
				_, err := conn.CopyFrom(ctx, pgx.Identifier{schema, "production_records"}, []string{"site", "id", "batch_id",
					"created_at", "created_by", "procedure_id", "weld_id", "welder_id", "recorded_at", "current_a",
					"voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min"},
					pgx.CopyFromSlice(productionBatch, func(k int) ([]any, error) {
						return []any{site, uuid.New(), uuid.Nil, now, "load", procID, fmt.Sprintf("RAW-%d-%d-%d-%d", stamp, w, i, k),
							"LOAD", now, 182.0, 21.5, 5.2, 7.7}, nil
					}))
				return productionBatch, err
			}},
	}
}

// loadProduction is a plausible production record; load-test data only.
func loadProduction(procID, weld string) map[string]any {
	return map[string]any{"procedure_id": procID, "weld_id": weld, "welder_id": "LOAD",
		"recorded_at": time.Now().UTC().Format(time.RFC3339), "current_a": 182, "voltage_v": 21.5,
		"travel_speed_mm_s": 5.2, "wire_feed_speed_m_min": 7.7}
}

// rawSchema makes a scratch schema with empty tables shaped like etchlog's
// coupons and production records (columns, defaults, checks and indexes, but
// none of etchlog's triggers), for the raw side of a mixed run. drop removes it.
func rawSchema(ctx context.Context, conn *pgx.Conn) (schema string, drop func(), err error) {
	schema = fmt.Sprintf("etchlog_load_%d", time.Now().UnixNano())
	_, err = conn.Exec(ctx, `CREATE SCHEMA `+schema+`;
		CREATE TABLE `+schema+`.coupons (LIKE public.coupons INCLUDING DEFAULTS INCLUDING CONSTRAINTS INCLUDING INDEXES);
		CREATE TABLE `+schema+`.production_records (LIKE public.production_records INCLUDING DEFAULTS INCLUDING CONSTRAINTS INCLUDING INDEXES)`)
	if err != nil {
		return "", nil, fmt.Errorf("load: the raw baseline needs a login that may create a schema: %w", err)
	}
	return schema, func() { _, _ = conn.Exec(context.Background(), `DROP SCHEMA `+schema+` CASCADE`) }, nil
}

// getJSON GETs path and decodes the 200 answer into v.
func (c *client) getJSON(ctx context.Context, path string, v any) error {
	req, err := http.NewRequestWithContext(ctx, "GET", c.base+path, nil)
	if err != nil {
		return err
	}
	req.Header.Set("Authorization", "Bearer "+c.token)
	res, err := c.http.Do(req)
	if err != nil {
		return err
	}
	defer res.Body.Close()
	if res.StatusCode != http.StatusOK {
		msg, _ := io.ReadAll(res.Body)
		return fmt.Errorf("GET %s: status %d: %s", path, res.StatusCode, msg)
	}
	return json.NewDecoder(res.Body).Decode(v)
}

// countLines GETs path and counts the lines of the 200 answer as it streams.
func (c *client) countLines(ctx context.Context, path string) (int, error) {
	req, err := http.NewRequestWithContext(ctx, "GET", c.base+path, nil)
	if err != nil {
		return 0, err
	}
	req.Header.Set("Authorization", "Bearer "+c.token)
	res, err := c.http.Do(req)
	if err != nil {
		return 0, err
	}
	defer res.Body.Close()
	if res.StatusCode != http.StatusOK {
		return 0, fmt.Errorf("GET %s: status %d", path, res.StatusCode)
	}
	sc := bufio.NewScanner(res.Body)
	sc.Buffer(make([]byte, 64<<10), 16<<20)
	n := 0
	for sc.Scan() {
		n++
	}
	return n, sc.Err()
}
