package predict

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"etchlog/predict/lsq"
)

// PenetrationStream takes a calibration group's coupons one at a time and
// fits the Jackson models to them in memory that does not grow with their
// number (lsq.Stream), for groups too large to hold. Its fits equal
// FitPenetrationFixed and FitPenetrationFree on the same coupons, but name
// no SampleIDs: the caller keeps a digest of what it fed instead.
type PenetrationStream struct {
	free, fixed *lsq.Stream
	first       PenetrationSample
	varied      [3]bool // current, travel speed, voltage took more than one value
}

// NewPenetrationStream starts an empty stream.
func NewPenetrationStream() *PenetrationStream {
	free, _ := lsq.NewStream(4) // p > 0: cannot fail
	fixed, _ := lsq.NewStream(1)
	return &PenetrationStream{free: free, fixed: fixed}
}

// Add checks one coupon against the calibration bounds and adds it.
func (ps *PenetrationStream) Add(s PenetrationSample) error {
	for _, c := range []struct {
		b calBound
		v float64
	}{{calCurrent, s.CurrentA}, {calVoltage, s.VoltageV}, {calTravel, s.TravelSpeedMMPerS}, {calPenetration, s.PenetrationMM}} {
		if err := c.b.check(s.ID, c.v); err != nil {
			return err
		}
	}
	if ps.free.N() == 0 {
		ps.first = s
	}
	ps.varied[0] = ps.varied[0] || s.CurrentA != ps.first.CurrentA
	ps.varied[1] = ps.varied[1] || s.TravelSpeedMMPerS != ps.first.TravelSpeedMMPerS
	ps.varied[2] = ps.varied[2] || s.VoltageV != ps.first.VoltageV
	li, ls := math.Log(s.CurrentA), math.Log(s.TravelSpeedMMPerS)
	lv, lp := math.Log(s.VoltageV), math.Log(s.PenetrationMM)
	if err := ps.free.Add([]float64{1, li, ls, lv}, lp); err != nil {
		return err
	}
	y := lp - JacksonCurrentExponent*li - JacksonTravelExponent*ls - JacksonVoltageExponent*lv
	return ps.fixed.Add([]float64{1}, y)
}

// Fit fits model (ModelJacksonFixed or ModelJacksonFree) to the coupons
// added so far, with the refusals of the whole-group fits.
func (ps *PenetrationStream) Fit(model ModelKind) (PenetrationFit, error) {
	n := ps.free.N()
	if n < 2 {
		return PenetrationFit{}, fmt.Errorf("%w: the fixed-exponent Jackson fit needs at least 2 coupons, have %d", ErrTooFewSamples, n)
	}
	fixed, err := ps.fixed.Solve()
	if err != nil {
		return PenetrationFit{}, calFitError(ModelJacksonFixed, err)
	}
	if model != ModelJacksonFree {
		tss := ps.free.YScatter() // Σ(ln P − mean ln P)², R²'s denominator
		r2 := 0.0
		if tss > 0 {
			r2 = 1 - fixed.RSS/tss
		}
		se := fixed.StdErr[0]
		lnK := fixed.Coef[0]
		return PenetrationFit{
			Model: ModelJacksonFixed, Terms: []string{"ln_k"},
			Coef: []float64{lnK}, StdErr: []float64{se}, Cov: [][]float64{{se * se}},
			CurrentExponent: JacksonCurrentExponent, TravelSpeedExponent: JacksonTravelExponent,
			VoltageExponent: JacksonVoltageExponent,
			KMM:             math.Exp(lnK), KStdErrMM: math.Exp(lnK) * se,
			ResidualSDLn: fixed.ResidualSD, R2: r2, N: n, DoF: fixed.DoF,
		}, nil
	}
	const p = 4
	if n <= p {
		return PenetrationFit{}, fmt.Errorf("%w: the free-exponent Jackson fit needs at least %d coupons, have %d", ErrTooFewSamples, p+1, n)
	}
	for i, v := range []struct{ what, unit string }{{"current", "A"}, {"travel speed", "mm/s"}, {"voltage", "V"}} {
		if !ps.varied[i] {
			val := []float64{ps.first.CurrentA, ps.first.TravelSpeedMMPerS, ps.first.VoltageV}[i]
			return PenetrationFit{}, fmt.Errorf("%w: all coupons at one %s (%g %s)", ErrDegenerate, v.what, val, v.unit)
		}
	}
	_, scatter := ps.free.Scatter()
	corr := mat.NewSymDense(3, nil)
	for j := 1; j < p; j++ {
		for k := j; k < p; k++ {
			corr.SetSym(j-1, k-1, scatter.At(j, k)/math.Sqrt(scatter.At(j, j)*scatter.At(k, k)))
		}
	}
	ident := identifiabilityOf(corr)
	if err := ident.refusal(); err != nil {
		return PenetrationFit{}, err
	}
	res, err := ps.free.Solve()
	if err != nil {
		return PenetrationFit{}, calFitError(ModelJacksonFree, err)
	}
	k := math.Exp(res.Coef[0])
	return PenetrationFit{
		Model: ModelJacksonFree, Terms: []string{"ln_k", "current_exponent", "travel_speed_exponent", "voltage_exponent"},
		Coef: res.Coef, StdErr: res.StdErr, Cov: covToRows(p, res.Cov.At),
		CurrentExponent: res.Coef[1], TravelSpeedExponent: res.Coef[2], VoltageExponent: res.Coef[3],
		KMM: k, KStdErrMM: k * res.StdErr[0], ResidualSDLn: res.ResidualSD, R2: res.R2,
		N: n, DoF: res.DoF,
		FTest:           exponentFTest(fixed.RSS, res.RSS, n),
		Identifiability: &ident,
	}, nil
}

// MeltingStream takes melting-rate measurements one at a time and fits the
// Lesnewich model to them in memory that does not grow with their number.
// Its fit equals FitMeltingRate on the same measurements, without SampleIDs.
type MeltingStream struct {
	s      *lsq.Stream
	first  float64 // L·I of the first measurement, mm·A
	varied bool
}

// NewMeltingStream starts an empty stream.
func NewMeltingStream() *MeltingStream {
	s, _ := lsq.NewStream(2) // p > 0: cannot fail
	return &MeltingStream{s: s}
}

// Add checks one measurement against the calibration bounds and adds it.
func (ms *MeltingStream) Add(s MeltingSample) error {
	for _, c := range []struct {
		b calBound
		v float64
	}{{calCurrent, s.CurrentA}, {calExtension, s.ExtensionMM}, {calMelting, s.MeltingRateKgPerH}} {
		if err := c.b.check(s.ID, c.v); err != nil {
			return err
		}
	}
	li := s.ExtensionMM * s.CurrentA
	if ms.s.N() == 0 {
		ms.first = li
	}
	ms.varied = ms.varied || li != ms.first
	return ms.s.Add([]float64{s.CurrentA, s.ExtensionMM * s.CurrentA * s.CurrentA}, s.MeltingRateKgPerH)
}

// Fit fits α and β to the measurements added so far.
func (ms *MeltingStream) Fit() (MeltingFit, error) {
	const p = 2
	n := ms.s.N()
	if n <= p {
		return MeltingFit{}, fmt.Errorf("%w: the Lesnewich fit needs at least %d measurements, have %d", ErrTooFewSamples, p+1, n)
	}
	if !ms.varied {
		return MeltingFit{}, fmt.Errorf("%w: all coupons at one extension × current (%g mm·A) (e.g. one current and one extension)", ErrDegenerate, ms.first)
	}
	res, err := ms.s.Solve()
	if err != nil {
		return MeltingFit{}, calFitError(ModelLesnewich, err)
	}
	fit := MeltingFit{
		Model: ModelLesnewich, AlphaKgPerHA: res.Coef[0], BetaKgPerHA2MM: res.Coef[1],
		AlphaStdErrKgPerHA: res.StdErr[0], BetaStdErrKgPerHA2MM: res.StdErr[1],
		Cov: covToRows(p, res.Cov.At), ResidualSDKgPerH: res.ResidualSD, R2Uncentered: res.R2,
		N: n, DoF: res.DoF,
	}
	fit.WithInchPound()
	return fit, nil
}
