package predict

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestFitRefusals checks that degenerate or invalid coupon sets are refused
// with a clear sentinel error instead of a nonsense fit.
func TestFitRefusals(t *testing.T) {
	base := synthPenetration(t, 5, 12, publishedTruth)
	with := func(edit func(i int, s *PenetrationSample)) []PenetrationSample {
		out := append([]PenetrationSample(nil), base...)
		for i := range out {
			edit(i, &out[i])
		}
		return out
	}
	tests := []struct {
		name    string
		samples []PenetrationSample
		fixed   bool
		want    error
		msg     string
	}{
		{"ErrDegenerateOneCurrent", with(func(_ int, s *PenetrationSample) { s.CurrentA = 250 }), false, ErrDegenerate, "one current (250 A)"},
		{"ErrDegenerateOneVoltage", with(func(_ int, s *PenetrationSample) { s.VoltageV = 24 }), false, ErrDegenerate, "one voltage"},
		{"ErrDegenerateOneTravelSpeed", with(func(_ int, s *PenetrationSample) { s.TravelSpeedMMPerS = 5 }), false, ErrDegenerate, "one travel speed"},
		{"ErrDegenerateCollinear", with(func(_ int, s *PenetrationSample) { s.VoltageV = s.CurrentA / 10 }), false, ErrDegenerate, "collinear"},
		{"ErrTooFewSamplesFree", base[:4], false, ErrTooFewSamples, "at least 5"},
		{"ErrTooFewSamplesFixed", base[:1], true, ErrTooFewSamples, "at least 2"},
		{"ErrInvalidInputNaN", with(func(i int, s *PenetrationSample) {
			if i == 3 {
				s.PenetrationMM = math.NaN()
			}
		}), true, ErrInvalidInput, "penetration mm"},
		{"ErrInvalidInputNegative", with(func(i int, s *PenetrationSample) {
			if i == 0 {
				s.CurrentA = -200
			}
		}), false, ErrInvalidInput, "current A"},
		{"ErrInvalidInputImplausible", with(func(i int, s *PenetrationSample) {
			if i == 1 {
				s.TravelSpeedMMPerS = 250 // mm/min typed as mm/s
			}
		}), false, ErrInvalidInput, "plausible"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var err error
			if tt.fixed {
				_, err = FitPenetrationFixed(tt.samples)
			} else {
				_, err = FitPenetrationFree(tt.samples)
			}
			if !errors.Is(err, tt.want) || !strings.Contains(err.Error(), tt.msg) {
				t.Errorf("fit error = %v, want %v mentioning %q", err, tt.want, tt.msg)
			}
		})
	}
	melt := synthMelting(t, 5, 10, 0.01, 3e-6, 0.05)
	for i := range melt {
		melt[i].CurrentA, melt[i].ExtensionMM = 250, 15
	}
	if _, err := FitMeltingRate(melt); !errors.Is(err, ErrDegenerate) {
		t.Errorf("FitMeltingRate(one current, one extension) error = %v, want %v", err, ErrDegenerate)
	}
	if _, err := FitMeltingRate(melt[:2]); !errors.Is(err, ErrTooFewSamples) {
		t.Errorf("FitMeltingRate(2 samples) error = %v, want %v", err, ErrTooFewSamples)
	}
}

// TestPredictRefusals checks Predict's input and stored-fit validation.
func TestPredictRefusals(t *testing.T) {
	fit, err := FitPenetrationFree(synthPenetration(t, 6, 30, publishedTruth))
	if err != nil {
		t.Fatalf("FitPenetrationFree error: %v", err)
	}
	broken := fit
	broken.Cov = broken.Cov[:2]
	tests := []struct {
		name                 string
		fit                  PenetrationFit
		current, volt, speed float64
		level                float64
		want                 error
	}{
		{"ErrInvalidInputLevel", fit, 250, 24, 6, 1.5, ErrInvalidInput},
		{"ErrInvalidInputLevelZero", fit, 250, 24, 6, 0, ErrInvalidInput},
		{"ErrInvalidInputCurrent", fit, 0, 24, 6, 0.95, ErrInvalidInput},
		{"ErrInvalidInputInf", fit, 250, math.Inf(1), 6, 0.95, ErrInvalidInput},
		{"ErrInvalidFitCov", broken, 250, 24, 6, 0.95, ErrInvalidFit},
		{"ErrInvalidFitModel", PenetrationFit{Model: ModelLesnewich}, 250, 24, 6, 0.95, ErrInvalidFit},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := tt.fit.Predict(tt.current, tt.volt, tt.speed, tt.level); !errors.Is(err, tt.want) {
				t.Errorf("Predict(%g, %g, %g, %g) error = %v, want %v", tt.current, tt.volt, tt.speed, tt.level, err, tt.want)
			}
		})
	}
}
