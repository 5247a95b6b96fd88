package predict

import (
	"fmt"
	"math"
	"strings"
)

// Flag kinds about measured sections (beside range, not_checkable, model).
const (
	// FlagRequirement: a measured section does not meet a requirement the
	// procedure or the qualification record states (e.g. a minimum
	// penetration). It is a finding, not an estimate, so it is listed first.
	FlagRequirement FlagKind = "requirement"
	// FlagSuspectUnits: a measured value is plausible only if it was meant
	// in the other unit (an inch value typed into a millimetre field).
	FlagSuspectUnits FlagKind = "suspect_units"
)

// Section is one macro-etched section of a coupon: its label and measured
// penetration in mm.
type Section struct {
	Label         string
	PenetrationMM float64
}

// Requirement is a minimum penetration (mm) a document requires, with the
// words naming the document ("WPS-TR-101 rev 3") and the verb it uses
// ("requires", "states").
type Requirement struct {
	MinPenetrationMM float64
	Source           string
	Verb             string
}

// CheckRequirements appends one requirement flag when any section's
// penetration is below any requirement: Value is the lowest failing
// section, Min the strictest requirement it fails, and Detail says in plain
// words each section and requirement, e.g. "section B penetration 0.6 mm is
// below the 1 mm that WPS-TR-101 rev 3 requires".
func CheckRequirements(sections []Section, reqs []Requirement, dst []Flag) []Flag {
	var parts []string
	var low, need float64
	found := false
	for _, s := range sections {
		for _, r := range reqs {
			if !(s.PenetrationMM < r.MinPenetrationMM) {
				continue
			}
			parts = append(parts, fmt.Sprintf("section %s penetration %.3g mm is below the %.3g mm that %s %s",
				s.Label, s.PenetrationMM, r.MinPenetrationMM, r.Source, r.Verb))
			if !found || s.PenetrationMM < low || (s.PenetrationMM == low && r.MinPenetrationMM > need) {
				low, need = s.PenetrationMM, r.MinPenetrationMM
			}
			found = true
		}
	}
	if !found {
		return dst
	}
	ex := need - low
	pct := ex / need * 100
	return append(dst, Flag{Kind: FlagRequirement, Variable: VarPenetration, Unit: "mm", Value: &low, Min: &need,
		Direction: Below, Excess: &ex, ExcessPct: &pct, Detail: strings.Join(parts, "; ")})
}

// Usual macro-etch penetration of GMAW on steel, 0.5–10 mm (domain primer;
// common practice, no source). A value below it whose inch reading lies in
// it is suspect; with a model prediction, the reading nearer the
// prediction (by ratio) decides.
const (
	usualPenetrationLowMM  = 0.5
	usualPenetrationHighMM = 10
	// suspectWithoutModelMM: without a prediction only values this small are
	// suspect (a real 0.3 mm penetration on sheet is possible; 0.1 mm hardly).
	suspectWithoutModelMM = 0.25
)

// SuspectUnits appends one suspect_units flag when a section's penetration
// (mm) is plausible only as inches: its inch reading v·25.4 lies in the
// usual band and, with a predicted median predictedMM (nil: no model), is
// nearer the prediction by ratio than v itself (|ln(25.4v/P)| < |ln(v/P)|);
// without one, v ≤ 0.25 mm. Value is the section's value, Detail the
// conversion it suggests. The value is kept: the inspector decides.
func SuspectUnits(sections []Section, predictedMM *float64, dst []Flag) []Flag {
	var parts []string
	var first *float64
	for _, s := range sections {
		v := s.PenetrationMM
		asMM := InchToMM(v)
		if !(v > 0 && v < usualPenetrationLowMM && asMM >= usualPenetrationLowMM && asMM <= usualPenetrationHighMM) {
			continue
		}
		why := "the usual 0.5–10 mm"
		if predictedMM != nil {
			p := *predictedMM
			if !(math.Abs(math.Log(asMM/p)) < math.Abs(math.Log(v/p))) {
				continue
			}
			why = fmt.Sprintf("the %.3g mm the calibrated model predicts", p)
		} else if v > suspectWithoutModelMM {
			continue
		}
		parts = append(parts, fmt.Sprintf("section %s penetration %.3g mm looks like a value in inches: %.3g in = %.4g mm, near %s; correct the section if so",
			s.Label, v, v, asMM, why))
		if first == nil {
			first = &v
		}
	}
	if first == nil {
		return dst
	}
	return append(dst, Flag{Kind: FlagSuspectUnits, Variable: VarPenetration, Unit: "mm", Value: first, Detail: strings.Join(parts, "; ")})
}
