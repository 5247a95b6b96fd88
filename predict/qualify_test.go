package predict_test

import (
	"math"
	"testing"

	"etchlog/predict"
)

// The expected ranges below are hand computations from the conventions the
// rule kinds state (percentages of the PQR value, closed intervals); the
// PQR values are fixtures, not reference data.

func fp(v float64) *float64 { return &v }

// pqr builds one supporting record from numeric and text values.
func pqr(label string, nums map[predict.Variable]float64, texts map[predict.Variable]string) predict.PQRValues {
	var o predict.Observation
	for v, x := range nums {
		o.SetNumber(v, x)
	}
	for v, s := range texts {
		o.SetText(v, s)
	}
	return predict.PQRValues{Label: label, Values: o}
}

// deriveOne derives the range of a single rule from the given PQRs.
func deriveOne(tb testing.TB, r predict.Rule, pqrs ...predict.PQRValues) predict.QualifiedRanges {
	tb.Helper()
	q, err := predict.Derive([]predict.Rule{r}, pqrs)
	if err != nil {
		tb.Fatalf("Derive(%+v): %v", r, err)
	}
	return q
}

// boundaryCase is one recorded value and the flag it should (or should not) raise.
type boundaryCase struct {
	name      string
	value     float64
	direction predict.Direction // "" = inside, no flag
	excess    float64
}

// checkNumeric evaluates each case against q and compares flag, direction and excess.
func checkNumeric(t *testing.T, q predict.QualifiedRanges, v predict.Variable, cases []boundaryCase) {
	t.Helper()
	c := predict.NewChecker(q)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var o predict.Observation
			o.SetNumber(v, tc.value)
			flags := c.Evaluate(&o, nil)
			if tc.direction == "" {
				if len(flags) != 0 {
					t.Fatalf("Evaluate(%s = %v) = %+v, want no flag", v, tc.value, flags)
				}
				return
			}
			if len(flags) != 1 {
				t.Fatalf("Evaluate(%s = %v) gave %d flags, want 1", v, tc.value, len(flags))
			}
			f := flags[0]
			if f.Kind != predict.FlagRange || f.Direction != tc.direction || f.Variable != v {
				t.Errorf("flag = %s %s %s, want range %s %s", f.Kind, f.Variable, f.Direction, v, tc.direction)
			}
			if f.Excess == nil || math.Abs(*f.Excess-tc.excess) > 1e-9*math.Max(1, tc.excess) {
				t.Errorf("excess = %v, want %v", f.Excess, tc.excess)
			}
		})
	}
}

func TestPercentBandOnQualifiedValue(t *testing.T) {
	// ±10 % of the PQR's 200 A: [180, 220] A, edges qualified.
	q := deriveOne(t, predict.Rule{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: fp(10), AbovePct: fp(10)},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarCurrent: 200}, nil))
	checkNumeric(t, q, predict.VarCurrent, []boundaryCase{
		{"LowerEdge", 180, "", 0},
		{"JustInsideLower", 180.001, "", 0},
		{"JustOutsideLower", 179.999, predict.Below, 0.001},
		{"UpperEdge", 220, "", 0},
		{"JustInsideUpper", 219.999, "", 0},
		{"JustOutsideUpper", 220.001, predict.Above, 0.001},
		// 222.2 A would be within 10 % if the percentage were taken of the
		// recorded value (222.2·0.9 = 200); on the PQR value it is not.
		{"PercentOfRecordNotOfPQR", 222.2, predict.Above, 2.2},
	})
}

func TestPercentBandOneSided(t *testing.T) {
	// Heat input may not exceed the PQR's (above 0 %), any lower value is qualified.
	q := deriveOne(t, predict.Rule{Variable: predict.VarHeatInput, Kind: predict.RulePercentBand, AbovePct: fp(0)},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarVoltage: 25, predict.VarCurrent: 200, predict.VarTravelSpeed: 5}, nil))
	r, _ := q.Lookup(predict.VarHeatInput)
	// Arc energy V·I/S = 25·200/5 = 1000 J/mm (definition of arc energy).
	if len(r.Bands) != 1 || r.Bands[0].Max != 1000 || !math.IsInf(r.Bands[0].Min, -1) {
		t.Fatalf("heat input bands = %v, want (-inf, 1000]", r.Bands)
	}
	c := predict.NewChecker(q)
	for _, tc := range []struct {
		name    string
		travel  float64
		flagged bool
	}{{"Equal", 5, false}, {"Slower", 4.999, true}, {"Faster", 10, false}} {
		t.Run(tc.name, func(t *testing.T) {
			var o predict.Observation
			o.SetNumber(predict.VarVoltage, 25)
			o.SetNumber(predict.VarCurrent, 200)
			o.SetNumber(predict.VarTravelSpeed, tc.travel)
			flags := c.Evaluate(&o, nil)
			if got := len(flags) == 1 && flags[0].Kind == predict.FlagModel; got != tc.flagged {
				t.Errorf("travel %v mm/s: flags = %+v, want flagged=%v (kind model)", tc.travel, flags, tc.flagged)
			}
		})
	}
}

func TestAbsoluteBand(t *testing.T) {
	// Preheat may drop 14 °C below the PQR's 20 °C and rise without limit: [6, +inf).
	q := deriveOne(t, predict.Rule{Variable: predict.VarPreheat, Kind: predict.RuleAbsoluteBand, Below: fp(14)},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarPreheat: 20}, nil))
	checkNumeric(t, q, predict.VarPreheat, []boundaryCase{
		{"LowerEdge", 6, "", 0},
		{"JustInside", 6.01, "", 0},
		{"JustOutside", 5.99, predict.Below, 0.01},
		{"FarAbove", 300, "", 0},
	})
}

func TestMultiplier(t *testing.T) {
	// Thickness T/2 to 2T for a 10 mm PQR plate: [5, 20] mm.
	q := deriveOne(t, predict.Rule{Variable: predict.VarThickness, Kind: predict.RuleMultiplier, MinFactor: fp(0.5), MaxFactor: fp(2)},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarThickness: 10}, nil))
	checkNumeric(t, q, predict.VarThickness, []boundaryCase{
		{"LowerEdge", 5, "", 0},
		{"JustOutsideLower", 4.99, predict.Below, 0.01},
		{"UpperEdge", 20, "", 0},
		{"JustInsideUpper", 19.99, "", 0},
		{"JustOutsideUpper", 20.01, predict.Above, 0.01},
	})
}

func TestSameNumericWithTolerance(t *testing.T) {
	// 0.9 mm wire ± 0.02 mm: 0.035 in (0.889 mm, 1 in = 25.4 mm exactly) is the same size.
	q := deriveOne(t, predict.Rule{Variable: predict.VarWireDiameter, Kind: predict.RuleSame, Tolerance: fp(0.02)},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarWireDiameter: 0.9}, nil))
	checkNumeric(t, q, predict.VarWireDiameter, []boundaryCase{
		{"Same", 0.9, "", 0},
		{"InchSpellingOfSameSize", predict.InchToMM(0.035), "", 0},
		{"UpperEdge", 0.92, "", 0},
		{"JustOutside", 0.921, predict.Above, 0.001},
		{"OtherSize", 1.2, predict.Above, 0.28},
	})
}
