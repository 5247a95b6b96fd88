package predict

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// RuleLimit marks a range the engineer set on a variable the rule set
// leaves free (narrowing from "anything" to a limit, e.g. a heat input max).
const RuleLimit RuleKind = "limit"

// VariableRange is the qualified range of one variable. Numeric variables
// have Bands (several when PQRs qualify disjoint bands), text variables
// Allowed values. Derived* keep what the rule set gave, so a narrowing can
// be checked against it; Unavailable says why no range could be derived
// (records are then flagged not_checkable for this variable).
type VariableRange struct {
	Variable       Variable `json:"variable"`
	Unit           string   `json:"unit,omitempty"`
	Rule           RuleKind `json:"rule"`
	Bands          []Band   `json:"bands,omitempty"`
	Allowed        []string `json:"allowed,omitempty"`
	DerivedBands   []Band   `json:"derived_bands,omitempty"`
	DerivedAllowed []string `json:"derived_allowed,omitempty"`
	Sources        []string `json:"sources,omitempty"`
	NarrowReason   string   `json:"narrow_reason,omitempty"`
	Unavailable    string   `json:"unavailable,omitempty"`
}

// QualifiedRanges are a procedure's qualified ranges, one per ruled variable.
type QualifiedRanges struct {
	Variables []VariableRange `json:"variables"`
}

// Lookup returns the range of v, if there is one.
func (q QualifiedRanges) Lookup(v Variable) (VariableRange, bool) {
	for _, r := range q.Variables {
		if r.Variable == v {
			return r, true
		}
	}
	return VariableRange{}, false
}

// PQRValues is one supporting qualification record: a label for the range's
// sources (its record number) and the values actually welded.
type PQRValues struct {
	Label  string
	Values Observation
}

// Derive computes the qualified ranges that rules give for the values welded
// on one or more PQRs. With several PQRs the qualified range is the union
// of what each PQR qualifies on its own (never the envelope: a gap between
// two PQRs' bands stays unqualified); overlapping or touching bands merge.
// A PQR lacking a value does not contribute to that variable; when none has
// it, or the PQRs disagree under any_change, the variable is Unavailable.
func Derive(rules []Rule, pqrs []PQRValues) (QualifiedRanges, error) {
	if err := ValidateRules(rules); err != nil {
		return QualifiedRanges{}, err
	}
	if len(pqrs) == 0 {
		return QualifiedRanges{}, &InputError{Field: "supporting records", Reason: "a procedure needs at least one supporting qualification record to derive ranges from"}
	}
	out := QualifiedRanges{Variables: make([]VariableRange, 0, len(rules))}
	for _, r := range rules {
		vr := VariableRange{Variable: r.Variable, Unit: r.Variable.Unit(), Rule: r.Kind}
		if r.Variable.Numeric() {
			deriveNumeric(&vr, r, pqrs)
		} else {
			deriveText(&vr, r, pqrs)
		}
		if vr.Unavailable != "" {
			vr.Bands, vr.Allowed, vr.DerivedBands, vr.DerivedAllowed = nil, nil, nil, nil
		}
		out.Variables = append(out.Variables, vr)
	}
	return out, nil
}

// deriveNumeric fills the bands of a numeric variable.
func deriveNumeric(vr *VariableRange, r Rule, pqrs []PQRValues) {
	var bands []Band
	for _, p := range pqrs {
		q, ok := p.Values.Number(r.Variable)
		if !ok {
			continue
		}
		if (r.Kind == RulePercentBand || r.Kind == RuleMultiplier) && !(q > 0) {
			vr.Unavailable = fmt.Sprintf("%s on %s is %g; a %s rule needs a positive value", r.Variable, p.Label, q, r.Kind)
			return
		}
		b := unbounded
		switch r.Kind {
		case RulePercentBand:
			if r.BelowPct != nil {
				b.Min = q * (1 - *r.BelowPct/100)
			}
			if r.AbovePct != nil {
				b.Max = q * (1 + *r.AbovePct/100)
			}
		case RuleAbsoluteBand:
			if r.Below != nil {
				b.Min = q - *r.Below
			}
			if r.Above != nil {
				b.Max = q + *r.Above
			}
		case RuleMultiplier:
			b = Band{q * *r.MinFactor, q * *r.MaxFactor}
		case RuleSame:
			tol := 0.0
			if r.Tolerance != nil {
				tol = *r.Tolerance
			}
			b = Band{q - tol, q + tol}
		case RuleAnyChange:
			if len(bands) > 0 && !bands[0].Contains(q) {
				vr.Unavailable = fmt.Sprintf("the supporting records disagree on %s (%g and %g) and any change requires requalification", r.Variable, bands[0].Min, q)
				return
			}
			b = Band{q, q}
		}
		bands = append(bands, b)
		vr.Sources = append(vr.Sources, p.Label)
	}
	if len(bands) == 0 {
		vr.Unavailable = fmt.Sprintf("none of the supporting records gives %s", r.Variable)
		return
	}
	vr.Bands = mergeBands(bands)
	vr.DerivedBands = slices.Clone(vr.Bands)
}

// mergeBands sorts bands and merges those that overlap or touch.
func mergeBands(bands []Band) []Band {
	slices.SortFunc(bands, func(a, b Band) int {
		switch {
		case a.Min < b.Min:
			return -1
		case a.Min > b.Min:
			return 1
		}
		return 0
	})
	out := []Band{bands[0]}
	for _, b := range bands[1:] {
		last := &out[len(out)-1]
		if b.Min <= last.Max+slack(last.Max) {
			last.Max = math.Max(last.Max, b.Max)
			continue
		}
		out = append(out, b)
	}
	return out
}

// deriveText fills the allowed values of a text variable.
func deriveText(vr *VariableRange, r Rule, pqrs []PQRValues) {
	var allowed []string
	add := func(vals ...string) {
		for _, v := range vals {
			if !slices.ContainsFunc(allowed, func(a string) bool { return normText(a) == normText(v) }) {
				allowed = append(allowed, strings.TrimSpace(v))
			}
		}
	}
	for _, p := range pqrs {
		q, ok := p.Values.Text(r.Variable)
		if !ok {
			continue
		}
		switch r.Kind {
		case RuleSame:
			add(q)
		case RuleAnyChange:
			if len(allowed) > 0 && allowed[0] != strings.TrimSpace(q) {
				vr.Unavailable = fmt.Sprintf("the supporting records disagree on %s (%q and %q) and any change requires requalification", r.Variable, allowed[0], q)
				return
			}
			add(q)
		case RulePositionMap:
			qualified, ok := positionsFor(r.Positions, q)
			if !ok {
				vr.Unavailable = fmt.Sprintf("position %q tested on %s is not in the rule set's position map", q, p.Label)
				return
			}
			add(q)
			add(qualified...)
		}
		vr.Sources = append(vr.Sources, p.Label)
	}
	if len(allowed) == 0 {
		vr.Unavailable = fmt.Sprintf("none of the supporting records gives %s", r.Variable)
		return
	}
	vr.Allowed = allowed
	vr.DerivedAllowed = slices.Clone(allowed)
}

// positionsFor looks a tested position up in the map (case-insensitively).
func positionsFor(m map[string][]string, tested string) ([]string, bool) {
	for k, v := range m {
		if normText(k) == normText(tested) {
			return v, true
		}
	}
	return nil, false
}
