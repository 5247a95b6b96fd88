package predict

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// Narrowing asks to tighten one variable's range. A numeric variable takes
// Min and/or Max (in its stored unit; an omitted side keeps the derived
// band's side), a text variable the Allowed values.
type Narrowing struct {
	Variable Variable
	Min, Max *float64
	Allowed  []string
}

// Narrow returns the ranges with each narrowing applied and reason recorded.
// A narrowing may only tighten what the rule set derived: a numeric band
// must lie inside one derived band (a band spanning a gap between two
// PQRs' bands would qualify what neither did), allowed values must be
// among the derived ones. A variable without a rule may be given a limit
// (narrowing from "anything"); an Unavailable one cannot be narrowed.
// Variables not named keep their current (possibly narrowed) range.
func Narrow(cur QualifiedRanges, changes []Narrowing, reason string) (QualifiedRanges, error) {
	if strings.TrimSpace(reason) == "" {
		return QualifiedRanges{}, &InputError{Field: "reason", Reason: "a narrowing must say why"}
	}
	if len(changes) == 0 {
		return QualifiedRanges{}, &InputError{Field: "variables", Reason: "name at least one variable to narrow"}
	}
	out := QualifiedRanges{Variables: slices.Clone(cur.Variables)}
	seen := map[Variable]bool{}
	for i, n := range changes {
		bad := func(field, why string) error {
			return &ListError{List: "variables", Index: i, Field: field, Reason: why}
		}
		vi, _, ok := n.Variable.info()
		if !ok {
			return QualifiedRanges{}, bad("variable", fmt.Sprintf("unknown variable %q", n.Variable))
		}
		if seen[n.Variable] {
			return QualifiedRanges{}, bad("variable", "named twice")
		}
		seen[n.Variable] = true
		idx := slices.IndexFunc(out.Variables, func(r VariableRange) bool { return r.Variable == n.Variable })
		if idx < 0 {
			out.Variables = append(out.Variables, VariableRange{Variable: n.Variable, Unit: vi.unit, Rule: RuleLimit,
				DerivedBands: []Band{unbounded}})
			idx = len(out.Variables) - 1
		}
		vr := out.Variables[idx]
		if vr.Unavailable != "" {
			return QualifiedRanges{}, bad("variable", "no range was derived to narrow: "+vr.Unavailable)
		}
		var err error
		if vi.numeric {
			err = narrowBand(&vr, n, bad)
		} else {
			err = narrowAllowed(&vr, n, bad)
		}
		if err != nil {
			return QualifiedRanges{}, err
		}
		vr.NarrowReason = reason
		out.Variables[idx] = vr
	}
	return out, nil
}

// narrowBand replaces a numeric range with one band inside a derived band.
func narrowBand(vr *VariableRange, n Narrowing, bad func(string, string) error) error {
	if n.Allowed != nil {
		return bad("allowed", fmt.Sprintf("%s is numeric: give min and/or max", n.Variable))
	}
	if n.Min == nil && n.Max == nil {
		return bad("min", "give min, max or both")
	}
	for _, s := range []struct {
		f string
		p *float64
	}{{"min", n.Min}, {"max", n.Max}} {
		if s.p != nil && (math.IsNaN(*s.p) || math.IsInf(*s.p, 0)) {
			return bad(s.f, "must be a finite number")
		}
	}
	// The derived band that holds the given side(s) supplies an omitted side.
	probe := n.Min
	if probe == nil {
		probe = n.Max
	}
	var home *Band
	for i := range vr.DerivedBands {
		if vr.DerivedBands[i].Contains(*probe) {
			home = &vr.DerivedBands[i]
			break
		}
	}
	field := "min"
	if n.Min == nil {
		field = "max"
	}
	if home == nil {
		return bad(field, fmt.Sprintf("%g %s is outside the derived range %s: a narrowing may not widen", *probe, vr.Unit, bandsString(vr.DerivedBands)))
	}
	b := *home
	if n.Min != nil {
		b.Min = *n.Min
	}
	if n.Max != nil {
		b.Max = *n.Max
	}
	if b.Min > b.Max {
		return bad("min", fmt.Sprintf("min %g is above max %g", b.Min, b.Max))
	}
	if !b.within(*home) {
		return bad("max", fmt.Sprintf("%s %s goes outside the derived band %s: a narrowing may not widen", b, vr.Unit, home))
	}
	vr.Bands = []Band{b}
	return nil
}

// narrowAllowed replaces a text range with a subset of the derived values.
func narrowAllowed(vr *VariableRange, n Narrowing, bad func(string, string) error) error {
	if n.Min != nil || n.Max != nil {
		return bad("min", fmt.Sprintf("%s is text: give allowed values", n.Variable))
	}
	if len(n.Allowed) == 0 {
		return bad("allowed", "give at least one allowed value")
	}
	var kept []string
	for _, a := range n.Allowed {
		if strings.TrimSpace(a) == "" {
			return bad("allowed", "an allowed value is blank")
		}
		if vr.Rule != RuleLimit && !slices.ContainsFunc(vr.DerivedAllowed, func(d string) bool { return textMatch(vr.Rule, d, a) }) {
			return bad("allowed", fmt.Sprintf("%q was not qualified (derived: %s): a narrowing may not widen", a, strings.Join(vr.DerivedAllowed, ", ")))
		}
		kept = append(kept, strings.TrimSpace(a))
	}
	vr.Allowed = kept
	return nil
}

// textMatch compares a recorded text with an allowed one under the rule:
// exact (trimmed) for any_change, folded (see normText) otherwise.
func textMatch(kind RuleKind, allowed, got string) bool {
	if kind == RuleAnyChange {
		return strings.TrimSpace(allowed) == strings.TrimSpace(got)
	}
	return normText(allowed) == normText(got)
}

// bandsString shows several bands, e.g. "[135, 165] ∪ [225, 275]".
func bandsString(bs []Band) string {
	parts := make([]string, len(bs))
	for i, b := range bs {
		parts[i] = b.String()
	}
	return strings.Join(parts, " ∪ ")
}
