package predict

import "math"

// Carbon steel wire density, handbook value: 7.85 g/cm³ (0.2836 lb/in³).
// The two are the same handbook figure rounded in each unit system; they
// differ by about 0.05 %.
const (
	CarbonSteelDensityGPerCM3  = 7.85
	CarbonSteelDensityLbPerIn3 = 0.2836
	CarbonSteelDensityKgPerMM3 = CarbonSteelDensityGPerCM3 * 1e-6
)

// WireAreaMM2 returns the cross-section area π·d²/4 of a round wire of
// diameter d in mm, in mm².
func WireAreaMM2(wireDiameterMM float64) (float64, error) {
	if err := mustBePositive("wire diameter mm", wireDiameterMM); err != nil {
		return 0, err
	}
	return math.Pi / 4 * wireDiameterMM * wireDiameterMM, nil
}

// wireMassPerHour returns the factor F in kg/h per (m/min) of wire feed:
// F = 1000 mm/m · 60 min/h · π·d²/4 (mm²) · ρ (kg/mm³).
func wireMassPerHour(wireDiameterMM, densityKgPerMM3 float64) (float64, error) {
	area, err := WireAreaMM2(wireDiameterMM)
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("wire density kg/mm³", densityKgPerMM3); err != nil {
		return 0, err
	}
	return MMPerMeter * SecondsPerMinute * area * densityKgPerMM3, nil
}

// WireMeltingRateKgPerH returns the melting rate implied by the wire feed
// (mass balance) MR = WFS·(π·d²/4)·ρ in kg/h, WFS in m/min, d in mm,
// ρ in kg/mm³.
func WireMeltingRateKgPerH(wireFeedSpeedMPerMin, wireDiameterMM, densityKgPerMM3 float64) (float64, error) {
	if err := mustBePositive("wire feed speed m/min", wireFeedSpeedMPerMin); err != nil {
		return 0, err
	}
	f, err := wireMassPerHour(wireDiameterMM, densityKgPerMM3)
	return wireFeedSpeedMPerMin * f, err
}

// WireFeedSpeedForMeltingRateMPerMin inverts WireMeltingRateKgPerH: the wire
// feed speed in m/min that melts the given kg/h of wire of diameter d (mm)
// and density ρ (kg/mm³).
func WireFeedSpeedForMeltingRateMPerMin(meltingRateKgPerH, wireDiameterMM, densityKgPerMM3 float64) (float64, error) {
	if err := mustBePositive("melting rate kg/h", meltingRateKgPerH); err != nil {
		return 0, err
	}
	f, err := wireMassPerHour(wireDiameterMM, densityKgPerMM3)
	if err != nil {
		return 0, err
	}
	return meltingRateKgPerH / f, nil
}

// DepositionRateKgPerH returns the deposition rate MR·η in kg/h from the
// melting rate MR (kg/h) and the deposition efficiency η, 0 < η ≤ 1 (GMAW
// solid wire typically 0.90–0.98, from memory).
func DepositionRateKgPerH(meltingRateKgPerH, efficiency float64) (float64, error) {
	if err := mustBePositive("melting rate kg/h", meltingRateKgPerH); err != nil {
		return 0, err
	}
	if err := checkEfficiency(efficiency); err != nil {
		return 0, err
	}
	return meltingRateKgPerH * efficiency, nil
}

// DepositAreaMM2 returns the deposited cross-section area per unit weld
// length, from the volume balance A = WFS·(π·d²/4)·η / S, in mm², with WFS in
// m/min (converted to mm/s), d in mm, η deposition efficiency and S travel
// speed in mm/s.
func DepositAreaMM2(wireFeedSpeedMPerMin, wireDiameterMM, efficiency, travelSpeedMMPerS float64) (float64, error) {
	if err := mustBePositive("wire feed speed m/min", wireFeedSpeedMPerMin); err != nil {
		return 0, err
	}
	area, err := WireAreaMM2(wireDiameterMM)
	if err != nil {
		return 0, err
	}
	if err := checkEfficiency(efficiency); err != nil {
		return 0, err
	}
	if err := mustBePositive("travel speed mm/s", travelSpeedMMPerS); err != nil {
		return 0, err
	}
	return MPerMinToMMPerS(wireFeedSpeedMPerMin) * area * efficiency / travelSpeedMMPerS, nil
}

// TravelSpeedForDepositAreaMMPerS inverts DepositAreaMM2: the travel speed in
// mm/s that lays down the target area (mm²) at the given wire feed speed
// (m/min), wire diameter (mm) and deposition efficiency.
func TravelSpeedForDepositAreaMMPerS(targetAreaMM2, wireFeedSpeedMPerMin, wireDiameterMM, efficiency float64) (float64, error) {
	if err := mustBePositive("deposit area mm²", targetAreaMM2); err != nil {
		return 0, err
	}
	// A·S = WFS·a·η, so S = (WFS·a·η)/A; reuse the forward validation at S = 1.
	flux, err := DepositAreaMM2(wireFeedSpeedMPerMin, wireDiameterMM, efficiency, 1)
	if err != nil {
		return 0, err
	}
	return flux / targetAreaMM2, nil
}
