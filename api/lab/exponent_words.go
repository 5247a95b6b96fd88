package lab

import (
	"fmt"
	"math"
	"strings"

	"etchlog/predict"
)

// ExponentTestWords states in words what a calibration says about the
// published Jackson exponents (current 4/3, travel speed −1/3, voltage
// −2/3): for a free-exponent fit, the F test of the published exponents
// against the fitted ones, judged at the calibration's own level; for a
// fixed-exponent fit, that it assumed them; for a Lesnewich fit, nothing ("").
func ExponentTestWords(model string, fit *predict.PenetrationFit, level float64) string {
	switch {
	case fit == nil:
		return ""
	case model == string(predict.ModelJacksonFixed):
		return fmt.Sprintf("This fit holds the published exponents (current %s, travel speed %s, voltage %s) and fits K only, "+
			"so it cannot test them: fit jackson_free on the same coupons to compare.", exponentFraction(predict.JacksonCurrentExponent),
			exponentFraction(predict.JacksonTravelExponent), exponentFraction(predict.JacksonVoltageExponent))
	case fit.FTest == nil:
		return "This fit carries no test of the published exponents."
	}
	t, alpha := fit.FTest, 1-level
	fitted := fmt.Sprintf("current %.2f, travel speed %.2f, voltage %.2f", fit.CurrentExponent, fit.TravelSpeedExponent, fit.VoltageExponent)
	published := fmt.Sprintf("current %s, travel speed %s, voltage %s", exponentFraction(predict.JacksonCurrentExponent),
		exponentFraction(predict.JacksonTravelExponent), exponentFraction(predict.JacksonVoltageExponent))
	stat := fmt.Sprintf("F(%d, %d) = %s, p = %s", t.DF1, t.DF2, fWords(t.F), pWords(t.PValue))
	if t.PValue >= alpha {
		return fmt.Sprintf("The published exponents (%s) describe these %d coupons about as well as the fitted ones (%s): %s, "+
			"not below %s. At the %s level the coupons give no reason to leave the published exponents.",
			published, fit.N, fitted, stat, trimDecimal(alpha), levelPercent(level))
	}
	return fmt.Sprintf("These %d coupons depart from the published exponents (%s): the fitted ones (%s) leave clearly less scatter, %s, "+
		"below %s. At the %s level the published exponents do not describe this shop's coupons; "+
		"the fitted ones do better, within the settings the coupons were welded at.",
		fit.N, published, fitted, stat, trimDecimal(alpha), levelPercent(level))
}

// exponentFraction writes an exponent as the fraction it is published as.
func exponentFraction(v float64) string {
	for _, d := range []float64{1, 2, 3} {
		if n := v * d; math.Abs(n-math.Round(n)) < 1e-9 {
			s := fmt.Sprintf("%.0f/%.0f", math.Abs(math.Round(n)), d)
			s = strings.TrimSuffix(s, "/1")
			if v < 0 {
				return "−" + s
			}
			return s
		}
	}
	return fmt.Sprintf("%.3g", v)
}

// fWords writes F; the largest float stands for an exact free fit.
func fWords(f float64) string {
	if f == math.MaxFloat64 {
		return "unbounded (the free fit is exact)"
	}
	return fmt.Sprintf("%.3g", f)
}

// pWords writes a p-value to four decimals, a tiny one as a bound.
func pWords(p float64) string {
	if p < 0.0001 {
		return "below 0.0001"
	}
	return trimDecimal(math.Round(p*1e4) / 1e4)
}

// trimDecimal writes v without trailing zeros (0.05, 0.38).
func trimDecimal(v float64) string {
	return strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.4f", v), "0"), ".")
}

// levelPercent writes a level as a percentage ("95 %").
func levelPercent(level float64) string { return trimDecimal(level*100) + " %" }
