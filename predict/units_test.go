package predict_test

import (
	"errors"
	"math"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

// relDiff returns |got−want|/|want| (|got| when want is 0).
func relDiff(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// reporter is the part of testing.TB (and *rapid.T) the check helpers use.
type reporter interface {
	Helper()
	Errorf(format string, args ...any)
}

// checkRel fails tb when got differs from want by more than tol relative.
func checkRel(tb reporter, what string, got, want, tol float64) {
	tb.Helper()
	if d := relDiff(got, want); !(d <= tol) {
		tb.Errorf("%s = %.17g, want %.17g (rel diff %.2g > %.2g)", what, got, want, d, tol)
	}
}

// checkAbs fails tb when got differs from want by more than tol.
func checkAbs(tb reporter, what string, got, want, tol float64) {
	tb.Helper()
	if d := math.Abs(got - want); !(d <= tol) {
		tb.Errorf("%s = %.6g, want %.6g ± %.2g", what, got, want, tol)
	}
}

// exact is the tolerance for products of exact decimal definitions: a few ulps.
const exact = 4e-16

func TestConversionsAgainstDefinitions(t *testing.T) {
	// Definitions: international inch = 25.4 mm and pound = 0.45359237 kg
	// (1959 agreement, NIST SP 811); t_F = t_C·9/5 + 32 (NIST SP 811).
	cases := []struct {
		name      string
		got, want float64
	}{
		{"InchToMM(1)", predict.InchToMM(1), 25.4},
		{"MMToInch(25.4)", predict.MMToInch(25.4), 1},
		{"InPerMinToMMPerS(60)", predict.InPerMinToMMPerS(60), 25.4},
		{"MMPerSToInPerMin(25.4)", predict.MMPerSToInPerMin(25.4), 60},
		{"InPerMinToMPerMin(1000)", predict.InPerMinToMPerMin(1000), 25.4},
		{"MPerMinToInPerMin(25.4)", predict.MPerMinToInPerMin(25.4), 1000},
		{"MPerMinToMMPerS(6)", predict.MPerMinToMMPerS(6), 100},
		{"MMPerSToMPerMin(100)", predict.MMPerSToMPerMin(100), 6},
		{"MMPerMinToMMPerS(300)", predict.MMPerMinToMMPerS(300), 5},
		{"MMPerSToMMPerMin(5)", predict.MMPerSToMMPerMin(5), 300},
		{"CMPerMinToMMPerS(30)", predict.CMPerMinToMMPerS(30), 5},
		{"MMPerSToCMPerMin(5)", predict.MMPerSToCMPerMin(5), 30},
		{"FahrenheitToCelsius(32)", predict.FahrenheitToCelsius(32), 0},
		{"FahrenheitToCelsius(212)", predict.FahrenheitToCelsius(212), 100},
		{"FahrenheitToCelsius(-40)", predict.FahrenheitToCelsius(-40), -40},
		{"CelsiusToFahrenheit(100)", predict.CelsiusToFahrenheit(100), 212},
		{"CelsiusToFahrenheit(-40)", predict.CelsiusToFahrenheit(-40), -40},
		{"PoundToKg(1)", predict.PoundToKg(1), 0.45359237},
		{"KgToPound(0.45359237)", predict.KgToPound(0.45359237), 1},
		{"LbPerHToKgPerH(100)", predict.LbPerHToKgPerH(100), 45.359237},
		{"KgPerHToLbPerH(45.359237)", predict.KgPerHToLbPerH(45.359237), 100},
		{"JPerInToJPerMM(25400)", predict.JPerInToJPerMM(25400), 1000},
		{"JPerMMToJPerIn(1000)", predict.JPerMMToJPerIn(1000), 25400},
		{"KJPerInToKJPerMM(25.4)", predict.KJPerInToKJPerMM(25.4), 1},
		{"KJPerMMToKJPerIn(1)", predict.KJPerMMToKJPerIn(1), 25.4},
		{"KJPerMMToJPerMM(1.5)", predict.KJPerMMToJPerMM(1.5), 1500},
		{"JPerMMToKJPerMM(800)", predict.JPerMMToKJPerMM(800), 0.8},
		{"GPerCM3ToKgPerMM3(7.85)", predict.GPerCM3ToKgPerMM3(7.85), 7.85e-6},
		{"KgPerMM3ToGPerCM3(7.85e-6)", predict.KgPerMM3ToGPerCM3(7.85e-6), 7.85},
		// 1 lb/in³ = 0.45359237 kg / 16.387064 cm³ (16.387064 = 2.54³ exactly).
		{"LbPerIn3ToKgPerMM3(1)", predict.LbPerIn3ToKgPerMM3(1), 0.45359237 / 16387.064},
		{"KgPerMM3ToLbPerIn3", predict.KgPerMM3ToLbPerIn3(0.45359237 / 16387.064), 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { checkRel(t, c.name, c.got, c.want, exact) })
	}
}

func TestConversionsHandbookNumbers(t *testing.T) {
	cases := []struct {
		name           string
		got, want, tol float64
	}{
		// NIST SP 811 Appendix B.9: pound per cubic inch = 2.767 990 E+04 kg/m³ (7 digits).
		{"lb/in³ in kg/m³", predict.LbPerIn3ToKgPerMM3(1) * 1e9, 2.767990e4, 5e-7},
		// NIST SP 811 Appendix B.9: inch per second = 2.54 E-02 m/s (exact).
		{"in/s in m/s", predict.InPerMinToMMPerS(60) / 1000, 2.54e-2, exact},
		// Handbook: carbon steel 0.2836 lb/in³ is 7.85 g/cm³ to the 4 digits quoted.
		{"steel 0.2836 lb/in³ in g/cm³", predict.KgPerMM3ToGPerCM3(predict.LbPerIn3ToKgPerMM3(0.2836)), 7.85, 1e-4},
		// Body temperature 98.6 °F = 37 °C (common practice, no source).
		{"98.6 F", predict.FahrenheitToCelsius(98.6), 37, 1e-12},
		// 1 kJ/in = 39.37 J/mm (hand: 1000/25.4 = 39.370 078...).
		{"1 kJ/in in J/mm", predict.KJPerMMToJPerMM(predict.KJPerInToKJPerMM(1)), 39.37007874015748, 1e-15},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { checkRel(t, c.name, c.got, c.want, c.tol) })
	}
}

func TestConversionRoundTrips(t *testing.T) {
	pairs := []struct {
		name     string
		to, from func(float64) float64
	}{
		{"inch", predict.InchToMM, predict.MMToInch},
		{"in/min", predict.InPerMinToMMPerS, predict.MMPerSToInPerMin},
		{"ipm wfs", predict.InPerMinToMPerMin, predict.MPerMinToInPerMin},
		{"m/min", predict.MPerMinToMMPerS, predict.MMPerSToMPerMin},
		{"mm/min", predict.MMPerMinToMMPerS, predict.MMPerSToMMPerMin},
		{"cm/min", predict.CMPerMinToMMPerS, predict.MMPerSToCMPerMin},
		{"fahrenheit", predict.FahrenheitToCelsius, predict.CelsiusToFahrenheit},
		{"pound", predict.PoundToKg, predict.KgToPound},
		{"lb/h", predict.LbPerHToKgPerH, predict.KgPerHToLbPerH},
		{"J/in", predict.JPerInToJPerMM, predict.JPerMMToJPerIn},
		{"kJ/in", predict.KJPerInToKJPerMM, predict.KJPerMMToKJPerIn},
		{"kJ/mm", predict.KJPerMMToJPerMM, predict.JPerMMToKJPerMM},
		{"g/cm³", predict.GPerCM3ToKgPerMM3, predict.KgPerMM3ToGPerCM3},
		{"lb/in³", predict.LbPerIn3ToKgPerMM3, predict.KgPerMM3ToLbPerIn3},
	}
	for _, p := range pairs {
		t.Run(p.name, func(t *testing.T) {
			rapid.Check(t, func(rt *rapid.T) {
				x := rapid.Float64Range(1e-3, 1e4).Draw(rt, "x")
				// Absolute tolerance: an offset conversion (°F) loses relative digits near zero.
				if got := p.from(p.to(x)); math.Abs(got-x) > 1e-14*math.Max(1, math.Abs(x)) {
					rt.Fatalf("from(to(%v)) = %v", x, got)
				}
			})
		})
	}
}

func TestParseUnit(t *testing.T) {
	ok := []struct {
		kind       predict.QuantityKind
		name       string
		in, wantMM float64 // value in name's unit, value in the internal unit
	}{
		{predict.KindLength, "mm", 12, 12},
		{predict.KindLength, "in", 1, 25.4},
		{predict.KindTravelSpeed, "mm/s", 5, 5},
		{predict.KindTravelSpeed, "mm/min", 300, 5},
		{predict.KindTravelSpeed, "cm/min", 30, 5},
		{predict.KindTravelSpeed, "in/min", 60, 25.4},
		{predict.KindTravelSpeed, "ipm", 60, 25.4},
		{predict.KindTravelSpeed, "m/min", 0.3, 5},
		{predict.KindWireFeedSpeed, "m/min", 8, 8},
		{predict.KindWireFeedSpeed, "ipm", 1000, 25.4},
		{predict.KindWireFeedSpeed, "in/min", 1000, 25.4},
		{predict.KindWireFeedSpeed, "mm/s", 100, 6},
		{predict.KindWireFeedSpeed, "mm/min", 6000, 6},
		{predict.KindWireFeedSpeed, "cm/min", 600, 6},
		{predict.KindTemperature, "C", 150, 150},
		{predict.KindTemperature, "F", 212, 100},
		{predict.KindTemperature, "°F", 32, 0},
		{predict.KindMassRate, "kg/h", 4, 4},
		{predict.KindMassRate, "lb/h", 100, 45.359237},
		{predict.KindHeatInput, "J/mm", 800, 800},
		{predict.KindHeatInput, "kJ/mm", 0.8, 800},
		{predict.KindHeatInput, "J/in", 25400, 1000},
		{predict.KindHeatInput, "kJ/in", 25.4, 1000},
	}
	for _, c := range ok {
		t.Run(string(c.kind)+"/"+c.name, func(t *testing.T) {
			u, err := predict.ParseUnit(c.kind, c.name)
			if err != nil {
				t.Fatalf("ParseUnit(%q, %q) error: %v", c.kind, c.name, err)
			}
			checkRel(t, "ToInternal", u.ToInternal(c.in), c.wantMM, 1e-15)
			checkRel(t, "FromInternal", u.FromInternal(c.wantMM), c.in, 1e-15)
		})
	}
	bad := []struct {
		name string
		kind predict.QuantityKind
		unit string
		want error
	}{
		{"ErrUnknownUnit", predict.KindLength, "furlong", predict.ErrUnknownUnit},
		{"ErrUnknownUnitCase", predict.KindLength, "MM", predict.ErrUnknownUnit},
		{"ErrWrongKindMassForLength", predict.KindLength, "kg/h", predict.ErrWrongUnitKind},
		{"ErrWrongKindLengthForSpeed", predict.KindTravelSpeed, "mm", predict.ErrWrongUnitKind},
		{"ErrWrongKindTempForHeat", predict.KindHeatInput, "F", predict.ErrWrongUnitKind},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			if _, err := predict.ParseUnit(c.kind, c.unit); !errors.Is(err, c.want) {
				t.Errorf("ParseUnit(%q, %q) error = %v, want %v", c.kind, c.unit, err, c.want)
			}
		})
	}
	t.Run("ZeroUnitIsNaN", func(t *testing.T) {
		if got := (predict.Unit{}).ToInternal(1); !math.IsNaN(got) {
			t.Errorf("Unit{}.ToInternal(1) = %v, want NaN", got)
		}
	})
	t.Run("ErrUnknownKind", func(t *testing.T) {
		if _, err := predict.ParseUnit("pressure", "mm"); err == nil {
			t.Error(`ParseUnit("pressure", "mm") error = nil, want an error`)
		}
	})
}
