package lab

import (
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"etchlog/predict"
)

// TestExponentTestWords checks the verdict on either side of the 5 %
// critical value of F(3, 14), 3.34 (tables of the F distribution, e.g. the
// NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.3; from
// memory), with p from gonum's F distribution as the API computes it.
func TestExponentTestWords(t *testing.T) {
	free := func(f float64) *predict.PenetrationFit {
		return &predict.PenetrationFit{Model: predict.ModelJacksonFree, N: 18, CurrentExponent: 1.41, TravelSpeedExponent: -0.3,
			VoltageExponent: -0.71, FTest: &predict.ExponentFTest{F: f, DF1: 3, DF2: 14, PValue: distuv.F{D1: 3, D2: 14}.Survival(f)}}
	}
	for _, c := range []struct {
		name  string
		model string
		fit   *predict.PenetrationFit
		want  []string
	}{
		{"BelowCritical", "jackson_free", free(3.2), []string{"describe these 18 coupons about as well", "F(3, 14) = 3.2", "not below 0.05", "95 % level"}},
		{"AboveCritical", "jackson_free", free(3.5), []string{"depart from the published exponents", "F(3, 14) = 3.5", "below 0.05", "current 1.41"}},
		{"Fixed", "jackson_fixed", &predict.PenetrationFit{Model: predict.ModelJacksonFixed}, []string{"current 4/3, travel speed −1/3, voltage −2/3", "cannot test"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			got := ExponentTestWords(c.model, c.fit, 0.95)
			for _, w := range c.want {
				if !strings.Contains(got, w) {
					t.Errorf("ExponentTestWords = %q, want it to contain %q", got, w)
				}
			}
		})
	}
	if got := ExponentTestWords("lesnewich", nil, 0.95); got != "" {
		t.Errorf("ExponentTestWords(lesnewich) = %q, want none", got)
	}
}
