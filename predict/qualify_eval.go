package predict

import (
	"fmt"
	"math"
	"strings"
)

// FlagKind names why a record is flagged.
type FlagKind string

// Flag kinds.
const (
	// FlagRange: a recorded value is outside the qualified range.
	FlagRange FlagKind = "range"
	// FlagNotCheckable: the record lacks a value the check needs, or no
	// range could be derived; never silently passed.
	FlagNotCheckable FlagKind = "not_checkable"
	// FlagModel: a computed quantity (heat input, a prediction) breaks a
	// procedure limit or disagrees with the shop's calibrated model.
	FlagModel FlagKind = "model"
)

// Direction says on which side of its range a value lies.
type Direction string

// Directions of a flagged value.
const (
	Above      Direction = "above"
	Below      Direction = "below"
	NotAllowed Direction = "not_allowed"
)

// Flag is one variable of one record outside what was qualified. Excess is
// the distance to the nearest qualified edge in the variable's unit;
// ExcessPct is that distance as a percentage of the edge crossed.
type Flag struct {
	Kind      FlagKind  `json:"kind"`
	Variable  Variable  `json:"variable"`
	Unit      string    `json:"unit,omitempty"`
	Value     *float64  `json:"value,omitempty"`
	ValueText string    `json:"value_text,omitempty"`
	Min       *float64  `json:"min,omitempty"`
	Max       *float64  `json:"max,omitempty"`
	Allowed   []string  `json:"allowed,omitempty"`
	Direction Direction `json:"direction,omitempty"`
	Excess    *float64  `json:"excess,omitempty"`
	ExcessPct *float64  `json:"excess_pct,omitempty"`
	Detail    string    `json:"detail"`
}

// Checker evaluates records against one procedure's qualified ranges.
// Build it once with NewChecker and reuse it for every record.
type Checker struct {
	ranges []VariableRange
	folded [][]string // normText of Allowed, per range
}

// NewChecker prepares ranges for evaluation.
func NewChecker(q QualifiedRanges) *Checker {
	c := &Checker{ranges: q.Variables, folded: make([][]string, len(q.Variables))}
	for i, r := range q.Variables {
		for _, a := range r.Allowed {
			c.folded[i] = append(c.folded[i], normText(a))
		}
	}
	return c
}

// Evaluate appends to dst one flag per ranged variable the record carries
// that is outside its range or cannot be checked, in range order. Variables
// the record kind does not carry are out of its scope and skipped.
func (c *Checker) Evaluate(o *Observation, dst []Flag) []Flag {
	for i := range c.ranges {
		r := &c.ranges[i]
		if !o.Carries(r.Variable) {
			continue
		}
		kind := FlagRange
		if r.Variable == VarHeatInput {
			kind = FlagModel
		}
		if r.Unavailable != "" {
			dst = append(dst, Flag{Kind: FlagNotCheckable, Variable: r.Variable, Unit: r.Unit, Detail: "no qualified range: " + r.Unavailable})
			continue
		}
		if r.Variable.Numeric() {
			x, ok := o.Number(r.Variable)
			if !ok {
				dst = append(dst, missing(r))
				continue
			}
			if f, out := outside(r, x); out {
				f.Kind = kind
				dst = append(dst, f)
			}
			continue
		}
		s, ok := o.Text(r.Variable)
		if !ok {
			dst = append(dst, missing(r))
			continue
		}
		if !c.allowed(i, s) {
			dst = append(dst, Flag{Kind: kind, Variable: r.Variable, ValueText: s, Allowed: r.Allowed, Direction: NotAllowed,
				Detail: fmt.Sprintf("%s %q is not qualified (qualified: %s)", r.Variable, s, strings.Join(r.Allowed, ", "))})
		}
	}
	return dst
}

// allowed reports whether text s matches one of range i's allowed values.
func (c *Checker) allowed(i int, s string) bool {
	r := &c.ranges[i]
	if r.Rule == RuleAnyChange {
		for _, a := range r.Allowed {
			if textMatch(RuleAnyChange, a, s) {
				return true
			}
		}
		return false
	}
	n := normText(s)
	for _, a := range c.folded[i] {
		if a == n {
			return true
		}
	}
	return false
}

// missing is the not_checkable flag for a value the record lacks.
func missing(r *VariableRange) Flag {
	what := string(r.Variable) + " is not recorded"
	if r.Variable == VarHeatInput {
		what = "heat input needs voltage, current and travel speed, and one is not recorded"
	}
	return Flag{Kind: FlagNotCheckable, Variable: r.Variable, Unit: r.Unit, Detail: what + "; it cannot be checked against the qualified range"}
}

// outside returns the flag for x when it lies outside every band of r,
// measured against the nearest band.
func outside(r *VariableRange, x float64) (Flag, bool) {
	best, dist, dir := -1, math.Inf(1), Direction("")
	for i, b := range r.Bands {
		if b.Contains(x) {
			return Flag{}, false
		}
		d, side := b.Min-x, Below
		if x > b.Max {
			d, side = x-b.Max, Above
		}
		if d < dist {
			best, dist, dir = i, d, side
		}
	}
	if best < 0 {
		return Flag{}, false // no bands: nothing qualified to compare with
	}
	b := r.Bands[best]
	edge := b.Min
	if dir == Above {
		edge = b.Max
	}
	f := Flag{Variable: r.Variable, Unit: r.Unit, Value: &x, Direction: dir, Excess: &dist}
	if !math.IsInf(b.Min, 0) {
		f.Min = &b.Min
	}
	if !math.IsInf(b.Max, 0) {
		f.Max = &b.Max
	}
	pct := ""
	if edge != 0 {
		p := dist / math.Abs(edge) * 100
		f.ExcessPct = &p
		pct = fmt.Sprintf(" (%.3g %%)", p)
	}
	f.Detail = fmt.Sprintf("%s %.6g %s is %s the qualified range %s %s by %.4g %s%s",
		r.Variable, x, r.Unit, dir, bandsString(r.Bands), r.Unit, dist, r.Unit, pct)
	return f, true
}
