package predict_test

import (
	"errors"
	"math"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

func TestWireMeltingRateHandbook(t *testing.T) {
	// Wire arithmetic (handbook density 0.2836 lb/in³): 0.035 in steel wire
	// melts π/4·0.035²·0.2836·60 ≈ 0.01637 lb/h per in/min of wire feed.
	d := predict.InchToMM(0.035)
	rho := predict.LbPerIn3ToKgPerMM3(predict.CarbonSteelDensityLbPerIn3)
	mr, err := predict.WireMeltingRateKgPerH(predict.InPerMinToMPerMin(1), d, rho)
	if err != nil {
		t.Fatal(err)
	}
	lbph := predict.KgPerHToLbPerH(mr)
	checkAbs(t, "lb/h per in/min, 0.035 in wire", lbph, 0.0164, 0.00005)
	checkRel(t, "lb/h per in/min vs inch formula", lbph, math.Pi/4*0.035*0.035*0.2836*60, 1e-14)

	// Metric handbook form, computed by hand: 1.2 mm wire at 10 m/min and
	// 7.85 g/cm³ melts 600 m/h · 1.130973 mm² · 7.85e-3 kg/(m·mm²) = 5.3269 kg/h.
	mr, err = predict.WireMeltingRateKgPerH(10, 1.2, predict.CarbonSteelDensityKgPerMM3)
	if err != nil {
		t.Fatal(err)
	}
	checkAbs(t, "1.2 mm at 10 m/min kg/h", mr, 5.3269, 0.00005)
	dep, err := predict.DepositionRateKgPerH(mr, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "deposition at η 0.95", dep, 0.95*mr, 1e-15)
}

func TestDepositAreaWorkedExample(t *testing.T) {
	// By hand: 6 m/min = 100 mm/s; 1.2 mm wire area 1.130973 mm²;
	// 100·1.130973·0.95/5 mm/s = 21.4885 mm².
	a, err := predict.DepositAreaMM2(6, 1.2, 0.95, 5)
	if err != nil {
		t.Fatal(err)
	}
	checkAbs(t, "DepositAreaMM2", a, 21.4885, 0.00005)
	s, err := predict.TravelSpeedForDepositAreaMMPerS(a, 6, 1.2, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "TravelSpeedForDepositAreaMMPerS", s, 5, 1e-15)
}

func TestWireInversesRoundTrip(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		wfs := rapid.Float64Range(0.5, 30).Draw(t, "wfsMPerMin")
		d := rapid.Float64Range(0.6, 4).Draw(t, "wireDiameterMM")
		eff := rapid.Float64Range(0.5, 1).Draw(t, "efficiency")
		s := rapid.Float64Range(0.5, 30).Draw(t, "travelMMPerS")
		mr, err := predict.WireMeltingRateKgPerH(wfs, d, predict.CarbonSteelDensityKgPerMM3)
		if err != nil {
			t.Fatal(err)
		}
		got, err := predict.WireFeedSpeedForMeltingRateMPerMin(mr, d, predict.CarbonSteelDensityKgPerMM3)
		if err != nil {
			t.Fatal(err)
		}
		checkRel(t, "WireFeedSpeedForMeltingRateMPerMin", got, wfs, roundTrip)
		a, _ := predict.DepositAreaMM2(wfs, d, eff, s)
		gotS, err := predict.TravelSpeedForDepositAreaMMPerS(a, wfs, d, eff)
		if err != nil {
			t.Fatal(err)
		}
		checkRel(t, "TravelSpeedForDepositAreaMMPerS", gotS, s, roundTrip)
	})
}

func TestDepositRejectsBadInput(t *testing.T) {
	cases := []struct {
		name           string
		wfs, d, eff, s float64
	}{
		{"ErrWFSZero", 0, 1.2, 0.95, 5},
		{"ErrDiameterNegative", 6, -1.2, 0.95, 5},
		{"ErrEfficiencyZero", 6, 1.2, 0, 5},
		{"ErrEfficiencyAboveOne", 6, 1.2, 1.5, 5},
		{"ErrEfficiencyNaN", 6, 1.2, math.NaN(), 5},
		{"ErrTravelInf", 6, 1.2, 0.95, math.Inf(1)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, err := predict.DepositAreaMM2(c.wfs, c.d, c.eff, c.s); !errors.Is(err, predict.ErrInvalidInput) {
				t.Errorf("DepositAreaMM2(%v, %v, %v, %v) error = %v, want ErrInvalidInput", c.wfs, c.d, c.eff, c.s, err)
			}
		})
	}
	t.Run("ErrDensityZero", func(t *testing.T) {
		if _, err := predict.WireMeltingRateKgPerH(6, 1.2, 0); !errors.Is(err, predict.ErrInvalidInput) {
			t.Errorf("WireMeltingRateKgPerH(density 0) error = %v, want ErrInvalidInput", err)
		}
	})
}
