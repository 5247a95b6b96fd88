package lab_test

import (
	"encoding/json"
	"testing"

	"etchlog/api/lab"
	"etchlog/db"
	"etchlog/predict"
)

// flagsFor evaluates one coupon's values against ranges derived from one
// PQR by the model's own rules (predict.Derive, predict.Checker) and returns
// the flags as the API sends them (JSON read back into db.Flag).
func flagsFor(t *testing.T, rules []predict.Rule, pqr, coupon predict.Observation) []db.Flag {
	t.Helper()
	ranges, err := predict.Derive(rules, []predict.PQRValues{{Label: "PQR-1", Values: pqr}})
	if err != nil {
		t.Fatal(err)
	}
	var out []db.Flag
	for _, f := range predict.NewChecker(ranges).Evaluate(&coupon, nil) {
		b, _ := json.Marshal(f)
		var d db.Flag
		if err := json.Unmarshal(b, &d); err != nil {
			t.Fatal(err)
		}
		out = append(out, d)
	}
	return out
}

// TestFlagSentence checks the sentence of each kind of flag the model
// makes. The bands are those of the built-in structural-style rule set
// (migration 000003, recalled from memory): current and travel speed ±10 %
// and ±25 % of the PQR, preheat no more than 25 °F (125/9 °C) below it,
// shielding gas the same. Conversions: 1 in = 25.4 mm exactly (NIST SP 811, B.8).
func TestFlagSentence(t *testing.T) {
	t.Parallel()
	pct := func(x float64) *float64 { return &x }
	rules := []predict.Rule{
		{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: pct(10), AbovePct: pct(10)},
		{Variable: predict.VarTravelSpeed, Kind: predict.RulePercentBand, BelowPct: pct(25), AbovePct: pct(25)},
		{Variable: predict.VarPreheat, Kind: predict.RuleAbsoluteBand, Below: pct(125.0 / 9)},
		{Variable: predict.VarShieldingGas, Kind: predict.RuleSame},
		{Variable: predict.VarCTWD, Kind: predict.RulePercentBand, BelowPct: pct(10), AbovePct: pct(10)},
	}
	var pqr, coupon predict.Observation
	pqr.SetNumber(predict.VarCurrent, 200)
	pqr.SetNumber(predict.VarTravelSpeed, 6)
	pqr.SetNumber(predict.VarPreheat, 20)
	pqr.SetText(predict.VarShieldingGas, "Ar-10CO2")
	pqr.SetMissing(predict.VarCTWD) // no CTWD on the PQR: no range can be derived
	coupon.SetNumber(predict.VarCurrent, 235)
	coupon.SetNumber(predict.VarTravelSpeed, 4)
	coupon.SetMissing(predict.VarPreheat)
	coupon.SetText(predict.VarShieldingGas, "Ar-25CO2")
	coupon.SetNumber(predict.VarCTWD, 19)
	flags := flagsFor(t, rules, pqr, coupon)
	got := map[string][2]string{}
	for _, f := range flags {
		got[f.Variable] = [2]string{lab.FlagSentence(lab.Metric, f, "WPS-TR-101 rev 3"), lab.FlagSentence(lab.InchPound, f, "WPS-TR-101 rev 3")}
	}
	want := map[string][2]string{
		"current_a": {"Current 235 A is above the qualified 180–220 A of WPS-TR-101 rev 3",
			"Current 235 A is above the qualified 180–220 A of WPS-TR-101 rev 3"},
		// 4 mm/s = 9.45 in/min; 4.5–7.5 mm/s = 10.63–17.72 in/min.
		"travel_speed_mm_s": {"Travel speed 4 mm/s is below the qualified 4.5–7.5 mm/s of WPS-TR-101 rev 3",
			"Travel speed 9 in/min is below the qualified 10.6–17.7 in/min of WPS-TR-101 rev 3"},
		"preheat_c": {"Preheat was not recorded, so it cannot be checked", "Preheat was not recorded, so it cannot be checked"},
		"shielding_gas": {"Shielding gas “Ar-25CO2” is not qualified by WPS-TR-101 rev 3 (qualified: Ar-10CO2)",
			"Shielding gas “Ar-25CO2” is not qualified by WPS-TR-101 rev 3 (qualified: Ar-10CO2)"},
	}
	for v, w := range want {
		if got[v] != w {
			t.Errorf("%s:\n got %q\nwant %q", v, got[v], w)
		}
	}
	const noRange = "CTWD has no qualified range of WPS-TR-101 rev 3 (none of the supporting records gives CTWD), so it cannot be checked"
	if got["ctwd_mm"][0] != noRange {
		t.Errorf("ctwd_mm:\n got %q\nwant %q", got["ctwd_mm"][0], noRange)
	}
}
