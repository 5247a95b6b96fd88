package predict_test

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"etchlog/predict"
)

// synergicSamples are coupons whose penetration follows the published
// Jackson law with a small wobble. With synergic true the voltage follows
// the current as on a synergic line, V = 14 + 0.05·I plus ±0.1 V of noise;
// otherwise the same voltages are welded in an order unrelated to current.
func synergicSamples(synergic bool) []predict.PenetrationSample {
	const n = 12
	out := make([]predict.PenetrationSample, n)
	for i := range out {
		cur := 120 + 12*float64(i)
		v := 14 + 0.05*cur + 0.1*math.Sin(7*float64(i))
		if !synergic {
			j := (5 * i) % n // a permutation of the coupons: same voltages, shuffled
			v = 14 + 0.05*(120+12*float64(j)) + 0.1*math.Sin(7*float64(j))
		}
		s := 4 + 0.7*float64((3*i)%4)
		p := 0.025 * cur * math.Cbrt(cur/(s*v*v)) * (1 + 0.03*math.Sin(3*float64(i)))
		out[i] = predict.PenetrationSample{ID: fmt.Sprint(i), CurrentA: cur, VoltageV: v, TravelSpeedMMPerS: s, PenetrationMM: p}
	}
	return out
}

// TestFreeFitIdentifiability: on synergic data (voltage follows current)
// the free-exponent fit refuses, naming ln I and ln V as moving together
// and suggesting what to vary or the fixed-exponent fit; the same
// voltages welded independently of current are accepted, and the fit
// reports VIF and condition number. VIF_j = 1/(1 − R²_j) (standard
// regression diagnostics); the limit of 10 is common practice, no source.
func TestFreeFitIdentifiability(t *testing.T) {
	_, err := predict.FitPenetrationFree(synergicSamples(true))
	if !errors.Is(err, predict.ErrDegenerate) {
		t.Fatalf("synergic data: err = %v, want ErrDegenerate", err)
	}
	for _, want := range []string{"ln I (current) and ln V (voltage) move together", "vary voltage independently of current", "jackson_fixed", "VIF"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("refusal %q lacks %q", err, want)
		}
	}
	if _, err := predict.FitPenetrationFixed(synergicSamples(true)); err != nil {
		t.Errorf("fixed-exponent fit of the synergic data: %v, want accepted", err)
	}
	fit, err := predict.FitPenetrationFree(synergicSamples(false))
	if err != nil {
		t.Fatalf("independent voltage: %v, want accepted", err)
	}
	id := fit.Identifiability
	if id == nil {
		t.Fatal("no identifiability report")
	}
	for name, v := range map[string]float64{"ln I": id.VIFLnCurrent, "ln S": id.VIFLnTravel, "ln V": id.VIFLnVoltage} {
		if !(v >= 1 && v <= predict.MaxVIF) {
			t.Errorf("VIF %s = %g, want in [1, %d]", name, v, predict.MaxVIF)
		}
	}
	if !(id.ConditionNumber >= 1 && id.ConditionNumber < 10) {
		t.Errorf("condition number = %g, want small", id.ConditionNumber)
	}
	// Check one VIF by its definition, 1/(1 − R²) of ln V regressed on ln I
	// and ln S: for two regressors R² = (r_vi² + r_vs² − 2·r_vi·r_vs·r_is)/(1 − r_is²).
	ri, rs, ris := id.CorrCurrentVoltage, id.CorrTravelVoltage, id.CorrCurrentTravel
	r2 := (ri*ri + rs*rs - 2*ri*rs*ris) / (1 - ris*ris)
	if want := 1 / (1 - r2); math.Abs(id.VIFLnVoltage-want) > 1e-9*want {
		t.Errorf("VIF ln V = %.12g, want 1/(1 − R²) = %.12g", id.VIFLnVoltage, want)
	}
}
