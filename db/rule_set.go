package db

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// Built-in rule sets are stored with the empty site key '' and are readable
// by every site; the SQL below spells that key as ''.

// RuleSetData is what an engineer states in a rule set: its id (lower-case
// letters, digits and dashes), name, process, notes (what is recalled, what
// is unsure) and one rule per essential variable.
type RuleSetData struct {
	RuleSetID  string         `db:"rule_set_id" json:"id" validate:"required,max=64"`
	Name       string         `db:"name" json:"name" validate:"required,max=200"`
	Process    string         `db:"process" json:"process" validate:"required,enum"`
	Notes      string         `db:"notes" json:"notes" validate:"max=8000"`
	FromMemory bool           `db:"from_memory" json:"from_memory"`
	Rules      []predict.Rule `db:"rules" json:"rules" validate:"required,min=1"`
}

// RuleSet is one stored version of a rule set. BuiltIn sets ship with the
// service (site ""); a shop's own carry its site.
type RuleSet struct {
	RowID     uuid.UUID `db:"id" json:"-"`
	Site      string    `db:"site" json:"-"`
	Version   int       `db:"version" json:"revision"`
	BuiltIn   bool      `db:"built_in" json:"built_in"`
	CreatedAt time.Time `db:"created_at" json:"created_at"`
	CreatedBy string    `db:"created_by" json:"created_by"`
	RuleSetData
}

const ruleSetColumns = `id, site, version, site = '' AS built_in, created_at, created_by,
	rule_set_id, name, process, notes, from_memory, rules`

// CreateRuleSet stores a shop's rule set: version 1 for a new id, else the
// next version of the site's own set with that id (append-only). The id of
// a built-in set is refused: copy it under an id of your own.
func (s *Store) CreateRuleSet(ctx context.Context, a Actor, d RuleSetData) (RuleSet, error) {
	if err := predict.ValidateRules(d.Rules); err != nil {
		return RuleSet{}, err
	}
	id, err := uuid.NewV7()
	if err != nil {
		return RuleSet{}, err
	}
	rs := RuleSet{RowID: id, Site: a.Site, CreatedAt: s.now(), CreatedBy: a.Name, RuleSetData: d}
	rules, err := json.Marshal(d.Rules)
	if err != nil {
		return RuleSet{}, err
	}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		var builtIn bool
		if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM rule_sets WHERE site = '' AND rule_set_id = $1)`, d.RuleSetID).Scan(&builtIn); err != nil {
			return err
		}
		if builtIn {
			return &FieldError{Field: "id", Reason: fmt.Sprintf("%q is a built-in rule set; save your version under an id of your own", d.RuleSetID)}
		}
		// Serialise versioning of one id at one site.
		if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock(hashtextextended('etchlog-rule-set:' || $1 || ':' || $2, 0))", a.Site, d.RuleSetID); err != nil {
			return err
		}
		if err := tx.QueryRow(ctx, `SELECT coalesce(max(version), 0) + 1 FROM rule_sets WHERE site = $1 AND rule_set_id = $2`,
			a.Site, d.RuleSetID).Scan(&rs.Version); err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `INSERT INTO rule_sets (site, id, rule_set_id, version, name, process, notes,
			from_memory, rules, created_at, created_by) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`,
			a.Site, id, d.RuleSetID, rs.Version, d.Name, d.Process, d.Notes, d.FromMemory, string(rules), rs.CreatedAt, a.Name); err != nil {
			return mapError(err)
		}
		return s.AppendLeaf(ctx, tx, LeafEntry{Kind: "rule_set", Site: a.Site, ID: id, Revision: 1, Actor: a.Name, Action: "create", At: rs.CreatedAt})
	})
	if err != nil {
		return RuleSet{}, fmt.Errorf("db: create rule set %s: %w", d.RuleSetID, err)
	}
	return rs, nil
}

// RuleSets lists the built-in rule sets and the site's own, latest version
// of each, built-in first, then by id.
func (s *Store) RuleSets(ctx context.Context, site string) ([]RuleSet, error) {
	rows, _ := s.pool.Query(ctx, `SELECT `+ruleSetColumns+` FROM (
			SELECT DISTINCT ON (site, rule_set_id) * FROM rule_sets
			WHERE site IN ('', $1) ORDER BY site, rule_set_id, version DESC) r
		ORDER BY site <> '', rule_set_id`, site)
	sets, err := pgx.CollectRows(rows, pgx.RowToStructByName[RuleSet])
	if err != nil {
		return nil, fmt.Errorf("db: list rule sets: %w", err)
	}
	return sets, nil
}

// RuleSet reads one rule set visible to the site (built-in or its own):
// version ver, or the latest when ver is 0.
func (s *Store) RuleSet(ctx context.Context, site, id string, ver int) (RuleSet, error) {
	return ruleSet(ctx, s.pool, site, id, ver)
}

func ruleSet(ctx context.Context, q querier, site, id string, ver int) (RuleSet, error) {
	rows, _ := q.Query(ctx, `SELECT `+ruleSetColumns+` FROM rule_sets
		WHERE site IN ('', $1) AND rule_set_id = $2 AND ($3 = 0 OR version = $3)
		ORDER BY version DESC LIMIT 1`, site, id, ver)
	rs, err := pgx.CollectOneRow(rows, pgx.RowToStructByName[RuleSet])
	if errors.Is(err, pgx.ErrNoRows) {
		return RuleSet{}, fmt.Errorf("db: rule set %s version %d: %w", id, ver, ErrNotFound)
	}
	if err != nil {
		return RuleSet{}, fmt.Errorf("db: rule set %s: %w", id, err)
	}
	return rs, nil
}
