package predict

import (
	"encoding/json"
	"fmt"
	"math"
)

// RuleKind names how a qualified range follows from the PQR value q.
type RuleKind string

// Rule kinds. Every numeric range is closed: its edges are qualified.
const (
	// RulePercentBand qualifies [q·(1 − BelowPct/100), q·(1 + AbovePct/100)]:
	// the percentages are of the PQR value q. A nil side is unbounded.
	RulePercentBand RuleKind = "percent_band"
	// RuleAbsoluteBand qualifies [q − Below, q + Above] in the variable's
	// unit. A nil side is unbounded.
	RuleAbsoluteBand RuleKind = "absolute_band"
	// RuleMultiplier qualifies [MinFactor·q, MaxFactor·q] (e.g. T/2 to 2T).
	RuleMultiplier RuleKind = "multiplier"
	// RuleSame qualifies the value(s) welded: text compared trimmed and
	// case-insensitively ignoring spaces, numbers within ±Tolerance. With
	// several PQRs every PQR's value is qualified.
	RuleSame RuleKind = "same"
	// RulePositionMap qualifies the positions Positions[tested] lists for
	// the position tested on the PQR (the tested one included).
	RulePositionMap RuleKind = "position_map"
	// RuleAnyChange qualifies exactly the value welded (numbers to round-off,
	// text trimmed but case-sensitive); several PQRs must agree on it.
	RuleAnyChange RuleKind = "any_change"
)

// Rule is one variable's rule in a rule set. Only the fields of its kind
// may be set; numbers are in the variable's stored unit.
type Rule struct {
	Variable  Variable            `json:"variable"`
	Kind      RuleKind            `json:"kind"`
	BelowPct  *float64            `json:"below_pct,omitempty"`
	AbovePct  *float64            `json:"above_pct,omitempty"`
	Below     *float64            `json:"below,omitempty"`
	Above     *float64            `json:"above,omitempty"`
	MinFactor *float64            `json:"min_factor,omitempty"`
	MaxFactor *float64            `json:"max_factor,omitempty"`
	Tolerance *float64            `json:"tolerance,omitempty"`
	Positions map[string][]string `json:"positions,omitempty"`
	Note      string              `json:"note,omitempty"`
}

// ListError names the list entry (list name, index, field) that is refused,
// e.g. rules[3].kind or variables[0].max.
type ListError struct {
	List   string
	Index  int
	Field  string
	Reason string
}

// Path is the entry's field path, e.g. "rules[3].kind".
func (e *ListError) Path() string { return fmt.Sprintf("%s[%d].%s", e.List, e.Index, e.Field) }

// Error implements error.
func (e *ListError) Error() string { return "predict: " + e.Path() + ": " + e.Reason }

// Is makes errors.Is(err, ErrInvalidInput) true for a *ListError.
func (e *ListError) Is(target error) bool { return target == ErrInvalidInput }

// ValidateRules checks that every rule names a known variable once, uses a
// kind that fits the variable, and sets exactly the fields of its kind with
// sensible values.
func ValidateRules(rules []Rule) error {
	seen := map[Variable]bool{}
	for i, r := range rules {
		bad := func(field, reason string) error {
			return &ListError{List: "rules", Index: i, Field: field, Reason: reason}
		}
		vi, _, ok := r.Variable.info()
		switch {
		case !ok:
			return bad("variable", fmt.Sprintf("unknown variable %q", r.Variable))
		case seen[r.Variable]:
			return bad("variable", fmt.Sprintf("%s has a rule already; one rule per variable", r.Variable))
		}
		seen[r.Variable] = true
		set := map[string]bool{"below_pct": r.BelowPct != nil, "above_pct": r.AbovePct != nil,
			"below": r.Below != nil, "above": r.Above != nil, "min_factor": r.MinFactor != nil,
			"max_factor": r.MaxFactor != nil, "tolerance": r.Tolerance != nil, "positions": r.Positions != nil}
		var own []string
		switch r.Kind {
		case RulePercentBand, RuleMultiplier:
			if !vi.ratio {
				return bad("kind", fmt.Sprintf("%s cannot take a ratio of %s (not a ratio scale); use absolute_band", r.Kind, r.Variable))
			}
			own = []string{"below_pct", "above_pct"}
			if r.Kind == RuleMultiplier {
				own = []string{"min_factor", "max_factor"}
			}
		case RuleAbsoluteBand:
			if !vi.numeric {
				return bad("kind", fmt.Sprintf("absolute_band needs a numeric variable, %s is text", r.Variable))
			}
			own = []string{"below", "above"}
		case RuleSame:
			if vi.numeric {
				own = []string{"tolerance"}
			}
		case RulePositionMap:
			if r.Variable != VarPosition {
				return bad("kind", "position_map applies to position only")
			}
			own = []string{"positions"}
		case RuleAnyChange:
		default:
			return bad("kind", fmt.Sprintf("unknown rule kind %q", r.Kind))
		}
		for f, isSet := range set {
			if isSet && !contains(own, f) {
				return bad(f, fmt.Sprintf("does not belong to a %s rule", r.Kind))
			}
		}
		if err := r.checkValues(i); err != nil {
			return err
		}
	}
	return nil
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// checkValues checks the numbers and maps of one rule.
func (r Rule) checkValues(i int) error {
	bad := func(field, reason string) error {
		return &ListError{List: "rules", Index: i, Field: field, Reason: reason}
	}
	nonNeg := func(field string, p *float64) error {
		if p != nil && (math.IsNaN(*p) || math.IsInf(*p, 0) || *p < 0) {
			return bad(field, "must be a finite number ≥ 0")
		}
		return nil
	}
	for _, c := range []struct {
		f string
		p *float64
	}{{"below_pct", r.BelowPct}, {"above_pct", r.AbovePct}, {"below", r.Below}, {"above", r.Above}, {"tolerance", r.Tolerance}} {
		if err := nonNeg(c.f, c.p); err != nil {
			return err
		}
	}
	switch r.Kind {
	case RulePercentBand:
		if r.BelowPct == nil && r.AbovePct == nil {
			return bad("below_pct", "give below_pct, above_pct or both (a missing side is unbounded)")
		}
		if r.BelowPct != nil && *r.BelowPct > 100 {
			return bad("below_pct", "must be at most 100 (a range below zero means nothing)")
		}
	case RuleAbsoluteBand:
		if r.Below == nil && r.Above == nil {
			return bad("below", "give below, above or both (a missing side is unbounded)")
		}
	case RuleMultiplier:
		if r.MinFactor == nil || r.MaxFactor == nil || !(*r.MinFactor > 0) || !(*r.MaxFactor >= *r.MinFactor) || math.IsInf(*r.MaxFactor, 0) {
			return bad("min_factor", "need 0 < min_factor ≤ max_factor, both finite")
		}
	case RulePositionMap:
		if len(r.Positions) == 0 {
			return bad("positions", "map each tested position to the positions it qualifies")
		}
		for tested, q := range r.Positions {
			if tested == "" || len(q) == 0 {
				return bad("positions", fmt.Sprintf("tested position %q qualifies nothing", tested))
			}
		}
	}
	return nil
}

// MarshalJSON writes {"min":…, "max":…}, leaving out an unbounded side.
func (b Band) MarshalJSON() ([]byte, error) {
	m := map[string]float64{}
	if !math.IsInf(b.Min, -1) {
		m["min"] = b.Min
	}
	if !math.IsInf(b.Max, 1) {
		m["max"] = b.Max
	}
	return json.Marshal(m)
}

// UnmarshalJSON reads {"min":…, "max":…}; an absent side is unbounded.
func (b *Band) UnmarshalJSON(data []byte) error {
	var m struct{ Min, Max *float64 }
	if err := json.Unmarshal(data, &m); err != nil {
		return err
	}
	*b = unbounded
	if m.Min != nil {
		b.Min = *m.Min
	}
	if m.Max != nil {
		b.Max = *m.Max
	}
	return nil
}
