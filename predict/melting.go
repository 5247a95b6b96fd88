package predict

import "fmt"

// Lesnewich holds the coefficients of the Lesnewich wire melting-rate
// relation MR = α·I + β·L·I² (from memory), with MR the melting rate in
// kg/h, I the welding current in A and L the electrode extension
// (stick-out, wire length between contact tip and arc) in mm. The α term is
// arc heating at the wire tip; the β term is resistive heating of the
// extension. Coefficients are specific to wire material, diameter, gas and
// polarity.
type Lesnewich struct {
	AlphaKgPerHA   float64 // α, kg/(h·A)
	BetaKgPerHA2MM float64 // β, kg/(h·A²·mm)
}

// Validate reports whether α and β are finite, non-negative and not both zero.
func (l Lesnewich) Validate() error {
	if err := mustBeNonNegative("lesnewich alpha kg/(h·A)", l.AlphaKgPerHA); err != nil {
		return err
	}
	if err := mustBeNonNegative("lesnewich beta kg/(h·A²·mm)", l.BetaKgPerHA2MM); err != nil {
		return err
	}
	if l.AlphaKgPerHA == 0 && l.BetaKgPerHA2MM == 0 {
		return &InputError{Field: "lesnewich coefficients", Reason: "alpha and beta are both zero"}
	}
	return nil
}

// MeltingRateKgPerH evaluates MR = α·I + β·L·I² in kg/h for current I in A
// and electrode extension L in mm.
func (l Lesnewich) MeltingRateKgPerH(currentA, extensionMM float64) (float64, error) {
	if err := l.Validate(); err != nil {
		return 0, err
	}
	if err := mustBePositive("current A", currentA); err != nil {
		return 0, err
	}
	if err := mustBePositive("electrode extension mm", extensionMM); err != nil {
		return 0, err
	}
	return l.AlphaKgPerHA*currentA + l.BetaKgPerHA2MM*extensionMM*currentA*currentA, nil
}

// DepositionRateKgPerH evaluates the Lesnewich melting rate at current I (A)
// and extension L (mm) times the deposition efficiency η (0 < η ≤ 1).
func (l Lesnewich) DepositionRateKgPerH(currentA, extensionMM, efficiency float64) (float64, error) {
	if err := checkEfficiency(efficiency); err != nil {
		return 0, err
	}
	mr, err := l.MeltingRateKgPerH(currentA, extensionMM)
	return mr * efficiency, err
}

// ExtensionFromCTWD returns the electrode extension L = CTWD − arc length in
// mm. Records usually hold only CTWD; the arc length is not measured, so the
// caller states it (typically estimated from voltage and transfer mode, a few
// mm for GMAW). The arc length must be positive and shorter than the CTWD.
func ExtensionFromCTWD(ctwdMM, arcLengthMM float64) (float64, error) {
	if err := mustBePositive("CTWD mm", ctwdMM); err != nil {
		return 0, err
	}
	if err := mustBePositive("arc length mm", arcLengthMM); err != nil {
		return 0, err
	}
	if arcLengthMM >= ctwdMM {
		return 0, &InputError{Field: "arc length mm", Value: arcLengthMM,
			Reason: fmt.Sprintf("must be shorter than CTWD %g mm (no wire would stick out)", ctwdMM)}
	}
	return ctwdMM - arcLengthMM, nil
}

// checkEfficiency validates a deposition or thermal efficiency: 0 < η ≤ 1.
func checkEfficiency(efficiency float64) error {
	if err := mustBePositive("efficiency", efficiency); err != nil {
		return err
	}
	if efficiency > 1 {
		return &InputError{Field: "efficiency", Value: efficiency, Reason: "must not exceed 1"}
	}
	return nil
}

// LesnewichFromInchPound returns the coefficients given in inch-pound units,
// α in lb/(h·A) and β in lb/(h·A²·in), in the stored metric units:
// α_kg = α_lb·0.45359237, β_kg = β_lb·0.45359237/25.4 (exact, NIST SP 811),
// since MR = β·L·I² with L in inches is β/25.4 per millimetre of extension.
func LesnewichFromInchPound(alphaLbPerHA, betaLbPerHA2In float64) Lesnewich {
	return Lesnewich{AlphaKgPerHA: LbPerHToKgPerH(alphaLbPerHA), BetaKgPerHA2MM: LbPerHToKgPerH(betaLbPerHA2In) / MMPerInch}
}

// InchPound returns α in lb/(h·A) and β in lb/(h·A²·in), the inverse of
// LesnewichFromInchPound.
func (l Lesnewich) InchPound() (alphaLbPerHA, betaLbPerHA2In float64) {
	return KgPerHToLbPerH(l.AlphaKgPerHA), KgPerHToLbPerH(l.BetaKgPerHA2MM) * MMPerInch
}
