package predict_test

import (
	"errors"
	"math"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

func TestHeatInputWorkedExample(t *testing.T) {
	// Computed by hand: 200 A, 25 V, 300 mm/min = 5 mm/s → 25·200/5 =
	// 1000 J/mm = 1.0 kJ/mm arc energy; × k 0.8 (GMAW) → 0.8 kJ/mm.
	s := predict.MMPerMinToMMPerS(300)
	e, err := predict.ArcEnergyJPerMM(25, 200, s)
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "arc energy kJ/mm", predict.JPerMMToKJPerMM(e), 1.0, 1e-15)
	k, err := predict.ThermalEfficiency(predict.ProcessGMAW)
	if err != nil {
		t.Fatal(err)
	}
	q, err := predict.HeatInputJPerMM(k, 25, 200, s)
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "heat input kJ/mm", predict.JPerMMToKJPerMM(q), 0.8, 1e-15)
	// Inch form by hand: 300 mm/min = 11.811 in/min; 60·25·200/11.811 = 25 400 J/in.
	ein, err := predict.ArcEnergyJPerIn(25, 200, predict.MMPerSToInPerMin(s))
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "arc energy J/in", ein, 25400, 1e-14)
	// Waveform forms by hand: 60 kJ over 60 mm, or 5 kW at 5 mm/s → 1000 J/mm.
	we, _ := predict.WaveformEnergyHeatInputJPerMM(60000, 60)
	wp, _ := predict.WaveformPowerHeatInputJPerMM(5000, 5)
	checkRel(t, "waveform energy J/mm", we, 1000, 1e-15)
	checkRel(t, "waveform power J/mm", wp, 1000, 1e-15)
}

func TestArcEnergyInchFormAgrees(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		i, s, v, _ := drawWeld(t)
		mm, err1 := predict.ArcEnergyJPerMM(v, i, s)
		in, err2 := predict.ArcEnergyJPerIn(v, i, predict.MMPerSToInPerMin(s))
		if err1 != nil || err2 != nil {
			t.Fatalf("errors %v, %v", err1, err2)
		}
		checkRel(t, "J/in form converted to J/mm", predict.JPerInToJPerMM(in), mm, 1e-14)
	})
}

func TestThermalEfficiency(t *testing.T) {
	// Thermal efficiency factors k as in EN 1011-1 / ISO/TR 17671-1 (from memory).
	cases := []struct {
		p    predict.ArcProcess
		want float64
	}{
		{predict.ProcessGMAW, 0.8}, {predict.ProcessFCAW, 0.8}, {predict.ProcessSMAW, 0.8},
		{predict.ProcessGTAW, 0.6}, {predict.ProcessSAW, 1.0},
	}
	for _, c := range cases {
		t.Run(string(c.p), func(t *testing.T) {
			got, err := predict.ThermalEfficiency(c.p)
			if err != nil || got != c.want {
				t.Errorf("ThermalEfficiency(%s) = %v, %v; want %v", c.p, got, err, c.want)
			}
		})
	}
	t.Run("ErrUnknownProcess", func(t *testing.T) {
		if _, err := predict.ThermalEfficiency("OFW"); !errors.Is(err, predict.ErrInvalidInput) {
			t.Errorf("ThermalEfficiency(OFW) error = %v, want ErrInvalidInput", err)
		}
	})
}

func TestHeatInputRule(t *testing.T) {
	cases := []struct {
		name    string
		r       predict.HeatInputRule
		want    float64 // J/mm at 25 V, 200 A, 5 mm/s (1000 J/mm arc energy)
		wantErr bool
	}{
		{name: "ArcEnergy", r: predict.HeatInputRule{Form: predict.HeatInputArcEnergy}, want: 1000},
		{name: "ThermalEfficiency", r: predict.HeatInputRule{Form: predict.HeatInputThermalEfficiency, Efficiency: 0.8}, want: 800},
		{name: "WaveformPower", r: predict.HeatInputRule{Form: predict.HeatInputWaveformPower, PowerRatio: 1.1}, want: 1100},
		{name: "WaveformEnergy", r: predict.HeatInputRule{Form: predict.HeatInputWaveformEnergy, PowerRatio: 1.05}, want: 1050},
		{name: "ErrEfficiencyMissing", r: predict.HeatInputRule{Form: predict.HeatInputThermalEfficiency}, wantErr: true},
		{name: "ErrPowerRatioNaN", r: predict.HeatInputRule{Form: predict.HeatInputWaveformPower, PowerRatio: math.NaN()}, wantErr: true},
		{name: "ErrUnknownForm", r: predict.HeatInputRule{Form: "average"}, wantErr: true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := c.r.JPerMM(25, 200, 5)
			if c.wantErr {
				if !errors.Is(err, predict.ErrInvalidInput) {
					t.Errorf("JPerMM error = %v, want ErrInvalidInput", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			checkRel(t, "JPerMM", got, c.want, 1e-15)
		})
	}
}

func TestHeatInputRejectsBadInput(t *testing.T) {
	cases := []struct {
		name string
		f    func() (float64, error)
	}{
		{"ErrArcEnergyTravelZero", func() (float64, error) { return predict.ArcEnergyJPerMM(25, 200, 0) }},
		{"ErrArcEnergyVoltageNaN", func() (float64, error) { return predict.ArcEnergyJPerMM(math.NaN(), 200, 5) }},
		{"ErrInchCurrentNegative", func() (float64, error) { return predict.ArcEnergyJPerIn(25, -200, 12) }},
		{"ErrThermalKAboveOne", func() (float64, error) { return predict.HeatInputJPerMM(1.2, 25, 200, 5) }},
		{"ErrWaveformLengthZero", func() (float64, error) { return predict.WaveformEnergyHeatInputJPerMM(6e4, 0) }},
		{"ErrWaveformPowerInf", func() (float64, error) { return predict.WaveformPowerHeatInputJPerMM(math.Inf(1), 5) }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, err := c.f(); !errors.Is(err, predict.ErrInvalidInput) {
				t.Errorf("error = %v, want ErrInvalidInput", err)
			}
		})
	}
}
