package predict_test

import (
	"testing"

	"etchlog/predict"
)

// TestISO14175 classifies mixes under ISO 14175:2008, "Welding consumables —
// Gases and gas mixtures for fusion welding and allied processes", Table 2
// as recalled (from memory): I1 argon; C1 carbon dioxide; M12 Ar + 0.5–5 %
// CO2; M13 Ar + 0.5–3 % O2; M20 Ar + more than 5 up to 15 % CO2; M21 Ar +
// more than 15 up to 25 % CO2; M31 more than 25 up to 50 % CO2.
func TestISO14175(t *testing.T) {
	for _, c := range []struct {
		gas, want string
	}{
		{"Ar", "I1"},            // pure argon (from memory)
		{"100% CO2", "C1"},      // pure carbon dioxide (from memory)
		{"Ar + 18% CO2", "M21"}, // 82/18 (from memory)
		{"92Ar/8CO2", "M20"},    // Ar + 8 % CO2 (from memory)
		{"Ar-2O2", "M13"},       // Ar + 2 % O2 (from memory)
		{"Ar-25CO2", "M21"},     // upper edge of M21 (from memory)
		{"Ar-2CO2", "M12"},      // (from memory)
		{"Ar-40CO2", "M31"},     // (from memory)
		{"He", "I2"},            // (from memory)
		{"Ar-30He", "I3"},       // (from memory)
	} {
		g, err := predict.ParseGas(c.gas)
		if err != nil {
			t.Errorf("ParseGas(%q): %v", c.gas, err)
			continue
		}
		if got := predict.ISO14175(g); got != c.want {
			t.Errorf("ISO14175(%q = %+v) = %q, want %q", c.gas, g, got, c.want)
		}
	}
}

// TestGasSpellings: one composition, however a shop spells it, has one
// canonical form; "C25" is the trade shorthand for Ar + 25 % CO2 (common
// practice, no source). Unreadable text is refused by ParseGas.
func TestGasSpellings(t *testing.T) {
	for _, s := range []string{"Ar-25CO2", "ar-25co2", "75Ar/25CO2", "75 % Ar + 25 % CO2", "25CO2-Ar", "C25"} {
		if got := predict.CanonicalGas(s); got != "Ar-25CO2" {
			t.Errorf("CanonicalGas(%q) = %q, want Ar-25CO2", s, got)
		}
	}
	for _, s := range []string{"75Ar/20CO2", "Ar-CO2", "argon", "Ar-25CO2-xyz"} {
		if _, err := predict.ParseGas(s); err == nil {
			t.Errorf("ParseGas(%q) accepted", s)
		}
	}
	if got := predict.CanonicalGas("Tri-mix special"); got != "Tri-mix special" {
		t.Errorf("CanonicalGas of an unreadable name = %q, want it unchanged", got)
	}
}

// TestNominalWire: 0.035 in (0.889 mm) is the 0.9 mm wire and 0.045 in
// (1.143 mm) the 1.2 mm wire, 1/16 in the 1.6 mm (nominal-size table,
// common practice, no source; 1 in = 25.4 mm, NIST SP 811).
func TestNominalWire(t *testing.T) {
	for _, c := range []struct {
		d, want float64
		ok      bool
	}{
		{0.035 * 25.4, 0.9, true}, {0.9, 0.9, true}, {0.045 * 25.4, 1.2, true}, {1.2, 1.2, true},
		{0.030 * 25.4, 0.8, true}, {0.0625 * 25.4, 1.6, true}, {1.0, 1.0, true}, {1.75, 1.75, false},
	} {
		got, ok := predict.NominalWireMM(c.d)
		if got != c.want || ok != c.ok {
			t.Errorf("NominalWireMM(%g) = %g, %v; want %g, %v", c.d, got, ok, c.want, c.ok)
		}
	}
}
