package predict_test

import (
	"math"
	"testing"

	"etchlog/predict"
)

// TestLesnewichInchPound checks the inch-pound coefficient forms against the
// exact definitions 1 lb = 0.45359237 kg and 1 in = 25.4 mm (NIST SP 811):
// α in lb/(h·A) times 0.45359237 is kg/(h·A); β in lb/(h·A²·in) times
// 0.45359237/25.4 is kg/(h·A²·mm). The melting rate at one setting must be
// the same mass whichever units the coefficients and extension are in.
func TestLesnewichInchPound(t *testing.T) {
	l := predict.LesnewichFromInchPound(1, 1)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"alpha kg/(h·A) of 1 lb/(h·A)", l.AlphaKgPerHA, 0.45359237},                 // NIST SP 811
		{"beta kg/(h·A²·mm) of 1 lb/(h·A²·in)", l.BetaKgPerHA2MM, 0.45359237 / 25.4}, // NIST SP 811
	} {
		if math.Abs(c.got-c.want) > 1e-15*c.want {
			t.Errorf("%s = %.17g, want %.17g", c.name, c.got, c.want)
		}
	}
	// Round trip and same mass rate: α = 0.0317 lb/(h·A), β = 1.85e-4
	// lb/(h·A²·in) at 250 A and 0.75 in (19.05 mm) of extension.
	const alphaLb, betaLb, amps, extIn = 0.0317, 1.85e-4, 250.0, 0.75
	m := predict.LesnewichFromInchPound(alphaLb, betaLb)
	a, b := m.InchPound()
	if math.Abs(a-alphaLb) > 1e-15*alphaLb || math.Abs(b-betaLb) > 1e-15*betaLb {
		t.Errorf("InchPound(LesnewichFromInchPound(%g, %g)) = %g, %g", alphaLb, betaLb, a, b)
	}
	lbPerH := alphaLb*amps + betaLb*extIn*amps*amps
	kgPerH, err := m.MeltingRateKgPerH(amps, extIn*25.4)
	if err != nil {
		t.Fatal(err)
	}
	if want := lbPerH * 0.45359237; math.Abs(kgPerH-want) > 1e-13*want {
		t.Errorf("melting rate = %.15g kg/h, want %.15g (%.15g lb/h)", kgPerH, want, lbPerH)
	}
}
