package api

import (
	"math"
	"strings"

	"etchlog/api/lab"
	"etchlog/predict"
)

// Printed values read as the lab pages show them (lab.FormatQuantity): in
// the chosen units, each rounded to the precision it was recorded to, with
// its unit beside it.

// displayUnits is the lab's display choice for a printout.
func displayUnits(inch bool) lab.Units {
	if inch {
		return lab.InchPound
	}
	return lab.Metric
}

// quantity writes a stored value of the field named field with its unit.
func quantity(field string, v float64, inch bool) string {
	return lab.FormatQuantity(displayUnits(inch), field, v)
}

// optQuantity is quantity for an optional value ("not recorded" when absent).
func optQuantity(field string, v *float64, inch bool) string {
	return lab.FormatQuantity(displayUnits(inch), field, v)
}

// bandText writes one qualified band of a variable: "160–220 A", "at least
// 10 °C", "at most 1.2 kJ/mm".
func bandText(variable string, b predict.Band, inch bool) string {
	q, ok := predict.LookupQuantity(variable)
	if !ok {
		return "—"
	}
	edge := func(v float64) string {
		text, unit := lab.Convert(displayUnits(inch), q, v)
		if unit != "" {
			text += " " + unit
		}
		return text
	}
	switch lo, hi := math.IsInf(b.Min, -1), math.IsInf(b.Max, 1); {
	case lo && hi:
		return "any"
	case lo:
		return "at most " + edge(b.Max)
	case hi:
		return "at least " + edge(b.Min)
	}
	lo, unit := lab.Convert(displayUnits(inch), q, b.Min)
	hi, _ := lab.Convert(displayUnits(inch), q, b.Max)
	if unit != "" {
		unit = " " + unit
	}
	return lo + "–" + hi + unit
}

// variableLabel names a variable in words: the registry's description of a
// quantity or word, else its field name with spaces.
func variableLabel(field string) string {
	if q, ok := predict.LookupQuantity(field); ok && q.Description != "" {
		return q.Description
	}
	if e, ok := predict.LookupEnum(field); ok && e.Description != "" {
		return strings.TrimSuffix(e.Description, " (may be left empty)")
	}
	return strings.ToUpper(field[:1]) + strings.ReplaceAll(field[1:], "_", " ")
}
