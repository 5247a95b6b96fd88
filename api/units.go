package api

import (
	"net/http"
	"strings"

	"etchlog/predict"
)

// Quantities may arrive in metric or inch-pound units; the field name says
// which (current_a, travel_speed_mm_s, travel_speed_in_min, preheat_f...).
// Stored and returned values are always metric: mm, mm/s, m/min, °C.

// spelling is one accepted field name for a quantity, with its conversion
// into the stored unit.
type spelling struct {
	field string
	v     *float64
	conv  func(float64) float64
}

func same(v float64) float64 { return v }

func mm(field string, v *float64) spelling       { return spelling{field, v, same} }
func inch(field string, v *float64) spelling     { return spelling{field, v, predict.InchToMM} }
func celsius(field string, v *float64) spelling  { return spelling{field, v, same} }
func fahrenheit(f string, v *float64) spelling   { return spelling{f, v, predict.FahrenheitToCelsius} }
func mmPerS(field string, v *float64) spelling   { return spelling{field, v, same} }
func mmPerMin(field string, v *float64) spelling { return spelling{field, v, predict.MMPerMinToMMPerS} }
func inPerMin(field string, v *float64) spelling { return spelling{field, v, predict.InPerMinToMMPerS} }
func mPerMin(field string, v *float64) spelling  { return spelling{field, v, same} }
func wfsInPerMin(f string, v *float64) spelling  { return spelling{f, v, predict.InPerMinToMPerMin} }

// units collects quantity conversions and the issues they raise: issues
// about the request's shape, and refused values of the spellings other than
// the stored one (named as sent, in the unit sent; the stored spelling is
// checked with the rest of the record by Server.check).
type units struct{ issues, refused []FieldIssue }

// pick returns the quantity given in exactly one of its spellings, converted
// into the stored unit, or nil when none is given (an issue if required).
// Two spellings at once are refused.
func (u *units) pick(required bool, alts ...spelling) *float64 {
	var got *spelling
	for i := range alts {
		if alts[i].v == nil {
			continue
		}
		if got != nil {
			u.issues = append(u.issues, FieldIssue{alts[i].field, "give this quantity once: " + got.field + " is given too"})
			return nil
		}
		got = &alts[i]
	}
	if got == nil {
		if required {
			names := make([]string, len(alts))
			for i, a := range alts {
				names[i] = a.field
			}
			u.issues = append(u.issues, FieldIssue{alts[0].field, "is required (as one of " + strings.Join(names, ", ") + ")"})
		}
		return nil
	}
	v := got.conv(*got.v)
	if q, ok := predict.LookupQuantity(got.field); ok && got.field != q.Name {
		if sp, ok := q.Spelling(got.field); ok {
			if why := refusalIn(q, sp, *got.v, v); why != "" {
				u.refused = append(u.refused, FieldIssue{got.field, why})
			}
		}
	}
	return &v
}

// opt is pick for an optional quantity.
func (u *units) opt(alts ...spelling) *float64 { return u.pick(false, alts...) }

// req is pick for a required quantity; 0 stands in for a missing one.
func (u *units) req(alts ...spelling) float64 {
	if v := u.pick(true, alts...); v != nil {
		return *v
	}
	return 0
}

// err returns the collected issues: 400 when any is about the request's
// shape, else 422 for the refused values.
func (u *units) err() error {
	switch {
	case len(u.issues) > 0:
		return &invalidError{status: http.StatusBadRequest, issues: append(u.issues, u.refused...)}
	case len(u.refused) > 0:
		return unprocessable(u.refused...)
	}
	return nil
}
