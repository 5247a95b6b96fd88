package predict_test

import (
	"math"
	"testing"

	"etchlog/predict"
)

// near compares with a relative tolerance of 1e-12 (binary round-off of
// decimal percentages such as 180·1.1 = 198.00000000000003).
func near(got, want float64) bool { return math.Abs(got-want) <= 1e-12*math.Abs(want) }

// textCase is one recorded text and whether it is qualified.
type textCase struct {
	name    string
	value   string
	flagged bool
}

// checkText evaluates each case against q.
func checkText(t *testing.T, q predict.QualifiedRanges, v predict.Variable, cases []textCase) {
	t.Helper()
	c := predict.NewChecker(q)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var o predict.Observation
			o.SetText(v, tc.value)
			flags := c.Evaluate(&o, nil)
			got := len(flags) == 1 && flags[0].Direction == predict.NotAllowed && flags[0].Kind == predict.FlagRange
			if got != tc.flagged || (!tc.flagged && len(flags) != 0) {
				t.Errorf("Evaluate(%s = %q) = %+v, want flagged=%v", v, tc.value, flags, tc.flagged)
			}
		})
	}
}

func TestSameText(t *testing.T) {
	q := deriveOne(t, predict.Rule{Variable: predict.VarShieldingGas, Kind: predict.RuleSame},
		pqr("PQR-1", nil, map[predict.Variable]string{predict.VarShieldingGas: "Ar-25CO2"}))
	checkText(t, q, predict.VarShieldingGas, []textCase{
		{"Same", "Ar-25CO2", false},
		{"CaseAndSpaces", " ar-25 co2 ", false},
		{"OtherMix", "Ar-10CO2", true},
	})
}

func TestAnyChangeText(t *testing.T) {
	q := deriveOne(t, predict.Rule{Variable: predict.VarPolarity, Kind: predict.RuleAnyChange},
		pqr("PQR-1", nil, map[predict.Variable]string{predict.VarPolarity: "DCEP"}))
	checkText(t, q, predict.VarPolarity, []textCase{
		{"Same", "DCEP", false},
		{"Trimmed", " DCEP", false},
		{"CaseChangeIsAChange", "dcep", true},
		{"Other", "DCEN", true},
	})
}

func TestAnyChangeNeedsAgreement(t *testing.T) {
	q := deriveOne(t, predict.Rule{Variable: predict.VarWireDiameter, Kind: predict.RuleAnyChange},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarWireDiameter: 0.9}, nil),
		pqr("PQR-2", map[predict.Variable]float64{predict.VarWireDiameter: 1.2}, nil))
	r, _ := q.Lookup(predict.VarWireDiameter)
	if r.Unavailable == "" || len(r.Bands) != 0 {
		t.Fatalf("two PQRs at 0.9 and 1.2 mm under any_change: range = %+v, want unavailable", r)
	}
	var o predict.Observation
	o.SetNumber(predict.VarWireDiameter, 0.9)
	flags := predict.NewChecker(q).Evaluate(&o, nil)
	if len(flags) != 1 || flags[0].Kind != predict.FlagNotCheckable {
		t.Errorf("Evaluate on an unavailable range = %+v, want one not_checkable flag", flags)
	}
}

func TestPositionMap(t *testing.T) {
	// A data-driven map, fixture values: 2G qualifies 1G, 2G and the fillets 1F, 2F.
	r := predict.Rule{Variable: predict.VarPosition, Kind: predict.RulePositionMap, Positions: map[string][]string{
		"1G": {"1F"}, "2G": {"1G", "1F", "2F"},
	}}
	q := deriveOne(t, r, pqr("PQR-1", nil, map[predict.Variable]string{predict.VarPosition: "2g"}))
	checkText(t, q, predict.VarPosition, []textCase{
		{"Tested", "2G", false},
		{"Qualified", "1F", false},
		{"NotQualified", "3G", true},
	})
	unknown := deriveOne(t, r, pqr("PQR-2", nil, map[predict.Variable]string{predict.VarPosition: "4G"}))
	if got, _ := unknown.Lookup(predict.VarPosition); got.Unavailable == "" {
		t.Errorf("tested position outside the map: range = %+v, want unavailable", got)
	}
}

func TestSeveralPQRsUnion(t *testing.T) {
	// 150 A and 250 A at ±10 %: [135, 165] ∪ [225, 275]; the gap is not qualified.
	rule := predict.Rule{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: fp(10), AbovePct: fp(10)}
	q := deriveOne(t, rule,
		pqr("PQR-A", map[predict.Variable]float64{predict.VarCurrent: 250}, nil),
		pqr("PQR-B", map[predict.Variable]float64{predict.VarCurrent: 150}, nil))
	r, _ := q.Lookup(predict.VarCurrent)
	if len(r.Bands) != 2 || !near(r.Bands[0].Max, 165) || !near(r.Bands[1].Min, 225) {
		t.Fatalf("bands = %v, want [135, 165] ∪ [225, 275]", r.Bands)
	}
	checkNumeric(t, q, predict.VarCurrent, []boundaryCase{
		{"InFirst", 160, "", 0},
		{"InSecond", 230, "", 0},
		{"GapNearerUpperBand", 200, predict.Below, 25},
		{"GapNearerLowerBand", 180, predict.Above, 15},
	})
	// 150 A and 180 A: [135, 165] and [162, 198] overlap and merge.
	merged := deriveOne(t, rule,
		pqr("PQR-A", map[predict.Variable]float64{predict.VarCurrent: 150}, nil),
		pqr("PQR-B", map[predict.Variable]float64{predict.VarCurrent: 180}, nil))
	if r, _ := merged.Lookup(predict.VarCurrent); len(r.Bands) != 1 || !near(r.Bands[0].Min, 135) || !near(r.Bands[0].Max, 198) {
		t.Errorf("overlapping bands = %v, want [135, 198]", r.Bands)
	}
}

func TestMissingValuesAreNotCheckable(t *testing.T) {
	rules := []predict.Rule{
		{Variable: predict.VarWireFeedSpeed, Kind: predict.RulePercentBand, BelowPct: fp(10), AbovePct: fp(10)},
		{Variable: predict.VarCTWD, Kind: predict.RuleAbsoluteBand, Below: fp(3), Above: fp(3)},
		{Variable: predict.VarShieldingGas, Kind: predict.RuleSame},
	}
	q, err := predict.Derive(rules, []predict.PQRValues{pqr("PQR-1",
		map[predict.Variable]float64{predict.VarWireFeedSpeed: 8, predict.VarCTWD: 15},
		map[predict.Variable]string{predict.VarShieldingGas: "Ar-10CO2"})})
	if err != nil {
		t.Fatal(err)
	}
	var o predict.Observation // a production record: carries WFS and CTWD, not gas
	o.SetNumber(predict.VarWireFeedSpeed, 8)
	o.SetOptional(predict.VarCTWD, nil)
	flags := predict.NewChecker(q).Evaluate(&o, nil)
	if len(flags) != 1 || flags[0].Kind != predict.FlagNotCheckable || flags[0].Variable != predict.VarCTWD {
		t.Errorf("flags = %+v, want exactly one not_checkable on ctwd_mm (gas is out of scope)", flags)
	}
}
