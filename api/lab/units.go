package lab

import (
	"encoding/json"
	"math"
	"net/http"
	"strconv"
	"strings"

	"etchlog/predict"
)

// Units is a display choice: Metric (the stored units) or InchPound.
type Units string

// The two display choices.
const (
	Metric    Units = "metric"
	InchPound Units = "inch-pound"
)

const unitsCookie = "etchlog_units"

// unitsOf reads the remembered display choice (metric when none).
func unitsOf(r *http.Request) Units {
	if c, err := r.Cookie(unitsCookie); err == nil && Units(c.Value) == InchPound {
		return InchPound
	}
	return Metric
}

func init() {
	Register(Page{Pattern: "POST " + Prefix + "/units", Roles: Everyone, Handle: chooseUnits})
}

// chooseUnits remembers the display choice for a year and goes back.
func chooseUnits(rq *Request) error {
	u := Units(rq.PostFormValue("units"))
	if u != Metric && u != InchPound {
		return &Problem{Status: http.StatusUnprocessableEntity, Title: "Unknown units",
			Detail: "Choose metric or inch-pound."}
	}
	setCookie(rq.W, rq.Request, unitsCookie, string(u), 365*24*3600)
	return rq.Redirect(safeNext(rq.PostFormValue("back")))
}

// inchPoundSuffixes orders the inch-pound spellings a measure may have,
// most usual first (heat input as kJ/in rather than J/in).
var inchPoundSuffixes = []string{"_kj_in", "_in_min", "_in2", "_in", "_f", "_lb_h_a2_in", "_lb_h_a", "_lb_h"}

// spellingFor returns the spelling of quantity q shown in units u, and its
// field name. A quantity without an inch-pound spelling (A, V) keeps its own.
func spellingFor(u Units, q predict.Quantity) (predict.Spelling, string) {
	if u == InchPound {
		for _, suf := range inchPoundSuffixes {
			for _, s := range q.Measure.Others {
				if s.Suffix == suf {
					return s, q.Base + s.Suffix
				}
			}
		}
	}
	return q.Measure.Stored, q.Name
}

// FieldName is the registered field name of quantity name (stored spelling)
// in units u, e.g. travel_speed_in_min for travel_speed_mm_s in inch-pound;
// the API accepts either. An unregistered name is returned as it is.
func FieldName(u Units, name string) string {
	q, ok := predict.LookupQuantity(name)
	if !ok {
		return name
	}
	_, n := spellingFor(u, q)
	return n
}

// UnitLabel is the unit symbol of quantity name in units u ("" for none).
func UnitLabel(u Units, name string) string {
	q, ok := predict.LookupQuantity(name)
	if !ok {
		return ""
	}
	s, _ := spellingFor(u, q)
	return s.Unit
}

// FormatQuantity writes a stored value of quantity name in units u with its
// unit beside it ("235 A", "0.250 in"), rounded to the precision it was
// measured to (Precision). value may be a float64, a *float64 or a
// json.Number; nil or a nil pointer reads "not recorded".
func FormatQuantity(u Units, name string, value any) string {
	v, ok := number(value)
	if !ok {
		return "not recorded"
	}
	q, known := predict.LookupQuantity(name)
	if !known {
		return strconv.FormatFloat(v, 'g', 6, 64)
	}
	text, unit := Convert(u, q, v)
	if unit == "" {
		return text
	}
	return text + " " + unit
}

// Convert returns a stored value of q in units u, rounded for display, and
// the unit's symbol.
func Convert(u Units, q predict.Quantity, v float64) (string, string) {
	s, _ := spellingFor(u, q)
	decimals := Precision(q, v, s)
	return strconv.FormatFloat(s.FromStored(v), 'f', decimals, 64), s.Unit
}

// typedDigits is the most significant digits a value typed by a person has;
// a value with more is a conversion from the other unit.
const typedDigits = 6

// Precision returns how many decimals to show a stored value v of q in
// spelling s: the resolution it was measured to, found from the digits as
// stored. The value is written in each spelling of q; the shortest form
// (fewest significant digits, the stored unit on a tie) is taken as the one
// typed, and its last digit as the resolution: 21.5 V is to a tenth; 13
// in/min, stored as 5.50333… mm/s, is to 1 in/min; whole hundreds (1000
// J/mm) are to the hundred. In another unit the typed step is converted and
// shown to the decimals that keep it (1 in/min is 0.42 mm/s: one decimal).
// A value with no short form in any spelling is shown to 3 significant
// digits.
func Precision(q predict.Quantity, v float64, s predict.Spelling) int {
	best, bestDigits, bestExp := predict.Spelling{}, typedDigits+1, 0
	for _, typed := range append([]predict.Spelling{q.Measure.Stored}, q.Measure.Others...) {
		if d, exp, ok := shortForm(typed.FromStored(v)); ok && d < bestDigits {
			best, bestDigits, bestExp = typed, d, exp
		}
	}
	if bestDigits > typedDigits {
		if v == 0 {
			return 0
		}
		return clampDecimals(2 - int(math.Floor(math.Log10(math.Abs(s.FromStored(v))))))
	}
	if best.Unit == s.Unit {
		return clampDecimals(-bestExp)
	}
	step := differenceIn(s, best.DifferenceToStored(math.Pow(10, float64(bestExp))))
	d := int(math.Ceil(-math.Log10(math.Abs(step)) - 0.2))
	if _, own, ok := shortForm(s.FromStored(v)); ok {
		d = max(d, -own) // a value short in the shown unit too is shown whole (6.35 mm, typed as 0.25 in)
	}
	return clampDecimals(d)
}

// differenceIn converts a difference in the stored unit into spelling s
// (°F is an offset scale: a step carries no offset).
func differenceIn(s predict.Spelling, d float64) float64 {
	if s.Unit == "°F" {
		return d * 9 / 5
	}
	return s.FromStored(d)
}

// shortForm writes v to 10 significant digits (rounding away the API's
// 12-digit noise of a conversion) and reports its significant digits and
// the power of ten of its last one (6.35: 3 digits, −2; 1000: 1 digit, 3),
// and whether it is short enough to have been typed.
func shortForm(v float64) (digits, exp int, ok bool) {
	r, err := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 10, 64), 64)
	if err != nil || r == 0 {
		return 1, 0, err == nil
	}
	txt := strings.TrimPrefix(strconv.FormatFloat(r, 'f', -1, 64), "-")
	whole, frac, _ := strings.Cut(txt, ".")
	if frac != "" {
		sig := strings.TrimLeft(whole+frac, "0")
		return len(sig), -len(frac), len(sig) <= typedDigits
	}
	sig := strings.TrimRight(strings.TrimLeft(whole, "0"), "0")
	return len(sig), len(whole) - len(strings.TrimRight(whole, "0")), len(sig) <= typedDigits
}

func clampDecimals(d int) int { return max(0, min(d, 6)) }

// number reads a display value.
func number(value any) (float64, bool) {
	switch x := value.(type) {
	case float64:
		return x, !math.IsNaN(x)
	case *float64:
		if x == nil {
			return 0, false
		}
		return *x, true
	case int:
		return float64(x), true
	case json.Number:
		f, err := x.Float64()
		return f, err == nil
	}
	return 0, false
}
