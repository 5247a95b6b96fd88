package predict_test

import (
	"errors"
	"math"
	"testing"

	"etchlog/predict"
)

func TestExtensionFromCTWD(t *testing.T) {
	cases := []struct {
		name          string
		ctwd, arc     float64
		want          float64
		wantErr       bool
		wantErrReason string
	}{
		// 20 mm CTWD with a 5 mm arc leaves 15 mm of wire (hand arithmetic).
		{name: "OK", ctwd: 20, arc: 5, want: 15},
		// 3/4 in CTWD, 1/8 in arc: 19.05 − 3.175 = 15.875 mm (hand arithmetic).
		{name: "OKInch", ctwd: predict.InchToMM(0.75), arc: predict.InchToMM(0.125), want: 15.875},
		{name: "ErrArcLongerThanCTWD", ctwd: 10, arc: 12, wantErr: true},
		{name: "ErrArcEqualsCTWD", ctwd: 10, arc: 10, wantErr: true},
		{name: "ErrArcZero", ctwd: 10, arc: 0, wantErr: true},
		{name: "ErrCTWDNaN", ctwd: math.NaN(), arc: 3, wantErr: true},
		{name: "ErrCTWDInf", ctwd: math.Inf(1), arc: 3, wantErr: true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := predict.ExtensionFromCTWD(c.ctwd, c.arc)
			if c.wantErr {
				if !errors.Is(err, predict.ErrInvalidInput) {
					t.Errorf("ExtensionFromCTWD(%v, %v) error = %v, want ErrInvalidInput", c.ctwd, c.arc, err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			checkRel(t, "ExtensionFromCTWD", got, c.want, 1e-15)
		})
	}
}

func TestLesnewichForward(t *testing.T) {
	// Plausible coefficients (from memory); value computed by hand:
	// 0.008·250 + 3e-6·15·250² = 2 + 2.8125 = 4.8125 kg/h.
	l := predict.Lesnewich{AlphaKgPerHA: 0.008, BetaKgPerHA2MM: 3e-6}
	mr, err := l.MeltingRateKgPerH(250, 15)
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "MeltingRateKgPerH(250 A, 15 mm)", mr, 4.8125, 1e-15)
	dr, err := l.DepositionRateKgPerH(250, 15, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "DepositionRateKgPerH(η 0.95)", dr, 4.8125*0.95, 1e-15)

	bad := []struct {
		name string
		l    predict.Lesnewich
		i, e float64
	}{
		{"ErrBothZero", predict.Lesnewich{}, 250, 15},
		{"ErrAlphaNegative", predict.Lesnewich{AlphaKgPerHA: -0.01, BetaKgPerHA2MM: 3e-6}, 250, 15},
		{"ErrBetaNaN", predict.Lesnewich{AlphaKgPerHA: 0.01, BetaKgPerHA2MM: math.NaN()}, 250, 15},
		{"ErrCurrentZero", l, 0, 15},
		{"ErrCurrentInf", l, math.Inf(1), 15},
		{"ErrExtensionNegative", l, 250, -1},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			if _, err := c.l.MeltingRateKgPerH(c.i, c.e); !errors.Is(err, predict.ErrInvalidInput) {
				t.Errorf("MeltingRateKgPerH(%v, %v) error = %v, want ErrInvalidInput", c.i, c.e, err)
			}
		})
	}
	t.Run("ErrEfficiencyAboveOne", func(t *testing.T) {
		if _, err := l.DepositionRateKgPerH(250, 15, 1.02); !errors.Is(err, predict.ErrInvalidInput) {
			t.Errorf("DepositionRateKgPerH(η 1.02) error = %v, want ErrInvalidInput", err)
		}
	})
}
