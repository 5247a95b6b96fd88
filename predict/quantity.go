package predict

import (
	"fmt"
	"math"
	"sort"
	"strconv"
)

// The quantity registry defines once every number and every enumerated word
// that crosses the API boundary: its wire name, stored unit, the other
// spellings a request may use with their exact conversions, its plausible
// bounds and a one-line description. Binding, validation, the model
// endpoints' bounds and the tests that compare the OpenAPI document and the
// database's CHECK rules with the registry all read it from here.

// Spelling is one way of writing a measure at the boundary: the suffix of
// the field name and the unit it names, with the exact conversion to and
// from the stored unit.
type Spelling struct {
	Suffix     string // field name suffix, e.g. "_in"
	Unit       string // unit symbol, e.g. "in"
	ToStored   func(float64) float64
	FromStored func(float64) float64
}

// DifferenceToStored converts a difference of two values (a band's width)
// into the stored unit. Every conversion is proportional except the
// Fahrenheit scale's, whose offset a difference does not carry: 25 °F of
// difference is 25·5/9 °C, while a reading of 25 °F is −3.9 °C.
func (s Spelling) DifferenceToStored(d float64) float64 {
	if s.Unit == "°F" {
		return d * 5 / 9
	}
	return s.ToStored(d)
}

// Measure is a kind of physical quantity: its stored spelling and the other
// spellings a request may use for it.
type Measure struct {
	Stored Spelling
	Others []Spelling
}

// Quantity is one named number of the API. Name is the wire name in the
// stored unit (Base + the measure's stored suffix). Values outside
// [Min, Max] are typing errors, not welds; an open end refuses the bound
// itself (a length that must be positive has Min 0, MinOpen).
type Quantity struct {
	Name        string
	Base        string
	Measure     Measure
	Min, Max    float64
	MinOpen     bool
	MaxOpen     bool
	Integer     bool
	Description string
}

// Unit is the quantity's stored unit symbol ("" for a plain number).
func (q Quantity) Unit() string { return q.Measure.Stored.Unit }

// Spellings lists every accepted field name of q, the stored one first.
func (q Quantity) Spellings() []string {
	names := []string{q.Name}
	for _, s := range q.Measure.Others {
		names = append(names, q.Base+s.Suffix)
	}
	return names
}

// Spelling returns the spelling that field name uses, if it is one of q's.
func (q Quantity) Spelling(name string) (Spelling, bool) {
	if name == q.Name {
		return q.Measure.Stored, true
	}
	for _, s := range q.Measure.Others {
		if q.Base+s.Suffix == name {
			return s, true
		}
	}
	return Spelling{}, false
}

// Inside reports whether v (in the stored unit) lies within q's bounds and,
// for a whole-number quantity, is whole.
func (q Quantity) Inside(v float64) bool {
	switch {
	case math.IsNaN(v), q.Integer && v != math.Trunc(v):
		return false
	case q.MinOpen && !(v > q.Min), !q.MinOpen && !(v >= q.Min):
		return false
	case q.MaxOpen && !(v < q.Max), !q.MaxOpen && !(v <= q.Max):
		return false
	}
	return true
}

// Refusal says in words why v (in the stored unit) is outside q's bounds,
// or "" when it is inside.
func (q Quantity) Refusal(v float64) string {
	got := strconv.FormatFloat(v, 'g', -1, 64)
	switch {
	case q.Inside(v):
		return ""
	case math.IsNaN(v):
		return "must be a number"
	case q.MinOpen && !(v > q.Min):
		return fmt.Sprintf("must be greater than %s (got %s)", num(q.Min), got)
	case !q.MinOpen && !(v >= q.Min):
		return fmt.Sprintf("must be at least %s (got %s)", num(q.Min), got)
	case q.MaxOpen && !(v < q.Max):
		return fmt.Sprintf("must be less than %s (got %s)", num(q.Max), got)
	case !q.MaxOpen && !(v <= q.Max):
		return fmt.Sprintf("must be at most %s (got %s)", num(q.Max), got)
	}
	return "must be a whole number (got " + got + ")"
}

// BoundsText is q's bounds as a reader writes them, e.g. "10–1000 A".
func (q Quantity) BoundsText() string {
	unit := ""
	if u := q.Unit(); u != "" {
		unit = " " + u
	}
	switch {
	case math.IsInf(q.Max, 1) && q.MinOpen:
		return "more than " + num(q.Min) + unit
	case math.IsInf(q.Max, 1):
		return "at least " + num(q.Min) + unit
	}
	return num(q.Min) + "–" + num(q.Max) + unit
}

func num(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// Enum is one enumerated word of the API and the values it allows; with
// Blank, the empty string (not given) is allowed too.
type Enum struct {
	Name        string
	Values      []string
	Description string
	Blank       bool
}

// Allows reports whether v is one of e's values (or empty, when e allows a blank).
func (e Enum) Allows(v string) bool {
	if v == "" && e.Blank {
		return true
	}
	for _, a := range e.Values {
		if a == v {
			return true
		}
	}
	return false
}

// byName maps every spelling to its quantity; built by variable
// initialisation (not init) so other package variables may look names up.
var byName = func() map[string]Quantity {
	m := map[string]Quantity{}
	for _, q := range quantities {
		for _, n := range q.Spellings() {
			if _, dup := m[n]; dup {
				panic("predict: quantity spelling registered twice: " + n)
			}
			m[n] = q
		}
	}
	return m
}()

var enumByName = func() map[string]Enum {
	m := map[string]Enum{}
	for _, e := range enums {
		m[e.Name] = e
	}
	return m
}()

// LookupQuantity returns the quantity that field name spells (its stored
// name or another accepted spelling).
func LookupQuantity(name string) (Quantity, bool) {
	q, ok := byName[name]
	return q, ok
}

// MustQuantity is LookupQuantity for a name the program itself writes; it
// panics on an unregistered name (a programming error, caught by any test).
func MustQuantity(name string) Quantity {
	q, ok := byName[name]
	if !ok {
		panic("predict: no registered quantity " + name)
	}
	return q
}

// LookupEnum returns the enumerated word registered under field name.
func LookupEnum(name string) (Enum, bool) {
	e, ok := enumByName[name]
	return e, ok
}

// Quantities lists every registered quantity by name.
func Quantities() []Quantity {
	out := append([]Quantity(nil), quantities...)
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out
}

// Enums lists every registered enumerated word by name.
func Enums() []Enum {
	out := append([]Enum(nil), enums...)
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out
}
