package predict

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"pgregory.net/rapid"
)

// detOf is det(XᵀX) of rows, computed directly with gonum (not through the
// determinant lemma the planner uses).
func detOf(rows [][]float64) float64 {
	x := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		x.SetRow(i, r)
	}
	var m mat.Dense
	m.Mul(x.T(), x)
	return mat.Det(&m)
}

// lineRows is the straight-line model y = b₀ + b₁·x on the points xs.
func lineRows(xs []float64) [][]float64 {
	out := make([][]float64, len(xs))
	for i, x := range xs {
		out[i] = []float64{1, x}
	}
	return out
}

// For a straight line on an interval the D-optimal design puts half of the
// runs at each end (Atkinson, Donev & Tobias, Optimum Experimental Designs,
// with SAS, the first example of D-optimality; also Box, Hunter & Hunter;
// from memory). Checked two ways: exhaustively over every 2- and 4-run
// design on an 11-point grid, and by the greedy sequential choice, which
// from one run at each end adds runs alternately at the two ends.
func TestDOptimalStraightLineEnds(t *testing.T) {
	grid := make([]float64, 11)
	for i := range grid {
		grid[i] = 150 + 25*float64(i) // 150–400 A
	}
	for _, n := range []int{2, 4} {
		best, bestDet := []float64(nil), -1.0
		var walk func(start int, pick []float64)
		walk = func(start int, pick []float64) { // multisets: replicates allowed
			if len(pick) == n {
				if d := detOf(lineRows(pick)); d > bestDet*(1+1e-12) {
					best, bestDet = append([]float64(nil), pick...), d
				}
				return
			}
			for i := start; i < len(grid); i++ {
				walk(i, append(pick, grid[i]))
			}
		}
		walk(0, nil)
		lo, hi := 0, 0
		for _, x := range best {
			switch x {
			case grid[0]:
				lo++
			case grid[len(grid)-1]:
				hi++
			}
		}
		if lo != n/2 || hi != n/2 {
			t.Errorf("exhaustive %d-run D-optimal design = %v, want %d runs at each end", n, best, n/2)
		}
	}
	cand := lineRows(grid)
	info := newInformation(2, columnScale(cand))
	for _, f := range lineRows([]float64{grid[0], grid[10]}) {
		info.add(f)
	}
	count := map[float64]int{}
	for k := 0; k < 6; k++ {
		ch, ok := info.factor()
		if !ok {
			t.Fatal("information singular after two distinct runs")
		}
		i := bestOf(leverage(ch, info, cand), nil)
		count[grid[i]]++
		info.add(cand[i])
	}
	if count[grid[0]] != 3 || count[grid[10]] != 3 {
		t.Errorf("greedy runs after {150, 400}: %v, want 3 at 150 A and 3 at 400 A", count)
	}
}

// The proposal maximises det(XᵀX + xxᵀ) over the candidates: checked
// against a direct determinant of every candidate, for random groups,
// ranges and models (property test).
func TestPlanMaximisesDeterminant(t *testing.T) {
	rapid.Check(t, func(rt *rapid.T) {
		model := rapid.SampledFrom([]ModelKind{ModelJacksonFree, ModelLesnewich}).Draw(rt, "model")
		iLo := rapid.Float64Range(100, 250).Draw(rt, "iLo")
		vLo := rapid.Float64Range(16, 26).Draw(rt, "vLo")
		sLo := rapid.Float64Range(3, 7).Draw(rt, "sLo")
		sp := DesignSpace{
			CurrentA:          Range{iLo, iLo + rapid.Float64Range(20, 150).Draw(rt, "iW")},
			VoltageV:          Range{vLo, vLo + rapid.Float64Range(1, 6).Draw(rt, "vW")},
			TravelSpeedMMPerS: Range{sLo, sLo + rapid.Float64Range(1, 4).Draw(rt, "sW")},
			ExtensionMM:       &Range{10, 25},
			Steps:             DesignSteps{CurrentA: 5, VoltageV: 0.5, ExtensionMM: 1},
		}
		n := rapid.IntRange(6, 12).Draw(rt, "n")
		coupons := make([]DesignPoint, n)
		for i := range coupons {
			coupons[i] = DesignPoint{
				CurrentA:          rapid.Float64Range(sp.CurrentA.Min, sp.CurrentA.Max).Draw(rt, "I"),
				VoltageV:          rapid.Float64Range(sp.VoltageV.Min, sp.VoltageV.Max).Draw(rt, "V"),
				TravelSpeedMMPerS: rapid.Float64Range(sp.TravelSpeedMMPerS.Min, sp.TravelSpeedMMPerS.Max).Draw(rt, "S"),
				ExtensionMM:       rapid.Float64Range(10, 25).Draw(rt, "L"),
			}
		}
		plan, err := PlanCoupons(PlanInput{Model: model, Coupons: coupons, Space: sp, Count: 1})
		if err != nil {
			rt.Fatalf("PlanCoupons: %v", err)
		}
		if plan.Starting {
			rt.Skip("random coupons collinear: starting design")
		}
		cur, _ := rowsOf(model, coupons)
		with := func(p DesignPoint) float64 {
			f, _ := DesignRow(model, p)
			return detOf(append(append([][]float64(nil), cur...), f))
		}
		got := with(plan.Proposals[0].DesignPoint)
		g, _ := newDesignGrid(model, sp)
		for _, p := range g.points {
			if d := with(p); d > got*(1+1e-7) {
				rt.Fatalf("candidate %+v has det %g > proposal %+v det %g", p, d, plan.Proposals[0].DesignPoint, got)
			}
		}
	})
}

// Every proposal lies inside the ranges, on the step grid and inside the
// window's heat input limit; a group without coupons gets the starting
// design (8 corners and 2 centre points).
func TestPlanStaysInside(t *testing.T) {
	rule := HeatInputRule{Form: HeatInputThermalEfficiency, Efficiency: 0.8}
	win := WindowInput{CurrentA: Range{180, 260}, VoltageV: Range{22, 28}, TravelSpeedMMPerS: Range{4, 8},
		HeatInput: &HeatInputTarget{MaxJPerMM: 1100, Rule: rule}}
	lim, err := NewWindowLimits(win)
	if err != nil {
		t.Fatal(err)
	}
	sp := DesignSpace{CurrentA: win.CurrentA, VoltageV: win.VoltageV, TravelSpeedMMPerS: win.TravelSpeedMMPerS,
		Steps: DesignSteps{CurrentA: 5, VoltageV: 0.5, TravelSpeedMMPerS: 0.5}, Limits: lim}
	start, err := PlanCoupons(PlanInput{Model: ModelJacksonFree, Space: sp, Count: 3})
	if err != nil {
		t.Fatal(err)
	}
	if !start.Starting || len(start.Proposals) < 3 {
		t.Fatalf("no coupons: starting=%v with %d proposals, want a starting design", start.Starting, len(start.Proposals))
	}
	var done []DesignPoint
	for _, p := range start.Proposals {
		done = append(done, p.DesignPoint)
	}
	plan, err := PlanCoupons(PlanInput{Model: ModelJacksonFree, Coupons: done, ResidualSD: 0.08, Space: sp, Count: 5,
		Target: &DesignPoint{CurrentA: 230, VoltageV: 26, TravelSpeedMMPerS: 6}})
	if err != nil {
		t.Fatal(err)
	}
	if plan.Starting {
		t.Fatal("the starting design's coupons still give a starting design")
	}
	all := append(append([]Proposal(nil), start.Proposals...), plan.Proposals...)
	all = append(all, Proposal{DesignPoint: plan.Target.DesignPoint})
	for _, p := range all {
		h, _ := rule.JPerMM(p.VoltageV, p.CurrentA, p.TravelSpeedMMPerS)
		onStep := func(v, step float64) bool { return math.Abs(v/step-math.Round(v/step)) < 1e-9 }
		if p.CurrentA < 180 || p.CurrentA > 260 || p.VoltageV < 22 || p.VoltageV > 28 || p.TravelSpeedMMPerS < 4 ||
			p.TravelSpeedMMPerS > 8 || h > 1100*(1+1e-9) || !onStep(p.CurrentA, 5) || !onStep(p.VoltageV, 0.5) {
			t.Errorf("proposal %+v (heat input %.0f J/mm) is outside the ranges, steps or limit", p.DesignPoint, h)
		}
	}
	for _, c := range plan.Proposals[len(plan.Proposals)-1].Coefficients {
		if !(c.Ratio > 0 && c.Ratio < 1) || c.StdErrAfter == nil || *c.StdErrAfter >= *c.StdErrBefore {
			t.Errorf("after 5 more coupons %s: ratio %g, SE %v → %v; want a shrink", c.Term, c.Ratio, c.StdErrBefore, c.StdErrAfter)
		}
	}
	if tp := plan.Target; !(tp.FactorAfter < tp.FactorBefore) || *tp.PredSDAfter >= *tp.PredSDBefore {
		t.Errorf("target proposal does not narrow the prediction: %+v", tp)
	}
}

// The target proposal minimises f₀ᵀ(XᵀX + xxᵀ)⁻¹f₀ at the production
// setting over every candidate: checked with gonum's inverse directly.
func TestTargetMinimisesVariance(t *testing.T) {
	sp := DesignSpace{CurrentA: Range{180, 260}, VoltageV: Range{22, 28}, TravelSpeedMMPerS: Range{4, 8},
		Steps: DesignSteps{CurrentA: 10, VoltageV: 1, TravelSpeedMMPerS: 1}}
	coupons := []DesignPoint{{190, 23, 5, 0}, {250, 27, 7, 0}, {200, 27, 4.5, 0}, {240, 23, 7.5, 0}, {220, 25, 6, 0}, {210, 24, 7, 0}}
	at := DesignPoint{CurrentA: 255, VoltageV: 27.5, TravelSpeedMMPerS: 7.5}
	plan, err := PlanCoupons(PlanInput{Model: ModelJacksonFree, Coupons: coupons, Space: sp, Count: 1, Target: &at})
	if err != nil {
		t.Fatal(err)
	}
	cur, _ := rowsOf(ModelJacksonFree, coupons)
	f0, _ := DesignRow(ModelJacksonFree, at)
	factor := func(p DesignPoint) float64 {
		f, _ := DesignRow(ModelJacksonFree, p)
		rows := append(append([][]float64(nil), cur...), f)
		x := mat.NewDense(len(rows), 4, nil)
		for i, r := range rows {
			x.SetRow(i, r)
		}
		var m, inv mat.Dense
		m.Mul(x.T(), x)
		if err := inv.Inverse(&m); err != nil {
			t.Fatal(err)
		}
		v := mat.NewVecDense(4, f0)
		var w mat.VecDense
		w.MulVec(&inv, v)
		return mat.Dot(v, &w)
	}
	got := factor(plan.Target.DesignPoint)
	if math.Abs(got-plan.Target.FactorAfter) > 1e-6*got {
		t.Errorf("reported factor after %g, direct %g", plan.Target.FactorAfter, got)
	}
	g, _ := newDesignGrid(ModelJacksonFree, sp)
	for _, p := range g.points {
		if f := factor(p); f < got*(1-1e-7) {
			t.Errorf("candidate %+v gives %g < proposal %+v %g", p, f, plan.Target.DesignPoint, got)
		}
	}
}

// A step too small for its range is refused, not looped over.
func TestDesignAxisTinyStep(t *testing.T) {
	for _, step := range []float64{1e-320, 1e-9, math.SmallestNonzeroFloat64} {
		if _, err := designAxis(Range{150, 300}, step, "current A"); err == nil {
			t.Errorf("step %g: no error", step)
		}
	}
}
