package predict

import (
	"fmt"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"
)

// GasComposition is a shielding gas by volume percentage of each
// component; the components sum to 100.
type GasComposition struct {
	Ar  float64 `json:"ar_pct"`
	CO2 float64 `json:"co2_pct"`
	O2  float64 `json:"o2_pct"`
	He  float64 `json:"he_pct"`
	H2  float64 `json:"h2_pct,omitempty"`
	N2  float64 `json:"n2_pct,omitempty"`
}

// gasToken is one component as written: an optional percentage before the
// chemical symbol ("25CO2", "Ar").
var gasToken = regexp.MustCompile(`(\d+(?:\.\d+)?)?(co2|o2|ar|he|h2|n2)`)

// shorthandCO2 is the trade shorthand "C25": argon with 25 % CO2
// (common practice, no source).
var shorthandCO2 = regexp.MustCompile(`^c(\d+(?:\.\d+)?)$`)

// ParseGas reads a shielding gas as shops write it — "Ar-25CO2",
// "75Ar/25CO2", "ar + 25 % co2", "Ar-2O2", "100% CO2", "C25" — into its
// composition. At most one component may go without a percentage: it is
// the balance to 100. Spelling and order do not matter; the composition
// does.
func ParseGas(s string) (GasComposition, error) {
	t := strings.ToLower(strings.Join(strings.Fields(s), ""))
	t = strings.ReplaceAll(t, "%", "")
	if m := shorthandCO2.FindStringSubmatch(t); m != nil {
		co2, _ := strconv.ParseFloat(m[1], 64)
		t = fmt.Sprintf("ar-%gco2", co2)
	}
	matches := gasToken.FindAllStringSubmatchIndex(t, -1)
	if len(matches) == 0 {
		return GasComposition{}, fmt.Errorf("shielding gas %q: no component (Ar, CO2, O2, He, H2, N2) recognised", s)
	}
	// Everything between the components must be a separator.
	pos := 0
	for _, m := range matches {
		if strings.Trim(t[pos:m[0]], "-/+,;&") != "" {
			return GasComposition{}, fmt.Errorf("shielding gas %q: cannot read %q", s, t[pos:m[0]])
		}
		pos = m[1]
	}
	if strings.Trim(t[pos:], "-/+,;&") != "" {
		return GasComposition{}, fmt.Errorf("shielding gas %q: cannot read %q", s, t[pos:])
	}
	pct := map[string]float64{}
	balance, sum := "", 0.0
	for _, m := range matches {
		name := t[m[4]:m[5]]
		if _, dup := pct[name]; dup || name == balance {
			return GasComposition{}, fmt.Errorf("shielding gas %q: %s named twice", s, name)
		}
		if m[2] < 0 {
			if balance != "" {
				return GasComposition{}, fmt.Errorf("shielding gas %q: %s and %s both without a percentage", s, balance, name)
			}
			balance = name
			continue
		}
		v, _ := strconv.ParseFloat(t[m[2]:m[3]], 64)
		pct[name] = v
		sum += v
	}
	if balance != "" {
		if sum > 100 {
			return GasComposition{}, fmt.Errorf("shielding gas %q: percentages add to %g, over 100", s, sum)
		}
		pct[balance] = 100 - sum
	} else if math.Abs(sum-100) > 0.5 {
		return GasComposition{}, fmt.Errorf("shielding gas %q: percentages add to %g, not 100", s, sum)
	}
	return GasComposition{Ar: pct["ar"], CO2: pct["co2"], O2: pct["o2"], He: pct["he"], H2: pct["h2"], N2: pct["n2"]}, nil
}

// Canonical spells the composition one way: the largest component first
// without a percentage (the balance), then the others largest first with
// theirs, e.g. "Ar-25CO2", "Ar-2O2", "CO2", "He-7.5Ar-2.5CO2". Two
// spellings of one gas have one canonical form.
func (g GasComposition) Canonical() string {
	type part struct {
		name string
		pct  float64
	}
	parts := []part{{"Ar", g.Ar}, {"CO2", g.CO2}, {"O2", g.O2}, {"He", g.He}, {"H2", g.H2}, {"N2", g.N2}}
	sort.SliceStable(parts, func(i, j int) bool { return parts[i].pct > parts[j].pct })
	out := parts[0].name
	for _, p := range parts[1:] {
		if p.pct > 0 {
			out += "-" + strconv.FormatFloat(math.Round(p.pct*100)/100, 'f', -1, 64) + p.name
		}
	}
	return out
}

// CanonicalGas returns the canonical spelling of a shielding gas, or the
// text trimmed when it cannot be read as a composition (so an unusual
// name still matches itself).
func CanonicalGas(s string) string {
	g, err := ParseGas(s)
	if err != nil {
		return strings.TrimSpace(s)
	}
	return g.Canonical()
}

// GasStandardEdition names the classification ISO14175 implements.
const GasStandardEdition = "ISO 14175:2008 (from memory; verify against the edition your code of record cites)"

// ISO14175 returns the classification of a composition under ISO 14175:2008
// (welding consumables — gases and gas mixtures for fusion welding), as
// recalled (from memory): I1 argon, I2 helium, I3 argon–helium; M1x/M2x/M3x
// argon (or argon–helium) based mixtures by CO2 and O2 content; C1 carbon
// dioxide, C2 CO2 with O2. Bands are lower-exclusive, upper-inclusive, from
// 0.5 %. "" when the composition falls in no recalled group (hydrogen or
// nitrogen mixtures are not classified here).
func ISO14175(g GasComposition) string {
	if g.H2 > 0 || g.N2 > 0 {
		return ""
	}
	co2, o2 := g.CO2, g.O2
	in := func(v, lo, hi float64) bool { return v > lo && v <= hi }
	none := func(v float64) bool { return v < 0.5 }
	switch {
	case g.Ar >= 99.5:
		return "I1"
	case g.He >= 99.5:
		return "I2"
	case none(co2) && none(o2) && g.Ar > 0 && g.He >= 0.5:
		return "I3"
	case co2 >= 99.5:
		return "C1"
	case co2 >= 70 && o2 >= 0.5 && o2 <= 30 && g.Ar == 0 && g.He == 0:
		return "C2"
	}
	band := func(v float64, bands ...[2]float64) int { // index of the band v lies in, -1: none
		for i, b := range bands {
			if (i == 0 && v >= b[0] && v <= b[1]) || (i > 0 && in(v, b[0], b[1])) {
				return i
			}
		}
		return -1
	}
	c := band(co2, [2]float64{0, 0.5 - 1e-12}, [2]float64{0.5 - 1e-12, 5}, [2]float64{5, 15}, [2]float64{15, 25}, [2]float64{25, 50})
	o := band(o2, [2]float64{0, 0.5 - 1e-12}, [2]float64{0.5 - 1e-12, 3}, [2]float64{3, 10}, [2]float64{10, 15})
	// rows: CO2 band (none, 0.5–5, 5–15, 15–25, 25–50); columns: O2 band (none, 0.5–3, 3–10, 10–15).
	table := [5][4]string{
		{"", "M13", "M22", "M32"},
		{"M12", "M14", "M23", ""},
		{"M20", "M24", "M25", "M34"},
		{"M21", "M26", "M27", "M34"},
		{"M31", "", "M33", "M35"},
	}
	if c < 0 || o < 0 {
		return ""
	}
	// M33 recalled as CO2 25–50 with O2 2–10: an O2 of 2–3 % there is M33 too.
	if c == 4 && o == 1 && o2 > 2 {
		return "M33"
	}
	return table[c][o]
}
