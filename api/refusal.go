package api

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"etchlog/predict"
)

// A refused quantity is reported in the user's words: the field as sent,
// the value as sent with its unit, and the bound in that same unit (with the
// stored unit's exact bound beside it when the spelling is another one):
// "wire_diameter_in: 0.9 in is above the plausible maximum 0.1575 in (4 mm)".

// refusalIn says why stored (the value in q's stored unit) is refused, in
// the words of spelling sp, which the user sent as sent; "" when stored is
// inside q's bounds.
func refusalIn(q predict.Quantity, sp predict.Spelling, sent, stored float64) string {
	if q.Inside(stored) {
		return ""
	}
	unit := func(v float64, s predict.Spelling) string {
		if s.Unit == "" {
			return plain(v)
		}
		return plain(v) + " " + s.Unit
	}
	bound := func(v float64) string {
		if sp.Suffix == q.Measure.Stored.Suffix || sp.FromStored == nil {
			return unit(v, q.Measure.Stored)
		}
		return unit(roundTo(sp.FromStored(v), 4), sp) + " (" + unit(v, q.Measure.Stored) + ")"
	}
	got := unit(sent, sp)
	switch {
	case math.IsNaN(stored) || math.IsInf(stored, 0):
		return "must be a finite number"
	case q.MinOpen && !(stored > q.Min):
		return fmt.Sprintf("%s is not above the plausible minimum %s; it must be more than that", got, bound(q.Min))
	case !q.MinOpen && !(stored >= q.Min):
		return fmt.Sprintf("%s is below the plausible minimum %s", got, bound(q.Min))
	case q.MaxOpen && !(stored < q.Max):
		return fmt.Sprintf("%s is not below the plausible maximum %s; it must be less than that", got, bound(q.Max))
	case !q.MaxOpen && !(stored <= q.Max):
		return fmt.Sprintf("%s is above the plausible maximum %s", got, bound(q.Max))
	}
	return fmt.Sprintf("%s is not a whole number", got)
}

// storedRefusal is refusalIn for a value sent in q's stored spelling.
func storedRefusal(q predict.Quantity, v float64) string {
	return refusalIn(q, q.Measure.Stored, v, v)
}

// plain writes v with the digits it needs and no float noise.
func plain(v float64) string { return strconv.FormatFloat(roundTo(v, 12), 'g', -1, 64) }

// roundTo rounds v to n significant digits.
func roundTo(v float64, n int) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	f, err := strconv.ParseFloat(strconv.FormatFloat(v, 'g', n, 64), 64)
	if err != nil {
		return v
	}
	return f
}

// sentAs records, by stored field path (ctwd_mm, records[2].ctwd_mm), the
// spelling and number a quantity was sent in when that was another spelling.
type sentAs map[string]sentValue

// sentValue is one quantity as the request spelt it.
type sentValue struct {
	field string
	value float64
}

// sentKey is where bind leaves a request's sentAs on the echo context.
const sentKey = "etchlog.sentAs"

// reword turns the refusals of rewritten quantities back into the words the
// request used: wire_diameter_mm 22.86 → wire_diameter_in 0.9 in.
func (s sentAs) reword(issues []FieldIssue) {
	for i, is := range issues {
		v, ok := s[is.Field]
		if !ok {
			continue
		}
		name := is.Field[strings.LastIndex(is.Field, ".")+1:]
		if j := strings.LastIndex(name, "]."); j >= 0 {
			name = name[j+2:]
		}
		sentName := v.field[strings.LastIndex(v.field, ".")+1:]
		q, ok := predict.LookupQuantity(name)
		if !ok {
			continue
		}
		sp, ok := q.Spelling(sentName)
		if !ok {
			continue
		}
		if why := refusalIn(q, sp, v.value, sp.ToStored(v.value)); why != "" {
			issues[i] = FieldIssue{v.field, why}
		}
	}
}
