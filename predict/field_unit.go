package predict

import (
	"sort"
	"strings"
)

// Every quantity at the boundary names its unit in its field name, by one
// suffix style (current_a, travel_speed_mm_s, preheat_f, excess_pct). Where
// a field carries no registered name (a fit's k_std_err_mm, a flag's
// excess_pct), its suffix alone says the unit. FieldUnit reads it back for
// the places that must state it in words: a CSV column header, a printed
// record.

// suffixUnit is one field-name suffix and the unit symbol it stands for.
type suffixUnit struct{ suffix, unit string }

// fieldSuffixes are the suffixes of every registered measure's spellings,
// and the percent of ratios given as percentages, longest first so that
// _kg_h_a is tried before _a and _mm_s before _s.
var fieldSuffixes = func() []suffixUnit {
	seen := map[string]string{"_pct": "%"}
	for _, q := range quantities {
		for _, s := range append([]Spelling{q.Measure.Stored}, q.Measure.Others...) {
			if s.Suffix != "" {
				seen[s.Suffix] = s.Unit
			}
		}
	}
	out := make([]suffixUnit, 0, len(seen))
	for s, u := range seen {
		out = append(out, suffixUnit{s, u})
	}
	sort.Slice(out, func(i, j int) bool {
		if len(out[i].suffix) != len(out[j].suffix) {
			return len(out[i].suffix) > len(out[j].suffix)
		}
		return out[i].suffix < out[j].suffix
	})
	return out
}()

// FieldUnit returns the unit symbol that a field name states ("A" for
// current_a, "in/min" for travel_speed_in_min, "%" for excess_pct), and
// false for a name without a unit (text, identifiers, counts, ratios).
// A registered quantity answers from the registry, so a plain registered
// number (level, pass_number) has none whatever its name ends with.
func FieldUnit(name string) (string, bool) {
	if q, ok := LookupQuantity(name); ok {
		s, _ := q.Spelling(name)
		return s.Unit, s.Unit != ""
	}
	for _, s := range fieldSuffixes {
		if strings.HasSuffix(name, s.suffix) && len(name) > len(s.suffix) {
			return s.unit, true
		}
	}
	return "", false
}
