package predict_test

import (
	"errors"
	"math"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

// tradeK is the inch-unit Jackson coefficient of the trade check values.
var tradeK = predict.JacksonK{Value: 0.0019, Units: predict.JacksonUnitsInch}

// penIn evaluates PenetrationMM from inch-unit inputs (A, in/min, V) and
// returns inches, so the check also exercises the K and unit conversions.
func penIn(tb testing.TB, currentA, travelInPerMin, voltageV float64) float64 {
	tb.Helper()
	p, err := predict.PenetrationMM(tradeK, currentA, predict.InPerMinToMMPerS(travelInPerMin), voltageV)
	if err != nil {
		tb.Fatalf("PenetrationMM: %v", err)
	}
	return predict.MMToInch(p)
}

func TestPenetrationTradeChecks(t *testing.T) {
	// Trade check values, common practice, no source: K = 0.0019 (in, A, in/min, V).
	base := penIn(t, 150, 10, 23)
	pct := func(p float64) float64 { return 100 * (p/base - 1) }
	t.Run("Base", func(t *testing.T) {
		checkAbs(t, "P(150 A, 23 V, 10 in/min) in", base, 0.087, 0.0005)
	})
	t.Run("TravelPlus10", func(t *testing.T) {
		checkAbs(t, "P(travel +10 %) in", penIn(t, 150, 11, 23), 0.084, 0.0005)
	})
	t.Run("VoltagePlus10", func(t *testing.T) {
		p := penIn(t, 150, 10, 25.3)
		checkAbs(t, "P(voltage +10 %) in", p, 0.082, 0.0005)
		checkAbs(t, "P(voltage +10 %) change %", pct(p), -6, 0.5)
	})
	t.Run("CurrentPlus10", func(t *testing.T) {
		p := penIn(t, 165, 10, 23)
		checkAbs(t, "P(current +10 %) in", p, 0.099, 0.0005)
		checkAbs(t, "P(current +10 %) change %", pct(p), 14, 0.5)
	})
	t.Run("TravelOffsetByCurrent", func(t *testing.T) {
		i2, err := predict.HoldPenetrationCurrentA(150, 10, 11, 23, 23)
		if err != nil {
			t.Fatal(err)
		}
		checkAbs(t, "current increase %", 100*(i2/150-1), 2.5, 0.5)
		checkAbs(t, "current increase A", i2-150, 4, 0.5)
		checkRel(t, "P at I₂ and +10 % travel", penIn(t, i2, 11, 23), base, 1e-14)
	})
}

func TestJacksonKUnits(t *testing.T) {
	// Exact derivation: P_mm = 25.4·P_in and S_in/min = S_mm/s·60/25.4, so
	// K_metric = 25.4·K_inch·(25.4/60)^(1/3).
	m, err := tradeK.Metric()
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "K metric", m.Value, 25.4*0.0019*math.Cbrt(25.4/60), 1e-15)
	back, err := m.Inch()
	if err != nil {
		t.Fatal(err)
	}
	checkRel(t, "K inch round trip", back.Value, 0.0019, 1e-15)
	// Direct inch-unit formula against the metric evaluation.
	direct := 0.0019 * math.Cbrt(math.Pow(150, 4)/(10*23*23))
	checkRel(t, "inch formula vs metric path", penIn(t, 150, 10, 23), direct, 1e-14)
}

func TestPenetrationRejectsBadInput(t *testing.T) {
	k := predict.JacksonK{Value: 0.036, Units: predict.JacksonUnitsMetric}
	cases := []struct {
		name    string
		k       predict.JacksonK
		i, s, v float64
		field   string
	}{
		{"ErrCurrentZero", k, 0, 5, 25, "current A"},
		{"ErrCurrentNegative", k, -200, 5, 25, "current A"},
		{"ErrCurrentNaN", k, math.NaN(), 5, 25, "current A"},
		{"ErrTravelInf", k, 200, math.Inf(1), 25, "travel speed mm/s"},
		{"ErrTravelZero", k, 200, 0, 25, "travel speed mm/s"},
		{"ErrVoltageNegative", k, 200, 5, -25, "arc voltage V"},
		{"ErrVoltageNaN", k, 200, 5, math.NaN(), "arc voltage V"},
		{"ErrKZero", predict.JacksonK{Units: predict.JacksonUnitsMetric}, 200, 5, 25, "jackson K"},
		{"ErrKUnits", predict.JacksonK{Value: 0.036}, 200, 5, 25, "jackson K units"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := predict.PenetrationMM(c.k, c.i, c.s, c.v)
			var ie *predict.InputError
			if !errors.As(err, &ie) || !errors.Is(err, predict.ErrInvalidInput) {
				t.Fatalf("PenetrationMM(%v, %v, %v, %v) error = %v, want *InputError", c.k, c.i, c.s, c.v, err)
			}
			if ie.Field != c.field {
				t.Errorf("InputError.Field = %q, want %q", ie.Field, c.field)
			}
		})
	}
}

// drawWeld draws current (A), travel speed (mm/s), voltage (V) and metric K
// inside the plausible bounds of the domain primer (K: 0.005–0.2 metric,
// from memory: 0.0019 inch units is about 0.036).
func drawWeld(t *rapid.T) (i, s, v float64, k predict.JacksonK) {
	i = rapid.Float64Range(10, 1000).Draw(t, "currentA")
	s = rapid.Float64Range(0.5, 30).Draw(t, "travelMMPerS")
	v = rapid.Float64Range(5, 60).Draw(t, "voltageV")
	k = predict.JacksonK{Value: rapid.Float64Range(0.005, 0.2).Draw(t, "K"), Units: predict.JacksonUnitsMetric}
	return i, s, v, k
}

func TestPenetrationMonotoneInCurrent(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		i, s, v, k := drawWeld(t)
		di := rapid.Float64Range(0, 100).Draw(t, "deltaA")
		p1, err1 := predict.PenetrationMM(k, i, s, v)
		p2, err2 := predict.PenetrationMM(k, i+di, s, v)
		if err1 != nil || err2 != nil {
			t.Fatalf("errors %v, %v", err1, err2)
		}
		if p2 < p1 {
			t.Fatalf("P(%v A) = %v < P(%v A) = %v", i+di, p2, i, p1)
		}
	})
}
