package db

import (
	"fmt"
	"strings"
	"sync"
)

// LeafKind is how one kind of recorded fact becomes a leaf of the site's log:
// the table its rows live in and, for one encoding version, the explicit
// list of columns the leaf commits to, in order. A column added to the table
// later is not in the list, so it never changes the encoding of older leaves;
// to cover it, register the next version with a longer list and write new
// leaves with it. Every table must have site and id (uuid) columns; Revisioned
// tables also a revision column (others count as revision 1).
type LeafKind struct {
	Kind       string
	Version    int
	Table      string
	Columns    []string
	Revisioned bool
}

var (
	leafKindsMu sync.RWMutex
	leafKinds   = map[string]LeafKind{} // kind + "/" + version
	leafCurrent = map[string]LeafKind{} // kind → version new leaves use
)

// RegisterLeafKind makes a kind (at one version) known to the log, so facts
// of that kind can be appended (AppendLeaf), exported and verified. The
// highest registered version of a kind is the one new leaves use. Call it
// from an init function; registering the same kind and version twice panics.
func RegisterLeafKind(k LeafKind) {
	leafKindsMu.Lock()
	defer leafKindsMu.Unlock()
	key := fmt.Sprintf("%s/%d", k.Kind, k.Version)
	if _, dup := leafKinds[key]; dup || k.Kind == "" || k.Version < 1 || k.Table == "" || len(k.Columns) == 0 {
		panic("db: bad or duplicate leaf kind " + key)
	}
	leafKinds[key] = k
	if cur, ok := leafCurrent[k.Kind]; !ok || k.Version > cur.Version {
		leafCurrent[k.Kind] = k
	}
}

// leafKind returns a registered kind at a version (0: the current one).
func leafKind(kind string, version int) (LeafKind, error) {
	leafKindsMu.RLock()
	defer leafKindsMu.RUnlock()
	k, ok := leafCurrent[kind]
	if version != 0 {
		k, ok = leafKinds[fmt.Sprintf("%s/%d", kind, version)]
	}
	if !ok {
		return LeafKind{}, fmt.Errorf("db: no leaf kind %s version %d", kind, version)
	}
	return k, nil
}

// registeredKinds lists the current version of every kind, sorted by name.
func registeredKinds() []LeafKind {
	leafKindsMu.RLock()
	defer leafKindsMu.RUnlock()
	out := make([]LeafKind, 0, len(leafCurrent))
	for _, k := range leafCurrent {
		out = append(out, k)
	}
	for i := 1; i < len(out); i++ {
		for j := i; j > 0 && out[j].Kind < out[j-1].Kind; j-- {
			out[j], out[j-1] = out[j-1], out[j]
		}
	}
	return out
}

// selectRow is the query that reads one fact's row for encoding: $1 site,
// $2 id, $3 revision.
func (k LeafKind) selectRow() string {
	q := "SELECT " + strings.Join(k.Columns, ", ") + " FROM " + k.Table + " WHERE site = $1 AND id = $2"
	if k.Revisioned {
		return q + " AND revision = $3"
	}
	return q + " AND $3::integer = 1"
}

// revisionExpr is the SQL for a row's revision in this kind's table.
func (k LeafKind) revisionExpr(alias string) string {
	if k.Revisioned {
		return alias + ".revision"
	}
	return "1"
}

// The version-1 field lists. Never edit a list once leaves use it: register
// version 2 instead.
var recordMeta = []string{"site", "id", "revision", "created_at", "created_by", "reason", "voided"}

func withMeta(fields ...string) []string { return append(append([]string{}, recordMeta...), fields...) }

func init() {
	for _, k := range []LeafKind{
		{Kind: "procedure", Version: 1, Table: "procedures", Revisioned: true, Columns: withMeta(
			"code", "title", "process", "filler_classification", "wire_diameter_mm", "shielding_gas",
			"polarity", "transfer_mode", "positions", "base_metal_group", "thickness_min_mm",
			"thickness_max_mm", "min_penetration_mm", "status", "supporting_record_ids")},
		{Kind: "qualification_record", Version: 1, Table: "qualification_records", Revisioned: true, Columns: withMeta(
			"record_number", "process", "welded_on", "welder_id", "filler_classification", "wire_diameter_mm",
			"shielding_gas", "polarity", "transfer_mode", "position", "base_metal_group", "thickness_mm",
			"current_a", "voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min", "ctwd_mm", "preheat_c",
			"interpass_c", "visual_result", "bend_result", "tensile_result", "macro_result",
			"tensile_strength_mpa", "outcome", "remarks", "min_penetration_mm")},
		{Kind: "coupon", Version: 1, Table: "coupons", Revisioned: true, Columns: withMeta(
			"procedure_id", "qualification_record_id", "coupon_mark", "welder_id", "power_source_id",
			"filler_lot", "welded_on", "joint_type", "thickness_mm", "pass_number", "current_a", "voltage_v",
			"travel_speed_mm_s", "wire_feed_speed_m_min", "ctwd_mm", "wire_diameter_mm", "shielding_gas",
			"polarity", "position", "preheat_c", "interpass_c")},
		{Kind: "measurement", Version: 1, Table: "measurements", Revisioned: true, Columns: withMeta(
			"coupon_id", "section", "penetration_mm", "bead_width_mm", "reinforcement_mm", "leg1_mm",
			"leg2_mm", "throat_mm", "fused_area_mm2", "acceptance", "inspector", "remark")},
		{Kind: "calibration", Version: 1, Table: "calibrations", Columns: []string{
			"site", "id", "created_at", "created_by", "model", "process", "wire_diameter_mm", "shielding_gas",
			"joint_type", "welded_from", "welded_to", "procedure_id", "level", "arc_length_mm", "fit", "samples",
			"coupon_ids", "note"}},
		// Version 2: calibrations stored by their selection, count and digest.
		{Kind: "calibration", Version: 2, Table: "calibrations", Columns: []string{
			"site", "id", "created_at", "created_by", "model", "process", "wire_diameter_mm", "shielding_gas",
			"joint_type", "welded_from", "welded_to", "procedure_id", "level", "arc_length_mm", "fit", "selection",
			"sample_count", "sample_digest", "note"}},
		{Kind: "calibration_activation", Version: 1, Table: "calibration_activations", Columns: []string{
			"site", "id", "activated_at", "activated_by", "reason", "calibration_id", "model", "process",
			"wire_diameter_mm", "shielding_gas", "joint_type", "action", "family"}},
		{Kind: "rule_set", Version: 1, Table: "rule_sets", Columns: []string{
			"site", "id", "rule_set_id", "version", "name", "process", "notes", "from_memory", "rules",
			"created_at", "created_by"}},
		{Kind: "procedure_ranges", Version: 1, Table: "procedure_ranges", Columns: []string{
			"site", "id", "procedure_id", "procedure_revision", "version", "action", "rule_set_site",
			"rule_set_id", "rule_set_version", "reason", "ranges", "created_at", "created_by"}},
		{Kind: "production_batch", Version: 1, Table: "production_batches", Columns: []string{
			"site", "id", "created_at", "created_by", "record_count", "first_id", "last_id", "procedure_ids"}},
		{Kind: "user", Version: 1, Table: "api_users", Revisioned: true, Columns: withMeta(
			"name", "role", "token_sha256")},
		{Kind: "production_record", Version: 1, Table: "production_records_all", Columns: []string{
			"site", "id", "batch_id", "procedure_id", "weld_id", "welder_id", "recorded_at", "current_a",
			"voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min", "ctwd_mm", "created_at", "created_by"}},
	} {
		// Production records are read for encoding through
		// production_records_all: the live months and the detached ones.
		RegisterLeafKind(k)
	}
}
