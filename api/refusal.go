package api

import (
	"fmt"
	"math"
	"strconv"

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
