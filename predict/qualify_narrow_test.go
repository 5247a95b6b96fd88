package predict_test

import (
	"errors"
	"testing"

	"etchlog/predict"
)

// derivedFixture is a procedure qualified by two PQRs (fixture values):
// current 150 A and 250 A at ±10 %, gas Ar-25CO2 and Ar-10CO2, CTWD 15 mm ± 5 mm.
func derivedFixture(tb testing.TB) predict.QualifiedRanges {
	tb.Helper()
	q, err := predict.Derive([]predict.Rule{
		{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: fp(10), AbovePct: fp(10)},
		{Variable: predict.VarShieldingGas, Kind: predict.RuleSame},
		{Variable: predict.VarCTWD, Kind: predict.RuleAbsoluteBand, Below: fp(5), Above: fp(5)},
	}, []predict.PQRValues{
		pqr("PQR-A", map[predict.Variable]float64{predict.VarCurrent: 150, predict.VarCTWD: 15}, map[predict.Variable]string{predict.VarShieldingGas: "Ar-25CO2"}),
		pqr("PQR-B", map[predict.Variable]float64{predict.VarCurrent: 250, predict.VarCTWD: 15}, map[predict.Variable]string{predict.VarShieldingGas: "Ar-10CO2"}),
	})
	if err != nil {
		tb.Fatal(err)
	}
	return q
}

func TestNarrow(t *testing.T) {
	for _, tc := range []struct {
		name      string
		n         predict.Narrowing
		wantField string // "" = accepted
		check     func(t *testing.T, q predict.QualifiedRanges)
	}{
		{"InsideOneBand", predict.Narrowing{Variable: predict.VarCurrent, Min: fp(140), Max: fp(160)}, "", func(t *testing.T, q predict.QualifiedRanges) {
			if r, _ := q.Lookup(predict.VarCurrent); len(r.Bands) != 1 || r.Bands[0] != (predict.Band{Min: 140, Max: 160}) || len(r.DerivedBands) != 2 {
				t.Errorf("narrowed current = %+v, want [140, 160] with both derived bands kept", r)
			}
		}},
		{"EdgesEqualToDerived", predict.Narrowing{Variable: predict.VarCurrent, Min: fp(225), Max: fp(275)}, "", nil},
		{"OnlyMaxKeepsDerivedMin", predict.Narrowing{Variable: predict.VarCurrent, Max: fp(260)}, "", func(t *testing.T, q predict.QualifiedRanges) {
			if r, _ := q.Lookup(predict.VarCurrent); r.Bands[0] != (predict.Band{Min: 225, Max: 260}) {
				t.Errorf("narrowed current = %v, want [225, 260]", r.Bands)
			}
		}},
		{"JustOutsideDerived", predict.Narrowing{Variable: predict.VarCurrent, Min: fp(134.99), Max: fp(160)}, "variables[0].min", nil},
		{"WidensUpper", predict.Narrowing{Variable: predict.VarCurrent, Min: fp(230), Max: fp(275.01)}, "variables[0].max", nil},
		{"SpansGap", predict.Narrowing{Variable: predict.VarCurrent, Min: fp(160), Max: fp(230)}, "variables[0].max", nil},
		{"MinAboveMax", predict.Narrowing{Variable: predict.VarCurrent, Min: fp(160), Max: fp(140)}, "variables[0].min", nil},
		{"GasSubset", predict.Narrowing{Variable: predict.VarShieldingGas, Allowed: []string{"ar-25co2"}}, "", nil},
		{"GasNotQualified", predict.Narrowing{Variable: predict.VarShieldingGas, Allowed: []string{"CO2"}}, "variables[0].allowed", nil},
		{"HeatInputLimitFromUnbounded", predict.Narrowing{Variable: predict.VarHeatInput, Max: fp(1500)}, "", func(t *testing.T, q predict.QualifiedRanges) {
			r, ok := q.Lookup(predict.VarHeatInput)
			if !ok || r.Rule != predict.RuleLimit || r.Bands[0].Max != 1500 {
				t.Errorf("heat input range = %+v, want a limit with max 1500 J/mm", r)
			}
		}},
		{"UnknownVariable", predict.Narrowing{Variable: "arc_length_mm", Max: fp(3)}, "variables[0].variable", nil},
		{"NumberForText", predict.Narrowing{Variable: predict.VarShieldingGas, Max: fp(3)}, "variables[0].min", nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			q, err := predict.Narrow(derivedFixture(t), []predict.Narrowing{tc.n}, "customer limits the range")
			var le *predict.ListError
			switch {
			case tc.wantField == "" && err != nil:
				t.Fatalf("Narrow(%+v) error = %v, want accepted", tc.n, err)
			case tc.wantField != "" && (!errors.As(err, &le) || le.Path() != tc.wantField):
				t.Fatalf("Narrow(%+v) error = %v, want a refusal naming %s", tc.n, err, tc.wantField)
			case tc.check != nil:
				tc.check(t, q)
			}
		})
	}
}

func TestNarrowNeedsReason(t *testing.T) {
	_, err := predict.Narrow(derivedFixture(t), []predict.Narrowing{{Variable: predict.VarCurrent, Max: fp(160)}}, " ")
	if !errors.Is(err, predict.ErrInvalidInput) {
		t.Errorf("Narrow without a reason: error = %v, want ErrInvalidInput", err)
	}
}

func TestRangeInInchesCheckedInMM(t *testing.T) {
	// A CTWD range entered as 0.5–0.75 in is 12.7–19.05 mm (1 in = 25.4 mm
	// exactly, NIST SP 811); values recorded in mm are checked against it.
	sp, ok := predict.ParseVariable("ctwd_in")
	if !ok || sp.Variable != predict.VarCTWD {
		t.Fatalf("ParseVariable(ctwd_in) = %+v, %v", sp, ok)
	}
	q, err := predict.Narrow(derivedFixture(t), []predict.Narrowing{{Variable: sp.Variable, Min: fp(sp.Value(0.5)), Max: fp(sp.Value(0.75))}}, "shop limit in inches")
	if err != nil {
		t.Fatal(err)
	}
	checkNumeric(t, q, predict.VarCTWD, []boundaryCase{
		{"LowerEdgeMM", 12.7, "", 0},
		{"JustOutsideLowerMM", 12.69, predict.Below, 0.01},
		{"UpperEdgeMM", 19.05, "", 0},
		{"JustOutsideUpperMM", 19.06, predict.Above, 0.01},
		{"UpperEdgeFromInches", predict.InchToMM(0.75), "", 0},
	})
}

func TestFahrenheitBandIsADifference(t *testing.T) {
	// A 25 °F allowance is 25·5/9 = 13.889 °C of difference (°C = (°F − 32)·5/9,
	// NIST SP 811); below a 20 °C PQR preheat that gives a 6.111 °C minimum,
	// which is exactly a 43 °F reading.
	sp, _ := predict.ParseVariable("preheat_f")
	q := deriveOne(t, predict.Rule{Variable: sp.Variable, Kind: predict.RuleAbsoluteBand, Below: fp(sp.Delta(25))},
		pqr("PQR-1", map[predict.Variable]float64{predict.VarPreheat: 20}, nil))
	checkNumeric(t, q, predict.VarPreheat, []boundaryCase{
		{"EdgeRecordedInF", sp.Value(43), "", 0},
		{"JustBelowInF", sp.Value(42.9), predict.Below, 0.1 * 5 / 9},
	})
}

func TestValidateRules(t *testing.T) {
	for _, tc := range []struct {
		name  string
		rules []predict.Rule
		want  string
	}{
		{"UnknownVariable", []predict.Rule{{Variable: "stickout", Kind: predict.RuleSame}}, "rules[0].variable"},
		{"PercentOfCelsius", []predict.Rule{{Variable: predict.VarPreheat, Kind: predict.RulePercentBand, BelowPct: fp(10)}}, "rules[0].kind"},
		{"ForeignField", []predict.Rule{{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: fp(10), Below: fp(5)}}, "rules[0].below"},
		{"NoSide", []predict.Rule{{Variable: predict.VarCurrent, Kind: predict.RuleAbsoluteBand}}, "rules[0].below"},
		{"Duplicate", []predict.Rule{{Variable: predict.VarPolarity, Kind: predict.RuleSame}, {Variable: predict.VarPolarity, Kind: predict.RuleAnyChange}}, "rules[1].variable"},
		{"BadFactors", []predict.Rule{{Variable: predict.VarThickness, Kind: predict.RuleMultiplier, MinFactor: fp(2), MaxFactor: fp(0.5)}}, "rules[0].min_factor"},
		{"PositionMapElsewhere", []predict.Rule{{Variable: predict.VarPolarity, Kind: predict.RulePositionMap}}, "rules[0].kind"},
		{"BelowPctOver100", []predict.Rule{{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: fp(101)}}, "rules[0].below_pct"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var le *predict.ListError
			if err := predict.ValidateRules(tc.rules); !errors.As(err, &le) || le.Path() != tc.want {
				t.Errorf("ValidateRules = %v, want a refusal naming %s", err, tc.want)
			}
		})
	}
}
