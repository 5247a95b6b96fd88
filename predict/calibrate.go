package predict

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/stat/distuv"
)

// Calibration fits estimate a shop's model coefficients from its own
// macro-etched coupons. Results are plain structs with exported fields and
// JSON tags so a storage layer can persist them and predict later from
// the stored values alone.

// ModelKind names the form of a fitted calibration model.
type ModelKind string

const (
	// ModelJacksonFixed is ln P = ln K + (4/3)·ln I − (1/3)·ln S − (2/3)·ln V
	// with the published Jackson exponents held fixed; only K is fitted.
	ModelJacksonFixed ModelKind = "jackson_fixed"
	// ModelJacksonFree is ln P = c₀ + a·ln I + b·ln S + c·ln V with all four
	// coefficients fitted (P in mm, I in A, S in mm/s, V in V).
	ModelJacksonFree ModelKind = "jackson_free"
	// ModelLesnewich is MR = α·I + β·L·I² (MR in kg/h, I in A, L in mm),
	// fitted without an intercept.
	ModelLesnewich ModelKind = "lesnewich"
)

// Calibration errors.
var (
	// ErrTooFewSamples means the fit has no residual degrees of freedom.
	ErrTooFewSamples = errors.New("predict: too few samples for the fit")
	// ErrDegenerate means the samples cannot determine the coefficients,
	// e.g. all coupons were welded at one current.
	ErrDegenerate = errors.New("predict: degenerate calibration data")
	// ErrInvalidFit means a stored fit is inconsistent and cannot predict.
	ErrInvalidFit = errors.New("predict: invalid stored fit")
)

// PenetrationSample is one macro-etched coupon for the Jackson fits.
type PenetrationSample struct {
	ID                string  `json:"id"`
	CurrentA          float64 `json:"current_a"`
	VoltageV          float64 `json:"voltage_v"`
	TravelSpeedMMPerS float64 `json:"travel_speed_mm_s"`
	PenetrationMM     float64 `json:"penetration_mm"`
}

// MeltingSample is one wire melting-rate measurement for the Lesnewich fit.
type MeltingSample struct {
	ID                string  `json:"id"`
	CurrentA          float64 `json:"current_a"`
	ExtensionMM       float64 `json:"extension_mm"`
	MeltingRateKgPerH float64 `json:"melting_rate_kg_h"`
}

// calBound is a plausible range for a recorded quantity, taken from the
// quantity registry (quantity_table.go): outside it the value is a typing
// error, not a weld.
type calBound struct {
	field  string
	lo, hi float64
}

// registered is the calibration bound of the registry's quantity name.
func registered(field, name string) calBound {
	q := MustQuantity(name)
	return calBound{field, q.Min, q.Max}
}

var (
	calCurrent     = registered("current A", "current_a")
	calVoltage     = registered("arc voltage V", "voltage_v")
	calTravel      = registered("travel speed mm/s", "travel_speed_mm_s")
	calPenetration = registered("penetration mm", "penetration_mm")
	calExtension   = registered("electrode extension mm", "extension_mm")
	// A melting rate is derived from wire feed speed and diameter, not typed,
	// so it has no upper plausible bound.
	calMelting = calBound{"melting rate kg/h", 0, math.Inf(1)}
)

// check returns an *InputError for sample id unless v > 0 and lo ≤ v ≤ hi.
func (b calBound) check(id string, v float64) error {
	if err := mustBePositive(b.field, v); err != nil {
		return fmt.Errorf("sample %q: %w", id, err)
	}
	if v < b.lo || v > b.hi {
		return fmt.Errorf("sample %q: %w", id, &InputError{Field: b.field, Value: v,
			Reason: fmt.Sprintf("outside the plausible range %g–%g", b.lo, b.hi)})
	}
	return nil
}

// calSpread returns ErrDegenerate naming what when all values are equal.
func calSpread(what, unit string, vals []float64) error {
	for _, v := range vals[1:] {
		if v != vals[0] {
			return nil
		}
	}
	return fmt.Errorf("%w: all coupons at one %s (%g %s)", ErrDegenerate, what, vals[0], unit)
}

// checkLevel validates a confidence level 0 < level < 1.
func checkLevel(level float64) error {
	if !(level > 0 && level < 1) {
		return &InputError{Field: "confidence level", Value: level, Reason: "must be between 0 and 1 (e.g. 0.95)"}
	}
	return nil
}

// tQuantile is the two-sided Student t critical value t(1−(1−level)/2, dof)
// (gonum distuv.StudentsT).
func tQuantile(level float64, dof int) float64 {
	k := tKey{level, dof}
	if v, ok := tQuantiles.Load(k); ok {
		return v.(float64)
	}
	v := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(dof)}.Quantile(1 - (1-level)/2)
	tQuantiles.Store(k, v)
	return v
}

// tQuantiles remembers tQuantile's values: a calibration judging a group
// of coupons asks for the same level and degrees of freedom once per
// coupon, and the inverse incomplete beta function is most of that work.
// The keys are the few levels and fit sizes in use.
var tQuantiles sync.Map

// tKey is a tQuantiles key.
type tKey struct {
	level float64
	dof   int
}

// covToRows copies a p×p covariance into [][]float64 for storage.
func covToRows(p int, at func(i, j int) float64) [][]float64 {
	rows := make([][]float64, p)
	for i := range rows {
		rows[i] = make([]float64, p)
		for j := range rows[i] {
			rows[i][j] = at(i, j)
		}
	}
	return rows
}

// quadForm returns gᵀ·C·g for a stored covariance C, or ErrInvalidFit if
// the shapes do not match.
func quadForm(c [][]float64, g []float64) (float64, error) {
	if len(c) != len(g) {
		return 0, fmt.Errorf("%w: covariance is %d×?, want %d×%d", ErrInvalidFit, len(c), len(g), len(g))
	}
	s := 0.0
	for i, row := range c {
		if len(row) != len(g) {
			return 0, fmt.Errorf("%w: covariance row %d has %d entries, want %d", ErrInvalidFit, i, len(row), len(g))
		}
		for j, v := range row {
			s += g[i] * v * g[j]
		}
	}
	if !(s >= 0) || math.IsInf(s, 0) {
		return 0, fmt.Errorf("%w: covariance is not positive semi-definite", ErrInvalidFit)
	}
	return s, nil
}
