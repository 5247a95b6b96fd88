package db_test

import (
	"context"
	"errors"
	"math"
	"slices"
	"strings"
	"testing"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// wantBand is an expected numeric range; NaN marks an unbounded side.
type wantBand struct {
	v        predict.Variable
	min, max float64
}

func checkBands(t *testing.T, q predict.QualifiedRanges, want []wantBand) {
	t.Helper()
	for _, w := range want {
		r, ok := q.Lookup(w.v)
		if !ok || len(r.Bands) != 1 {
			t.Errorf("%s: range %+v, want one band", w.v, r)
			continue
		}
		b := r.Bands[0]
		okMin := (math.IsNaN(w.min) && math.IsInf(b.Min, -1)) || math.Abs(b.Min-w.min) <= 1e-9*math.Abs(w.min)
		okMax := (math.IsNaN(w.max) && math.IsInf(b.Max, 1)) || math.Abs(b.Max-w.max) <= 1e-9*math.Abs(w.max)
		if !okMin || !okMax {
			t.Errorf("%s = %v, want [%v, %v]", w.v, b, w.min, w.max)
		}
	}
}

func TestBuiltInRuleSets(t *testing.T) {
	t.Parallel()
	s := dbtest.Store(t)
	sets, err := s.RuleSets(context.Background(), dbtest.Site(t))
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, rs := range sets {
		ids = append(ids, rs.RuleSetID)
		if !rs.BuiltIn || !rs.FromMemory || !strings.Contains(rs.Notes, "From memory — verify against the current edition of your code of record") {
			t.Errorf("%s: built_in=%v from_memory=%v, notes must carry the from-memory label", rs.RuleSetID, rs.BuiltIn, rs.FromMemory)
		}
		if err := predict.ValidateRules(rs.Rules); err != nil {
			t.Errorf("%s: %v", rs.RuleSetID, err)
		}
	}
	if !slices.Equal(ids, []string{"pressure-style-gmaw", "structural-style-gmaw"}) {
		t.Errorf("built-in rule sets = %v", ids)
	}
}

// TestStructuralStyleWorkedExample derives the ranges of the fixture PQR
// (200 A, 24 V, 6 mm/s, 8 m/min, 2G, 10 mm, 20 °C) under the built-in
// structural-style set. Percentages from memory: current ±10 %, voltage
// ±7 %, travel ±25 %, WFS ±10 %; preheat −25 °F (from memory, unsure).
func TestStructuralStyleWorkedExample(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	pr, err := s.DeriveRanges(ctx, a, p.ID, "structural-style-gmaw", 0)
	if err != nil {
		t.Fatal(err)
	}
	checkBands(t, pr.Ranges, []wantBand{
		{predict.VarCurrent, 180, 220},                  // 200 ± 20
		{predict.VarVoltage, 22.32, 25.68},              // 24 ± 1.68
		{predict.VarTravelSpeed, 4.5, 7.5},              // 6 ± 1.5
		{predict.VarWireFeedSpeed, 7.2, 8.8},            // 8 ± 0.8
		{predict.VarWireDiameter, 1.18, 1.22},           // same size ± 0.02 (common practice, no source)
		{predict.VarThickness, 5, 20},                   // T/2 to 2T
		{predict.VarPreheat, 20 - 25.0*5/9, math.NaN()}, // 25 °F of difference = 13.9 °C
	})
	if r, _ := pr.Ranges.Lookup(predict.VarPosition); !slices.Equal(r.Allowed, []string{"2G", "1G", "1F", "2F"}) {
		t.Errorf("positions = %v, want the tested 2G plus 1G, 1F, 2F", r.Allowed)
	}
	// A coupon at 231 A is 11 A (5 %) above 220 A; everything else matches the PQR.
	c, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "C-"+p.Code, 231, 24))
	if err != nil {
		t.Fatal(err)
	}
	flags := procedureFlags(t, s, site, p.ID)
	if len(flags) != 1 || flags[0].SubjectID != c.ID || flags[0].Variable != "current_a" || *flags[0].Direction != "above" ||
		math.Abs(*flags[0].Excess-11) > 1e-9 || math.Abs(*flags[0].ExcessPct-5) > 1e-9 {
		t.Fatalf("flags = %+v, want current_a above by 11 A (5 %%)", flags)
	}
}

// TestPressureStyleWorkedExample: from memory, the pressure-style set has no
// current/voltage/travel bands but (toughness-tested joints) caps heat input
// at the PQR's: 24 V·200 A/6 mm/s = 800 J/mm (arc energy V·I/S).
func TestPressureStyleWorkedExample(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	p := rangesProcedure(t, s, a)
	pr, err := s.DeriveRanges(ctx, a, p.ID, "pressure-style-gmaw", 0)
	if err != nil {
		t.Fatal(err)
	}
	checkBands(t, pr.Ranges, []wantBand{
		{predict.VarHeatInput, math.NaN(), 800},
		{predict.VarThickness, 5, 20},
		{predict.VarPreheat, 20 - 100.0*5/9, math.NaN()},
	})
	if _, ok := pr.Ranges.Lookup(predict.VarCurrent); ok {
		t.Error("pressure-style set has a current range; from memory current is not essential there")
	}
	// 231 A at 24 V and 6 mm/s: 924 J/mm, 124 J/mm (15.5 %) above 800 J/mm.
	// The PQR records no interpass, so the interpass rule cannot be derived:
	// the coupon is flagged not_checkable there rather than passed.
	if _, err := s.CreateCoupon(ctx, a, rangesCoupon(p.ID, "C-"+p.Code, 231, 24)); err != nil {
		t.Fatal(err)
	}
	got := flagsByKey(procedureFlags(t, s, site, p.ID))
	if len(got) != 2 {
		t.Fatalf("flags = %+v, want heat input (model) and interpass (not_checkable)", got)
	}
	for k, f := range got {
		switch {
		case k.variable == "heat_input_j_mm" && k.kind == "model":
			if math.Abs(*f.Value-924) > 1e-9 || math.Abs(*f.Excess-124) > 1e-9 || math.Abs(*f.ExcessPct-15.5) > 1e-9 {
				t.Errorf("heat input flag = %+v, want 924 J/mm, 124 over (15.5 %%)", f)
			}
		case k.variable == "interpass_c" && k.kind == "not_checkable":
		default:
			t.Errorf("unexpected flag %+v", f)
		}
	}
}

func TestCreateRuleSetVersions(t *testing.T) {
	t.Parallel()
	s, site := dbtest.Store(t), dbtest.Site(t)
	a, ctx := actor(site), context.Background()
	d := db.RuleSetData{RuleSetID: "shop-gmaw", Name: "shop GMAW", Process: "GMAW",
		Rules: []predict.Rule{{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: ptr(5.0), AbovePct: ptr(5.0)}}}
	for want := 1; want <= 2; want++ {
		rs, err := s.CreateRuleSet(ctx, a, d)
		if err != nil || rs.Version != want {
			t.Fatalf("CreateRuleSet #%d = version %d, %v; want version %d", want, rs.Version, err, want)
		}
	}
	d.RuleSetID = "structural-style-gmaw"
	var fe *db.FieldError
	if _, err := s.CreateRuleSet(ctx, a, d); !errors.As(err, &fe) || fe.Field != "id" {
		t.Errorf("CreateRuleSet(built-in id) error = %v, want a refusal naming id", err)
	}
	if _, err := s.RuleSet(ctx, site+"-other", "shop-gmaw", 0); !errors.Is(err, db.ErrNotFound) {
		t.Errorf("another site read the shop's rule set: %v", err)
	}
}
