package predict

import "math"

// Closed-form inverses of the forward models. Each one solves exactly for a
// single unknown; none iterates.

// JacksonCurrentA returns the current in A that gives the target penetration
// P (mm) at travel speed S (mm/s) and voltage V (V) under the Jackson power
// law: I = (P/K)^(3/4)·(S·V²)^(1/4).
func JacksonCurrentA(k JacksonK, penetrationMM, travelSpeedMMPerS, voltageV float64) (float64, error) {
	km, err := metricK(k)
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return 0, err
	}
	if err := checkCSV(1, travelSpeedMMPerS, voltageV); err != nil {
		return 0, err
	}
	return jacksonCurrent(km, penetrationMM, travelSpeedMMPerS, voltageV), nil
}

// jacksonCurrent is JacksonCurrentA without validation; km is metric K.
func jacksonCurrent(km, penetrationMM, travelSpeedMMPerS, voltageV float64) float64 {
	return math.Pow(penetrationMM/km, 0.75) * math.Sqrt(math.Sqrt(travelSpeedMMPerS)*voltageV)
}

// JacksonVoltageV returns the voltage in V that gives the target penetration
// P (mm) at current I (A) and travel speed S (mm/s) under the Jackson power
// law: V = (K/P)^(3/2)·I²/√S.
func JacksonVoltageV(k JacksonK, penetrationMM, currentA, travelSpeedMMPerS float64) (float64, error) {
	km, err := metricK(k)
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return 0, err
	}
	if err := checkCSV(currentA, travelSpeedMMPerS, 1); err != nil {
		return 0, err
	}
	r := km / penetrationMM
	return r * math.Sqrt(r) * currentA * currentA / math.Sqrt(travelSpeedMMPerS), nil
}

// JacksonTravelSpeedMMPerS returns the travel speed in mm/s that gives the
// target penetration P (mm) at current I (A) and voltage V (V) under the
// Jackson power law: S = (K/P)³·I⁴/V².
func JacksonTravelSpeedMMPerS(k JacksonK, penetrationMM, currentA, voltageV float64) (float64, error) {
	km, err := metricK(k)
	if err != nil {
		return 0, err
	}
	if err := mustBePositive("penetration mm", penetrationMM); err != nil {
		return 0, err
	}
	if err := checkCSV(currentA, 1, voltageV); err != nil {
		return 0, err
	}
	r := km / penetrationMM * currentA * currentA / voltageV // (K/P)·I²/V
	return r * r * (km / penetrationMM), nil
}

// holdInputs checks the five positive inputs of a hold-penetration solve.
func holdInputs(currentA, travelSpeed1, travelSpeed2, voltage1V, voltage2V float64) error {
	for _, q := range []struct {
		name string
		v    float64
	}{{"current A", currentA}, {"travel speed 1", travelSpeed1}, {"travel speed 2", travelSpeed2},
		{"arc voltage 1 V", voltage1V}, {"arc voltage 2 V", voltage2V}} {
		if err := mustBePositive(q.name, q.v); err != nil {
			return err
		}
	}
	return nil
}

// HoldPenetrationCurrentA returns the current I₂ (A) that keeps Jackson
// penetration unchanged when travel speed goes from S₁ to S₂ (any one unit)
// and voltage from V₁ to V₂: I₂ = I₁·(S₂/S₁)^(1/4)·(V₂/V₁)^(1/2). K cancels.
func HoldPenetrationCurrentA(currentA, travelSpeed1, travelSpeed2, voltage1V, voltage2V float64) (float64, error) {
	if err := holdInputs(currentA, travelSpeed1, travelSpeed2, voltage1V, voltage2V); err != nil {
		return 0, err
	}
	return currentA * math.Sqrt(math.Sqrt(travelSpeed2/travelSpeed1)) * math.Sqrt(voltage2V/voltage1V), nil
}

// CurrentForMeltingRateA returns the current in A at which the Lesnewich
// relation gives the target melting rate MR (kg/h) at extension L (mm): the
// positive root of β·L·I² + α·I − MR = 0, written 2·MR/(α + √(α² + 4·β·L·MR))
// so that no cancellation occurs and β·L = 0 reduces to MR/α.
func (l Lesnewich) CurrentForMeltingRateA(meltingRateKgPerH, extensionMM float64) (float64, error) {
	if err := l.Validate(); err != nil {
		return 0, err
	}
	if err := mustBePositive("melting rate kg/h", meltingRateKgPerH); err != nil {
		return 0, err
	}
	if err := mustBePositive("electrode extension mm", extensionMM); err != nil {
		return 0, err
	}
	return lesnewichCurrent(l.AlphaKgPerHA, l.BetaKgPerHA2MM*extensionMM, meltingRateKgPerH), nil
}

// lesnewichCurrent is the stable positive root of βL·I² + α·I − MR = 0.
func lesnewichCurrent(alpha, betaL, meltingRateKgPerH float64) float64 {
	return 2 * meltingRateKgPerH / (alpha + math.Sqrt(alpha*alpha+4*betaL*meltingRateKgPerH))
}

// CurrentForDepositionRateA returns the current in A at which the Lesnewich
// melting rate times the deposition efficiency η (0 < η ≤ 1) equals the
// target deposition rate (kg/h) at extension L (mm).
func (l Lesnewich) CurrentForDepositionRateA(depositionRateKgPerH, extensionMM, efficiency float64) (float64, error) {
	if err := checkEfficiency(efficiency); err != nil {
		return 0, err
	}
	if err := mustBePositive("deposition rate kg/h", depositionRateKgPerH); err != nil {
		return 0, err
	}
	return l.CurrentForMeltingRateA(depositionRateKgPerH/efficiency, extensionMM)
}

// ExtensionForMeltingRateMM returns the electrode extension in mm at which
// the Lesnewich relation gives the target melting rate (kg/h) at current I
// (A): L = (MR − α·I)/(β·I²). It fails when β is zero or when α·I alone
// already meets or exceeds the target (no positive extension).
func (l Lesnewich) ExtensionForMeltingRateMM(meltingRateKgPerH, currentA float64) (float64, error) {
	if err := l.Validate(); err != nil {
		return 0, err
	}
	if err := mustBePositive("melting rate kg/h", meltingRateKgPerH); err != nil {
		return 0, err
	}
	if err := mustBePositive("current A", currentA); err != nil {
		return 0, err
	}
	if l.BetaKgPerHA2MM == 0 {
		return 0, &InputError{Field: "lesnewich beta kg/(h·A²·mm)", Reason: "is zero, extension has no effect"}
	}
	rest := meltingRateKgPerH - l.AlphaKgPerHA*currentA
	if rest <= 0 {
		return 0, &InputError{Field: "melting rate kg/h", Value: meltingRateKgPerH,
			Reason: "is reached by arc heating alone at this current; no positive extension gives it"}
	}
	return rest / (l.BetaKgPerHA2MM * currentA * currentA), nil
}
