package predict

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// MaxVIF is the variance inflation factor above which the free-exponent
// fit is refused: a regressor whose VIF exceeds 10 has 90 % of its variance
// explained by the others, so its exponent cannot be told apart from
// theirs (the usual regression rule of thumb; common practice, no source).
const MaxVIF = 10

// Identifiability says whether ln I, ln S and ln V vary independently
// enough across the coupons for the free-exponent fit to separate their
// exponents. VIF of each is 1/(1 − R²) of its regression on the other two
// (the diagonal of the inverse correlation matrix); ConditionNumber is that
// of the centred, unit-length-scaled design of the three (√ of the
// correlation matrix's largest over smallest eigenvalue, gonum mat.Cond).
type Identifiability struct {
	ConditionNumber float64 `json:"condition_number"`
	VIFLnCurrent    float64 `json:"vif_ln_current"`
	VIFLnTravel     float64 `json:"vif_ln_travel_speed"`
	VIFLnVoltage    float64 `json:"vif_ln_voltage"`
	MaxVIF          float64 `json:"max_vif_allowed"`
	// Correlations between the logs, for naming what moves together.
	CorrCurrentTravel  float64 `json:"corr_ln_current_ln_travel_speed"`
	CorrCurrentVoltage float64 `json:"corr_ln_current_ln_voltage"`
	CorrTravelVoltage  float64 `json:"corr_ln_travel_speed_ln_voltage"`
}

// identifiability computes the diagnostics of the log columns li, ls, lv.
// A singular correlation matrix (exact collinearity) gives infinite VIFs.
func identifiability(li, ls, lv []float64) Identifiability {
	n := len(li)
	x := mat.NewDense(n, 3, nil)
	for i := range n {
		x.SetRow(i, []float64{li[i], ls[i], lv[i]})
	}
	var r mat.SymDense
	stat.CorrelationMatrix(&r, x, nil)
	return identifiabilityOf(&r)
}

// identifiabilityOf reads the correlations and VIFs (the diagonal of the
// inverse correlation matrix) of ln I, ln S, ln V from their correlation
// matrix r.
func identifiabilityOf(r *mat.SymDense) Identifiability {
	id := Identifiability{MaxVIF: MaxVIF, CorrCurrentTravel: r.At(0, 1), CorrCurrentVoltage: r.At(0, 2), CorrTravelVoltage: r.At(1, 2)}
	var inv mat.Dense
	if err := inv.Inverse(r); err != nil {
		inf := math.Inf(1)
		id.ConditionNumber, id.VIFLnCurrent, id.VIFLnTravel, id.VIFLnVoltage = inf, inf, inf, inf
		return id
	}
	id.ConditionNumber = math.Sqrt(mat.Cond(r, 2))
	id.VIFLnCurrent, id.VIFLnTravel, id.VIFLnVoltage = inv.At(0, 0), inv.At(1, 1), inv.At(2, 2)
	return id
}

// refusal returns nil when every VIF is at most MaxVIF, else an error
// (ErrDegenerate) naming the variables that move together, by how much,
// and what to vary instead, or the fixed-exponent fit.
func (id Identifiability) refusal() error {
	names := []string{"ln I (current)", "ln S (travel speed)", "ln V (voltage)"}
	vifs := []float64{id.VIFLnCurrent, id.VIFLnTravel, id.VIFLnVoltage}
	var high []string
	for i, v := range vifs {
		if v > MaxVIF {
			high = append(high, fmt.Sprintf("%s VIF %.3g", names[i], v))
		}
	}
	if high == nil {
		return nil
	}
	// The pair with the strongest correlation is what moves together.
	pairs := []struct {
		a, b int
		r    float64
	}{{0, 1, id.CorrCurrentTravel}, {0, 2, id.CorrCurrentVoltage}, {1, 2, id.CorrTravelVoltage}}
	top := pairs[0]
	for _, p := range pairs[1:] {
		if math.Abs(p.r) > math.Abs(top.r) {
			top = p
		}
	}
	what := []string{"current", "travel speed", "voltage"}
	return fmt.Errorf("%w: the free-exponent fit cannot separate the exponents: %s move together (nearly collinear: correlation %.3f; %s; condition number %.3g; the limit is VIF %g). "+
		"Weld coupons that vary %s independently of %s (on a synergic line, trim the voltage at each current), or fit jackson_fixed, which takes the published exponents",
		ErrDegenerate, names[top.a]+" and "+names[top.b], top.r, strings.Join(high, ", "), id.ConditionNumber, float64(MaxVIF),
		what[top.b], what[top.a])
}
