package predict

import (
	"fmt"
	"math"
)

// MaxPlanCount is the most coupons one plan proposes.
const MaxPlanCount = 50

// PlanInput is a coupon planning problem: the model being calibrated, the
// settings of the group's coupons it is (or would be) fitted to, the
// residual SD of that fit in the model's units (ln(mm) for the Jackson
// models, kg/h for lesnewich; 0 when unknown), where coupons may go, how
// many to propose and, optionally, a production setting whose prediction
// interval should narrow most.
type PlanInput struct {
	Model      ModelKind
	Coupons    []DesignPoint
	ResidualSD float64
	Space      DesignSpace
	Count      int
	Target     *DesignPoint
}

// CoefficientShrink is the expected effect of a plan, up to and including
// one proposal, on one coefficient's standard error: SE = σ·√((XᵀX)⁻¹ⱼⱼ)
// before and after the planned rows are added, with σ held at its current
// estimate (the new coupons' scatter is not known in advance). The SEs are
// absent when σ is unknown; Ratio (after/before) needs only the design.
type CoefficientShrink struct {
	Term         string   `json:"term"`
	StdErrBefore *float64 `json:"std_err_before,omitempty"`
	StdErrAfter  *float64 `json:"std_err_after,omitempty"`
	Ratio        float64  `json:"ratio"`
	ShrinkPct    float64  `json:"shrink_pct"`
}

// Proposal is one proposed coupon setting. DetGain is the factor by which
// it multiplies det(XᵀX), 1 + fᵀ(XᵀX)⁻¹f; Coefficients is the expected
// shrink after it and the proposals before it (empty in a starting design,
// where there is no "before").
type Proposal struct {
	DesignPoint
	DetGain      float64             `json:"det_gain,omitempty"`
	Coefficients []CoefficientShrink `json:"coefficients"`
}

// TargetProposal is the single coupon that most narrows the prediction at
// a production setting At (c-optimal at At): the variance factor
// f₀ᵀ(XᵀX)⁻¹f₀ before and after it, and, when σ is known, the standard
// error of the fitted value and the SD of a new coupon's prediction there
// (√(σ² + σ²·f₀ᵀ(XᵀX)⁻¹f₀)) in the model's units.
type TargetProposal struct {
	DesignPoint
	At           DesignPoint `json:"at"`
	FactorBefore float64     `json:"variance_factor_before"`
	FactorAfter  float64     `json:"variance_factor_after"`
	MeanSEBefore *float64    `json:"mean_se_before,omitempty"`
	MeanSEAfter  *float64    `json:"mean_se_after,omitempty"`
	PredSDBefore *float64    `json:"prediction_sd_before,omitempty"`
	PredSDAfter  *float64    `json:"prediction_sd_after,omitempty"`
}

// Plan is the answer of PlanCoupons. Starting is true when the coupons so
// far cannot fit the model and Proposals is a starting design instead.
type Plan struct {
	Model      ModelKind       `json:"model"`
	Starting   bool            `json:"starting_design"`
	Basis      string          `json:"basis"`
	Candidates int             `json:"candidates"`
	Proposals  []Proposal      `json:"proposals"`
	Target     *TargetProposal `json:"target,omitempty"`
}

// PlanCoupons proposes the next Count coupon settings for a calibration by
// greedy sequential D-optimal choice over the candidate grid of Space: each
// proposal is the candidate with the largest det(XᵀX + f·fᵀ), then joins X.
// For jackson_fixed every candidate adds the same information on ln K, so
// ties are broken by the free-exponent model's information (the coupon
// that would also test the published exponents best). When the coupons so
// far cannot fit the model (too few, or XᵀX singular) the answer is a
// starting design instead: a two-level factorial on the grid's extreme
// values plus two centre points (see startingDesign). With Target set, the
// answer also holds the c-optimal coupon at that production setting.
func PlanCoupons(in PlanInput) (Plan, error) {
	if in.Count < 1 || in.Count > MaxPlanCount {
		return Plan{}, &InputError{Field: "count", Value: float64(in.Count), Reason: fmt.Sprintf("must be 1–%d", MaxPlanCount)}
	}
	if !(in.ResidualSD >= 0) || math.IsInf(in.ResidualSD, 0) {
		return Plan{}, &InputError{Field: "residual SD", Value: in.ResidualSD, Reason: "must be zero (unknown) or positive"}
	}
	g, err := newDesignGrid(in.Model, in.Space)
	if err != nil {
		return Plan{}, err
	}
	cur, err := rowsOf(in.Model, in.Coupons)
	if err != nil {
		return Plan{}, err
	}
	cand, _ := rowsOf(in.Model, g.points)
	scale := columnScale(cand)
	info := newInformation(len(cand[0]), scale)
	for _, f := range cur {
		info.add(f)
	}
	plan := Plan{Model: in.Model, Candidates: len(g.points)}
	ch, ok := info.factor()
	if need := len(cand[0]) + 1; len(cur) < need || !ok {
		plan.Starting = true
		plan.Proposals = startingDesign(in.Model, g, in.Space.Limits)
		plan.Basis = fmt.Sprintf("starting design: the group has %d usable coupons and the %s fit needs at least %d with spread in every term; "+
			"a two-level factorial on the extreme grid values with two centre points, %d coupons", len(cur), in.Model, need, len(plan.Proposals))
		return plan, nil
	}
	plan.Basis = fmt.Sprintf("greedy sequential D-optimal choice among %d candidate settings, from %d coupons", len(g.points), len(cur))
	sec := secondaryOf(in.Model, in.Coupons, g.points)
	before, _ := inverseDiag(ch, info, nil)
	work := info.clone()
	for k := 0; k < in.Count; k++ {
		wch, _ := work.factor()
		lev := leverage(wch, work, cand)
		var tie []float64
		if sec != nil {
			tie = sec.leverages()
		}
		best := bestOf(lev, tie)
		work.add(cand[best])
		if sec != nil {
			sec.add(best)
		}
		wch, _ = work.factor()
		after, _ := inverseDiag(wch, work, nil)
		plan.Proposals = append(plan.Proposals, Proposal{DesignPoint: g.points[best], DetGain: 1 + lev[best],
			Coefficients: shrinks(in.Model, before, after, in.ResidualSD)})
	}
	if in.Target != nil {
		t, err := targetProposal(in, g, cand, info)
		if err != nil {
			return Plan{}, err
		}
		plan.Target = t
	}
	return plan, nil
}

// rowsOf returns the design rows of points, refusing a non-positive setting.
func rowsOf(model ModelKind, pts []DesignPoint) ([][]float64, error) {
	out := make([][]float64, len(pts))
	for i, p := range pts {
		for _, c := range []struct {
			f string
			v float64
		}{{"current A", p.CurrentA}, {"arc voltage V", p.VoltageV}, {"travel speed mm/s", p.TravelSpeedMMPerS}} {
			if err := mustBePositive(c.f, c.v); err != nil {
				return nil, err
			}
		}
		if model == ModelLesnewich {
			if err := mustBePositive("electrode extension mm", p.ExtensionMM); err != nil {
				return nil, err
			}
		}
		f, err := DesignRow(model, p)
		if err != nil {
			return nil, err
		}
		out[i] = f
	}
	return out, nil
}

// columnScale is the largest absolute value of each column (1 if all zero).
func columnScale(rows [][]float64) []float64 {
	s := make([]float64, len(rows[0]))
	for _, f := range rows {
		for j, v := range f {
			s[j] = math.Max(s[j], math.Abs(v))
		}
	}
	for j := range s {
		if s[j] == 0 {
			s[j] = 1
		}
	}
	return s
}

// shrinks compares the diagonals of (XᵀX)⁻¹ before and after.
func shrinks(model ModelKind, before, after []float64, sigma float64) []CoefficientShrink {
	terms := CoefficientTerms(model)
	out := make([]CoefficientShrink, len(terms))
	for j, t := range terms {
		r := math.Sqrt(after[j] / before[j])
		out[j] = CoefficientShrink{Term: t, Ratio: r, ShrinkPct: 100 * (1 - r)}
		if sigma > 0 {
			b, a := sigma*math.Sqrt(before[j]), sigma*math.Sqrt(after[j])
			out[j].StdErrBefore, out[j].StdErrAfter = &b, &a
		}
	}
	return out
}
