package predict

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Synthetic coupons for self-consistency checks: invented data generated
// from the model itself, not shop measurements.

// helperTB is the part of testing.TB (and rapid.T) the generators need.
type helperTB interface{ Helper() }

// jacksonTruth holds the coefficients synthetic coupons are drawn from.
type jacksonTruth struct {
	kMM, a, b, c, noiseLn float64
}

// publishedTruth uses the published Jackson exponents with a plausible K.
var publishedTruth = jacksonTruth{kMM: 0.05, a: JacksonCurrentExponent, b: JacksonTravelExponent, c: JacksonVoltageExponent, noiseLn: 0.05}

// synthPenetration draws n coupons in usual GMAW ranges with log-normal
// scatter noiseLn around P = K·I^a·S^b·V^c.
func synthPenetration(tb helperTB, seed uint64, n int, tr jacksonTruth) []PenetrationSample {
	tb.Helper()
	rng := rand.New(rand.NewPCG(seed, 42))
	out := make([]PenetrationSample, n)
	for i := range out {
		I, V, S := 150+200*rng.Float64(), 18+12*rng.Float64(), 3+7*rng.Float64()
		lp := math.Log(tr.kMM) + tr.a*math.Log(I) + tr.b*math.Log(S) + tr.c*math.Log(V) + tr.noiseLn*rng.NormFloat64()
		out[i] = PenetrationSample{ID: "C" + string(rune('A'+i%26)), CurrentA: I, VoltageV: V, TravelSpeedMMPerS: S, PenetrationMM: math.Exp(lp)}
	}
	return out
}

// synthMelting draws n melting-rate measurements from MR = α·I + β·L·I².
func synthMelting(tb helperTB, seed uint64, n int, alpha, beta, noise float64) []MeltingSample {
	tb.Helper()
	rng := rand.New(rand.NewPCG(seed, 7))
	out := make([]MeltingSample, n)
	for i := range out {
		I, L := 120+250*rng.Float64(), 8+17*rng.Float64()
		out[i] = MeltingSample{ID: "M", CurrentA: I, ExtensionMM: L, MeltingRateKgPerH: alpha*I + beta*L*I*I + noise*rng.NormFloat64()}
	}
	return out
}

// gonumOLS is the outside reference: gonum's QR least squares (Dense.Solve)
// and σ̂²·(XᵀX)⁻¹ through gonum's Cholesky inverse.
type gonumOLS struct {
	coef, se   []float64
	rss, sigma float64
	xtxInv     *mat.SymDense
}

func fitGonum(tb testing.TB, X *mat.Dense, y []float64) gonumOLS {
	tb.Helper()
	n, p := X.Dims()
	var beta mat.Dense
	if err := beta.Solve(X, mat.NewVecDense(n, y)); err != nil {
		tb.Fatalf("gonum Solve: %v", err)
	}
	var fitted mat.VecDense
	fitted.MulVec(X, beta.ColView(0))
	g := gonumOLS{coef: mat.Col(nil, 0, &beta), xtxInv: mat.NewSymDense(p, nil)}
	for i, v := range y {
		g.rss += (v - fitted.AtVec(i)) * (v - fitted.AtVec(i))
	}
	g.sigma = math.Sqrt(g.rss / float64(n-p))
	var xtx mat.SymDense
	xtx.SymOuterK(1, X.T())
	var ch mat.Cholesky
	if !ch.Factorize(&xtx) {
		tb.Fatal("gonum Cholesky failed")
	}
	if err := ch.InverseTo(g.xtxInv); err != nil {
		tb.Fatalf("gonum InverseTo: %v", err)
	}
	for j := 0; j < p; j++ {
		g.se = append(g.se, g.sigma*math.Sqrt(g.xtxInv.At(j, j)))
	}
	return g
}

// closeRel reports whether got is within rel of want (relative).
func closeRel(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Abs(want)
}
