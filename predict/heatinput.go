package predict

import "fmt"

// HeatInputForm names how heat input is computed; which form a code
// requires is the caller's choice.
type HeatInputForm string

// Heat input forms, as stored and sent at the API boundary.
const (
	// HeatInputArcEnergy is arc energy V·I/S (J/mm), no efficiency factor.
	HeatInputArcEnergy HeatInputForm = "arc_energy"
	// HeatInputThermalEfficiency is Q = k·V·I/S with k per process.
	HeatInputThermalEfficiency HeatInputForm = "thermal_efficiency"
	// HeatInputWaveformEnergy is measured instantaneous energy / weld length.
	HeatInputWaveformEnergy HeatInputForm = "waveform_energy"
	// HeatInputWaveformPower is average instantaneous power / travel speed.
	HeatInputWaveformPower HeatInputForm = "waveform_power"
)

// ArcProcess names an arc welding process by its trade abbreviation.
type ArcProcess string

// Arc processes with a tabulated thermal efficiency factor.
const (
	ProcessGMAW ArcProcess = "GMAW"
	ProcessFCAW ArcProcess = "FCAW"
	ProcessSMAW ArcProcess = "SMAW"
	ProcessGTAW ArcProcess = "GTAW"
	ProcessSAW  ArcProcess = "SAW"
)

// thermalEfficiency holds k per process as tabulated in EN 1011-1 /
// ISO/TR 17671-1 (from memory).
var thermalEfficiency = map[ArcProcess]float64{
	ProcessGMAW: 0.8, ProcessFCAW: 0.8, ProcessSMAW: 0.8,
	ProcessGTAW: 0.6, ProcessSAW: 1.0,
}

// ThermalEfficiency returns the thermal efficiency factor k of a process
// (0.8 GMAW/FCAW/SMAW, 0.6 GTAW, 1.0 SAW) or an error for an unknown one.
func ThermalEfficiency(p ArcProcess) (float64, error) {
	k, ok := thermalEfficiency[p]
	if !ok {
		return 0, &InputError{Field: "process", Reason: fmt.Sprintf("no thermal efficiency factor for %q", p)}
	}
	return k, nil
}

// ArcEnergyJPerMM returns arc energy V·I/S in J/mm, V in V, I in A, S in mm/s.
func ArcEnergyJPerMM(voltageV, currentA, travelSpeedMMPerS float64) (float64, error) {
	if err := checkCSV(currentA, travelSpeedMMPerS, voltageV); err != nil {
		return 0, err
	}
	return voltageV * currentA / travelSpeedMMPerS, nil
}

// ArcEnergyJPerIn returns arc energy in the inch form 60·V·I/S in J/in,
// V in V, I in A, S in in/min.
func ArcEnergyJPerIn(voltageV, currentA, travelSpeedInPerMin float64) (float64, error) {
	if err := mustBePositive("arc voltage V", voltageV); err != nil {
		return 0, err
	}
	if err := mustBePositive("current A", currentA); err != nil {
		return 0, err
	}
	if err := mustBePositive("travel speed in/min", travelSpeedInPerMin); err != nil {
		return 0, err
	}
	return SecondsPerMinute * voltageV * currentA / travelSpeedInPerMin, nil
}

// HeatInputJPerMM returns the thermal-efficiency form Q = k·V·I/S in J/mm,
// k the process thermal efficiency factor (0 < k ≤ 1, see ThermalEfficiency).
func HeatInputJPerMM(k, voltageV, currentA, travelSpeedMMPerS float64) (float64, error) {
	if err := checkEfficiency(k); err != nil {
		return 0, err
	}
	e, err := ArcEnergyJPerMM(voltageV, currentA, travelSpeedMMPerS)
	return k * e, err
}

// WaveformEnergyHeatInputJPerMM returns heat input from the instantaneous
// energy E in J recorded by the power source over a weld of length l in mm:
// E/l in J/mm.
func WaveformEnergyHeatInputJPerMM(energyJ, weldLengthMM float64) (float64, error) {
	if err := mustBePositive("arc energy J", energyJ); err != nil {
		return 0, err
	}
	if err := mustBePositive("weld length mm", weldLengthMM); err != nil {
		return 0, err
	}
	return energyJ / weldLengthMM, nil
}

// WaveformPowerHeatInputJPerMM returns heat input from the average
// instantaneous power P in W (mean of v(t)·i(t)) and travel speed S in mm/s:
// P/S in J/mm.
func WaveformPowerHeatInputJPerMM(powerW, travelSpeedMMPerS float64) (float64, error) {
	if err := mustBePositive("average instantaneous power W", powerW); err != nil {
		return 0, err
	}
	if err := mustBePositive("travel speed mm/s", travelSpeedMMPerS); err != nil {
		return 0, err
	}
	return powerW / travelSpeedMMPerS, nil
}

// HeatInputRule says how a planned V, I, S maps to heat input under a named
// form: H = F·V·I/S J/mm. F is 1 for arc_energy, Efficiency (k) for
// thermal_efficiency, and PowerRatio for the waveform forms, where
// PowerRatio is the measured average instantaneous power divided by mean
// voltage × mean current for the same waveform (≥ 1 for pulsed).
type HeatInputRule struct {
	Form       HeatInputForm
	Efficiency float64 // thermal efficiency k, thermal_efficiency only
	PowerRatio float64 // P_inst/(V̄·Ī), waveform forms only
}

// Factor returns F in H = F·V·I/S, validating the fields the form needs.
func (r HeatInputRule) Factor() (float64, error) {
	switch r.Form {
	case HeatInputArcEnergy:
		return 1, nil
	case HeatInputThermalEfficiency:
		if err := checkEfficiency(r.Efficiency); err != nil {
			return 0, err
		}
		return r.Efficiency, nil
	case HeatInputWaveformEnergy, HeatInputWaveformPower:
		if err := mustBePositive("waveform power ratio", r.PowerRatio); err != nil {
			return 0, err
		}
		return r.PowerRatio, nil
	}
	return 0, &InputError{Field: "heat input form", Reason: fmt.Sprintf("unknown form %q", r.Form)}
}

// JPerMM returns the planned heat input F·V·I/S in J/mm for V in V, I in A
// and S in mm/s.
func (r HeatInputRule) JPerMM(voltageV, currentA, travelSpeedMMPerS float64) (float64, error) {
	f, err := r.Factor()
	if err != nil {
		return 0, err
	}
	e, err := ArcEnergyJPerMM(voltageV, currentA, travelSpeedMMPerS)
	return f * e, err
}
