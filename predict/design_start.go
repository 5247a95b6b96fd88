package predict

import (
	"fmt"
	"math"
)

// tieBreak ranks candidates that the primary criterion cannot tell apart:
// for jackson_fixed (one intercept, so every candidate adds the same
// information) it is the free-exponent model's D criterion, made defined
// for a singular information matrix by a small ridge.
type tieBreak struct {
	info *information
	rows [][]float64
}

// secondaryOf returns the tie-break of a model, nil when it needs none.
func secondaryOf(model ModelKind, coupons, cand []DesignPoint) *tieBreak {
	if model != ModelJacksonFixed {
		return nil
	}
	rows, _ := rowsOf(ModelJacksonFree, cand)
	t := &tieBreak{info: newInformation(4, columnScale(rows)), rows: rows}
	cur, _ := rowsOf(ModelJacksonFree, coupons)
	for _, f := range cur {
		t.info.add(f)
	}
	return t
}

// leverages is fᵀ(XᵀX + εI)⁻¹f of every candidate in the free model.
func (t *tieBreak) leverages() []float64 {
	r := t.info.ridge()
	ch, ok := r.factor()
	if !ok {
		return nil
	}
	return leverage(ch, r, t.rows)
}

func (t *tieBreak) add(i int) { t.info.add(t.rows[i]) }

// startingDesign is a two-level factorial in the factors the model's terms
// use, at the lowest and highest grid value of each (current, voltage and
// travel speed for the Jackson models; current and extension for
// lesnewich), plus two centre points at the grid value nearest each
// factor's centre in the fitted space (log space for the Jackson models).
// Two-level factorials with centre points are the usual first design for a
// response surface (Montgomery, Design and Analysis of Experiments, the
// 2^k chapters; from memory); two centre points keep the coupon count
// small and give a first estimate of pure scatter (common practice, no
// source). A corner the window's limits refuse is left out.
func startingDesign(model ModelKind, g *designGrid, lim *WindowLimits) []Proposal {
	ends := func(axis []float64) []float64 {
		if axis[0] == axis[len(axis)-1] {
			return axis[:1]
		}
		return []float64{axis[0], axis[len(axis)-1]}
	}
	logSpace := model != ModelLesnewich
	var pts []DesignPoint
	for _, i := range ends(g.current) {
		for _, v := range ends(g.voltage) {
			for _, s := range ends(g.travel) {
				for _, l := range ends(g.extension) {
					pts = append(pts, DesignPoint{CurrentA: i, VoltageV: v, TravelSpeedMMPerS: s, ExtensionMM: l})
				}
			}
		}
	}
	c := DesignPoint{CurrentA: centreOf(g.current, logSpace), VoltageV: centreOf(g.voltage, logSpace),
		TravelSpeedMMPerS: centreOf(g.travel, logSpace), ExtensionMM: centreOf(g.extension, logSpace)}
	pts = append(pts, c, c)
	out := make([]Proposal, 0, len(pts))
	for _, p := range pts {
		if lim == nil || lim.Allows(p) {
			out = append(out, Proposal{DesignPoint: p, Coefficients: []CoefficientShrink{}})
		}
	}
	return out
}

// targetProposal is the c-optimal coupon at the production setting
// in.Target: the candidate that lowers f₀ᵀ(XᵀX)⁻¹f₀ the most, before any of
// the D-optimal proposals are welded.
func targetProposal(in PlanInput, g *designGrid, cand [][]float64, info *information) (*TargetProposal, error) {
	at := *in.Target
	if in.Model != ModelLesnewich {
		at.ExtensionMM = 0
	}
	f0s, err := rowsOf(in.Model, []DesignPoint{at})
	if err != nil {
		return nil, fmt.Errorf("production setting: %w", err)
	}
	f0 := f0s[0]
	c, _ := info.factor()
	lev := leverage(c, info, cand)
	gain := targetGain(c, info, f0, cand, lev)
	var tie []float64
	if sec := secondaryOf(in.Model, in.Coupons, g.points); sec != nil {
		// Every candidate narrows the fixed model's interval alike: prefer
		// the one nearest the production setting in the free model's terms.
		r := sec.info.ridge()
		if rc, ok := r.factor(); ok {
			fr, _ := rowsOf(ModelJacksonFree, []DesignPoint{at})
			tie = targetGain(rc, r, fr[0], sec.rows, leverage(rc, r, sec.rows))
		}
	}
	best := bestOf(gain, tie)
	_, before := inverseDiag(c, info, f0)
	t := &TargetProposal{DesignPoint: g.points[best], At: at, FactorBefore: before, FactorAfter: before - gain[best]}
	if s := in.ResidualSD; s > 0 {
		mb, ma := s*math.Sqrt(t.FactorBefore), s*math.Sqrt(math.Max(t.FactorAfter, 0))
		pb, pa := s*math.Sqrt(1+t.FactorBefore), s*math.Sqrt(1+math.Max(t.FactorAfter, 0))
		t.MeanSEBefore, t.MeanSEAfter, t.PredSDBefore, t.PredSDAfter = &mb, &ma, &pb, &pa
	}
	return t, nil
}
