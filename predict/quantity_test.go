package predict_test

import (
	"math"
	"strings"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

// TestQuantitySpellings converts one value of every accepted spelling and
// compares it with the exact definition of the unit.
func TestQuantitySpellings(t *testing.T) {
	for _, c := range []struct {
		spelling   string
		in, stored float64
	}{
		// NIST SP 811 (2008), appendix B: 1 in = 25.4 mm exactly, 1 lb = 0.45359237 kg exactly.
		{"thickness_in", 0.375, 9.525},
		{"wire_diameter_in", 0.035, 0.889},
		{"ctwd_in", 0.75, 19.05},
		{"penetration_in", 1, 25.4},
		{"fused_area_in2", 1, 645.16},           // (25.4 mm)²
		{"travel_speed_in_min", 60, 25.4},       // 60 in/min = 1 in/s
		{"travel_speed_mm_min", 300, 5},         // 1 min = 60 s
		{"new_travel_speed_in_min", 15, 6.35},   // 15 · 25.4 / 60
		{"wire_feed_speed_in_min", 1000, 25.4},  // 1000 in = 25.4 m
		{"melting_rate_lb_h", 10, 4.5359237},    // 10 lb = 4.5359237 kg
		{"deposition_rate_lb_h", 1, 0.45359237}, // 1 lb
		{"max_heat_input_kj_mm", 1.5, 1500},     // 1 kJ = 1000 J
		{"max_heat_input_kj_in", 25.4, 1000},    // 25.4 kJ/in = 1 kJ/mm
		{"preheat_f", 212, 100},                 // water boils at 212 °F = 100 °C (NIST SP 811 B.8: t/°C = (t/°F − 32)/1.8)
		{"interpass_f", -40, -40},               // the scales cross at −40
		{"current_a", 250, 250},                 // stored spellings convert to themselves
		{"level", 0.95, 0.95},
		{"thickness_max_in", 1, 25.4},       // derived names share their measure
		{"new_travel_speed_mm_min", 360, 6}, // 360 / 60
	} {
		q, ok := predict.LookupQuantity(c.spelling)
		if !ok {
			t.Errorf("LookupQuantity(%q): not registered", c.spelling)
			continue
		}
		s, _ := q.Spelling(c.spelling)
		checkRel(t, c.spelling+" → "+q.Name, s.ToStored(c.in), c.stored, 1e-15)
		checkRel(t, q.Name+" → "+c.spelling, s.FromStored(c.stored), c.in, 1e-15)
	}
}

// TestQuantitySpellingsRoundTrip converts any value out of the stored unit
// and back: every conversion pair is exact up to rounding.
func TestQuantitySpellingsRoundTrip(t *testing.T) {
	rapid.Check(t, func(rt *rapid.T) {
		qs := predict.Quantities()
		q := qs[rapid.IntRange(0, len(qs)-1).Draw(rt, "quantity")]
		names := q.Spellings()
		s, _ := q.Spelling(names[rapid.IntRange(0, len(names)-1).Draw(rt, "spelling")])
		v := rapid.Float64Range(-1e4, 1e4).Draw(rt, "v")
		back := s.ToStored(s.FromStored(v))
		if math.Abs(back-v) > 1e-12*math.Max(1, math.Abs(v)) {
			rt.Errorf("%s%s: %v → %v → %v", q.Base, s.Suffix, v, s.FromStored(v), back)
		}
	})
}

// TestQuantityBounds compares the registered plausible bounds with the
// domain primer's table (/work/shared/DOMAIN.md, from memory: "outside these
// is a typing error, not a weld").
func TestQuantityBounds(t *testing.T) {
	for _, c := range []struct {
		name     string
		min, max float64
	}{
		{"current_a", 10, 1000},
		{"voltage_v", 5, 60},
		{"travel_speed_mm_s", 0.5, 30},
		{"wire_feed_speed_m_min", 0.5, 30},
		{"wire_diameter_mm", 0.6, 4},
		{"ctwd_mm", 3, 50},
		{"preheat_c", -20, 350},
		{"interpass_c", -20, 350},
		{"penetration_mm", 0, 50},
		{"thickness_mm", 0.5, 300},
	} {
		q := predict.MustQuantity(c.name)
		if q.Min != c.min || q.Max != c.max || q.MinOpen || q.MaxOpen {
			t.Errorf("%s bounds = %s (open %v/%v), want %g–%g closed", c.name, q.BoundsText(), q.MinOpen, q.MaxOpen, c.min, c.max)
		}
	}
}

// TestQuantityInside checks the edges of closed, open and whole-number bounds.
func TestQuantityInside(t *testing.T) {
	for _, c := range []struct {
		name   string
		v      float64
		inside bool
		reason string
	}{
		{"current_a", 10, true, ""},
		{"current_a", math.Nextafter(10, 0), false, "must be at least 10 (got 9.999999999999998)"},
		{"current_a", 1000, true, ""},
		{"current_a", 1000.5, false, "must be at most 1000 (got 1000.5)"},
		{"bead_width_mm", 0, false, "must be greater than 0 (got 0)"},
		{"bead_width_mm", 1e-300, true, ""},
		{"level", 1, false, "must be less than 1 (got 1)"},
		{"level", 0.999, true, ""},
		{"pass_number", 2.5, false, "must be a whole number (got 2.5)"},
		{"current_a", math.NaN(), false, "must be a number"},
		{"max_heat_input_j_mm", 1e9, true, ""},
	} {
		q := predict.MustQuantity(c.name)
		if got := q.Inside(c.v); got != c.inside {
			t.Errorf("%s.Inside(%v) = %v, want %v", c.name, c.v, got, c.inside)
		}
		if got := q.Refusal(c.v); got != c.reason {
			t.Errorf("%s.Refusal(%v) = %q, want %q", c.name, c.v, got, c.reason)
		}
	}
}

// TestRegistryComplete checks every registered quantity and enumeration is
// fully described.
func TestRegistryComplete(t *testing.T) {
	for _, q := range predict.Quantities() {
		if q.Description == "" || !(q.Min < q.Max) || !strings.HasSuffix(q.Name, q.Measure.Stored.Suffix) || q.Base+q.Measure.Stored.Suffix != q.Name {
			t.Errorf("%s: incomplete or inconsistent: %+v", q.Name, q)
		}
		for _, n := range q.Spellings() {
			if got, ok := predict.LookupQuantity(n); !ok || got.Name != q.Name {
				t.Errorf("LookupQuantity(%q) = %q, %v; want %q", n, got.Name, ok, q.Name)
			}
		}
	}
	for _, e := range predict.Enums() {
		if e.Description == "" || len(e.Values) < 2 {
			t.Errorf("enum %s: incomplete: %+v", e.Name, e)
		}
	}
}

// TestQuantityDifferences checks that every conversion but Fahrenheit's is
// proportional, so a difference converts like a value, and that a
// Fahrenheit difference drops the 32 °F offset (NIST SP 811 B.8: a
// temperature interval of 1 °F = 5/9 K).
func TestQuantityDifferences(t *testing.T) {
	for _, q := range predict.Quantities() {
		for _, n := range q.Spellings() {
			s, _ := q.Spelling(n)
			if s.Unit == "°F" {
				checkRel(t, n+" difference of 45", s.DifferenceToStored(45), 25, 1e-15)
				continue
			}
			if s.ToStored(0) != 0 || s.DifferenceToStored(7) != s.ToStored(7) {
				t.Errorf("%s: conversion is not proportional (0 → %v)", n, s.ToStored(0))
			}
		}
	}
	for name, want := range map[string]float64{"heat_input_kj_in": 1000 / 25.4, "heat_input_j_in": 1 / 25.4, "heat_input_kj_mm": 1000} {
		sp, ok := predict.ParseVariable(name)
		if !ok || sp.Variable != predict.VarHeatInput {
			t.Fatalf("ParseVariable(%q) = %v, %v", name, sp.Variable, ok)
		}
		checkRel(t, name+" of 1", sp.Value(1), want, 1e-15) // 1 in = 25.4 mm, 1 kJ = 1000 J
	}
}
