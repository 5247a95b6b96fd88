package predict

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Coupon planning chooses the settings of the next coupons so that a
// calibration's coefficients are pinned down with as few coupons as
// possible. Each model is linear in its coefficients in its fitted space,
// so a coupon at setting x adds the row f(x) to the design matrix X and the
// information matrix XᵀX grows by f(x)·f(x)ᵀ. The D-optimal choice maximises
// det(XᵀX + f·fᵀ) = det(XᵀX)·(1 + fᵀ(XᵀX)⁻¹f) (matrix determinant lemma),
// which shrinks the volume of the coefficients' joint confidence region the
// most; the c-optimal choice at a production setting x₀ minimises
// f₀ᵀ(XᵀX + f·fᵀ)⁻¹f₀, the variance of the fitted value there.

// DesignPoint is one welding setting a coupon plan proposes: current in A,
// arc voltage in V, travel speed in mm/s and, for the melting-rate model,
// electrode extension in mm (0 when the model does not use it).
type DesignPoint struct {
	CurrentA          float64 `json:"current_a"`
	VoltageV          float64 `json:"voltage_v"`
	TravelSpeedMMPerS float64 `json:"travel_speed_mm_s"`
	ExtensionMM       float64 `json:"extension_mm,omitempty"`
}

// DesignRow is the row a coupon at p adds to the model's design matrix, in
// the space the model is fitted in: (1) for jackson_fixed (only ln K is
// fitted), (1, ln I, ln S, ln V) for jackson_free, (I, L·I²) for lesnewich.
func DesignRow(model ModelKind, p DesignPoint) ([]float64, error) {
	switch model {
	case ModelJacksonFixed:
		return []float64{1}, nil
	case ModelJacksonFree:
		return []float64{1, math.Log(p.CurrentA), math.Log(p.TravelSpeedMMPerS), math.Log(p.VoltageV)}, nil
	case ModelLesnewich:
		return []float64{p.CurrentA, p.ExtensionMM * p.CurrentA * p.CurrentA}, nil
	}
	return nil, &InputError{Field: "model", Reason: fmt.Sprintf("unknown model %q", model)}
}

// CoefficientTerms names the coefficients of a model in the order of DesignRow.
func CoefficientTerms(model ModelKind) []string {
	switch model {
	case ModelJacksonFixed:
		return []string{"ln_k"}
	case ModelJacksonFree:
		return []string{"ln_k", "current_exponent", "travel_speed_exponent", "voltage_exponent"}
	case ModelLesnewich:
		return []string{"alpha_kg_h_a", "beta_kg_h_a2_mm"}
	}
	return nil
}

// information is XᵀX of rows, each scaled column-wise by scale (the
// criteria below are invariant to a fixed column scaling; scaling keeps the
// melting-rate model's I and L·I² columns, 10⁶ apart, well conditioned).
type information struct {
	m     *mat.SymDense
	scale []float64
}

func newInformation(p int, scale []float64) *information {
	return &information{m: mat.NewSymDense(p, nil), scale: scale}
}

// scaled returns f divided column-wise by the information's scale.
func (in *information) scaled(f []float64) *mat.VecDense {
	v := mat.NewVecDense(len(f), nil)
	for j, x := range f {
		v.SetVec(j, x/in.scale[j])
	}
	return v
}

// add adds the row f (unscaled) to XᵀX.
func (in *information) add(f []float64) {
	v := in.scaled(f)
	in.m.SymRankOne(in.m, 1, v)
}

// clone returns an independent copy.
func (in *information) clone() *information {
	c := &information{m: mat.NewSymDense(in.m.SymmetricDim(), nil), scale: in.scale}
	c.m.CopySym(in.m)
	return c
}

// factor returns the Cholesky factor of XᵀX, or false when XᵀX is singular
// (the coupons so far cannot determine every coefficient).
func (in *information) factor() (*mat.Cholesky, bool) {
	var ch mat.Cholesky
	if !ch.Factorize(in.m) {
		return nil, false
	}
	// A factor that exists but is numerically singular is no better.
	if c := ch.Cond(); math.IsInf(c, 0) || c > 1e14 {
		return nil, false
	}
	return &ch, true
}

// ridge returns XᵀX + ε·I with ε a small share of its trace: a stand-in for
// a singular information matrix when only a tie is to be broken.
func (in *information) ridge() *information {
	c := in.clone()
	p := c.m.SymmetricDim()
	eps := 1e-9
	for i := 0; i < p; i++ {
		eps += 1e-6 * c.m.At(i, i) / float64(p)
	}
	for i := 0; i < p; i++ {
		c.m.SetSym(i, i, c.m.At(i, i)+eps)
	}
	return c
}

// leverage returns fᵀ(XᵀX)⁻¹f for each candidate row: det(XᵀX + ffᵀ) is
// det(XᵀX)·(1 + leverage), so the largest leverage is the D-optimal choice.
func leverage(ch *mat.Cholesky, in *information, rows [][]float64) []float64 {
	out := make([]float64, len(rows))
	var w mat.VecDense
	for i, f := range rows {
		v := in.scaled(f)
		if err := ch.SolveVecTo(&w, v); err != nil {
			out[i] = math.NaN()
			continue
		}
		out[i] = mat.Dot(v, &w)
	}
	return out
}

// targetGain returns, for each candidate row f, how much it lowers the
// variance factor f₀ᵀ(XᵀX)⁻¹f₀ of the fitted value at f₀ (Sherman–Morrison):
// (f₀ᵀ(XᵀX)⁻¹f)² / (1 + fᵀ(XᵀX)⁻¹f).
func targetGain(ch *mat.Cholesky, in *information, f0 []float64, rows [][]float64, lev []float64) []float64 {
	var u mat.VecDense
	if err := ch.SolveVecTo(&u, in.scaled(f0)); err != nil {
		return make([]float64, len(rows))
	}
	out := make([]float64, len(rows))
	for i, f := range rows {
		d := mat.Dot(&u, in.scaled(f))
		out[i] = d * d / (1 + lev[i])
	}
	return out
}

// inverseDiag returns the diagonal of (XᵀX)⁻¹ in unscaled coefficient
// units, and f₀ᵀ(XᵀX)⁻¹f₀ when f0 is given.
func inverseDiag(ch *mat.Cholesky, in *information, f0 []float64) (diag []float64, at0 float64) {
	var inv mat.SymDense
	if err := ch.InverseTo(&inv); err != nil {
		return nil, math.NaN()
	}
	p := inv.SymmetricDim()
	diag = make([]float64, p)
	for j := range diag {
		diag[j] = inv.At(j, j) / (in.scale[j] * in.scale[j])
	}
	if f0 != nil {
		v := in.scaled(f0)
		var w mat.VecDense
		w.MulVec(&inv, v)
		at0 = mat.Dot(v, &w)
	}
	return diag, at0
}

// bestOf returns the index of the largest primary value, ties (within a
// relative 1e-9) broken by the larger secondary value, then the first.
func bestOf(primary, secondary []float64) int {
	best := -1
	for i, v := range primary {
		if math.IsNaN(v) {
			continue
		}
		if best < 0 {
			best = i
			continue
		}
		b := primary[best]
		tol := 1e-9 * math.Max(math.Abs(b), math.Abs(v))
		switch {
		case v > b+tol:
			best = i
		case v >= b-tol && secondary != nil && secondary[i] > secondary[best]*(1+1e-12):
			best = i
		}
	}
	return best
}

// CoefficientStdErrs returns σ·√((XᵀX)⁻¹ⱼⱼ) for the model's coefficients
// with the coupons at points: the standard errors a least-squares fit with
// residual SD σ reports.
func CoefficientStdErrs(model ModelKind, points []DesignPoint, sigma float64) ([]float64, error) {
	rows, err := rowsOf(model, points)
	if err != nil {
		return nil, err
	}
	if len(rows) == 0 {
		return nil, ErrTooFewSamples
	}
	info := newInformation(len(rows[0]), columnScale(rows))
	for _, f := range rows {
		info.add(f)
	}
	ch, ok := info.factor()
	if !ok {
		return nil, ErrDegenerate
	}
	diag, _ := inverseDiag(ch, info, nil)
	for j := range diag {
		diag[j] = sigma * math.Sqrt(diag[j])
	}
	return diag, nil
}
