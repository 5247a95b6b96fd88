package predict_test

import (
	"math"
	"math/big"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

// roundTrip is the required inverse(forward(x)) agreement.
const roundTrip = 1e-9

func TestJacksonInversesRoundTrip(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		i, s, v, k := drawWeld(t)
		p, err := predict.PenetrationMM(k, i, s, v)
		if err != nil {
			t.Fatal(err)
		}
		gotI, errI := predict.JacksonCurrentA(k, p, s, v)
		gotV, errV := predict.JacksonVoltageV(k, p, i, s)
		gotS, errS := predict.JacksonTravelSpeedMMPerS(k, p, i, v)
		gotK, errK := predict.JacksonKFromWeldMM(p, i, s, v)
		for _, e := range []error{errI, errV, errS, errK} {
			if e != nil {
				t.Fatal(e)
			}
		}
		checkRel(t, "JacksonCurrentA", gotI, i, roundTrip)
		checkRel(t, "JacksonVoltageV", gotV, v, roundTrip)
		checkRel(t, "JacksonTravelSpeedMMPerS", gotS, s, roundTrip)
		checkRel(t, "JacksonKFromWeldMM", gotK.Value, k.Value, roundTrip)
	})
}

func TestHoldPenetrationCurrent(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		i, s, v, k := drawWeld(t)
		s2 := s * rapid.Float64Range(0.5, 2).Draw(t, "travelRatio")
		v2 := v * rapid.Float64Range(0.8, 1.25).Draw(t, "voltageRatio")
		i2, err := predict.HoldPenetrationCurrentA(i, s, s2, v, v2)
		if err != nil {
			t.Fatal(err)
		}
		p1, _ := predict.PenetrationMM(k, i, s, v)
		p2, err := predict.PenetrationMM(k, i2, s2, v2)
		if err != nil {
			t.Fatal(err)
		}
		checkRel(t, "penetration after change", p2, p1, roundTrip)
	})
}

// drawLesnewich draws plausible coefficients (from memory, order of
// magnitude for 0.8–1.6 mm steel wire) and an extension in the CTWD range.
func drawLesnewich(t *rapid.T) (predict.Lesnewich, float64) {
	l := predict.Lesnewich{
		AlphaKgPerHA:   rapid.Float64Range(1e-3, 0.05).Draw(t, "alpha"),
		BetaKgPerHA2MM: rapid.Float64Range(0, 1e-4).Draw(t, "beta"),
	}
	return l, rapid.Float64Range(3, 50).Draw(t, "extensionMM")
}

func TestLesnewichInverseRoundTrip(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		l, ext := drawLesnewich(t)
		i := rapid.Float64Range(10, 1000).Draw(t, "currentA")
		mr, err := l.MeltingRateKgPerH(i, ext)
		if err != nil {
			t.Fatal(err)
		}
		got, err := l.CurrentForMeltingRateA(mr, ext)
		if err != nil {
			t.Fatal(err)
		}
		checkRel(t, "CurrentForMeltingRateA", got, i, roundTrip)
		eff := rapid.Float64Range(0.5, 1).Draw(t, "efficiency")
		dr, _ := l.DepositionRateKgPerH(i, ext, eff)
		gotD, err := l.CurrentForDepositionRateA(dr, ext, eff)
		if err != nil {
			t.Fatal(err)
		}
		checkRel(t, "CurrentForDepositionRateA", gotD, i, roundTrip)
		// Extension is only identifiable when the resistive term is a visible
		// part of MR; below 1e-6 of it the data cannot fix L.
		if l.BetaKgPerHA2MM*ext*i*i > 1e-6*mr {
			gotL, err := l.ExtensionForMeltingRateMM(mr, i)
			if err != nil {
				t.Fatal(err)
			}
			// βLI² may be a tiny part of MR; the extension is then ill-conditioned
			// by MR/(βLI²), so the bound scales with that ratio.
			checkRel(t, "ExtensionForMeltingRateMM", gotL, ext, roundTrip*mr/(l.BetaKgPerHA2MM*ext*i*i))
		}
	})
}

func TestLesnewichMonotoneInCurrent(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		l, ext := drawLesnewich(t)
		i := rapid.Float64Range(10, 900).Draw(t, "currentA")
		di := rapid.Float64Range(0, 100).Draw(t, "deltaA")
		m1, _ := l.MeltingRateKgPerH(i, ext)
		m2, _ := l.MeltingRateKgPerH(i+di, ext)
		if m2 < m1 {
			t.Fatalf("MR(%v A) = %v < MR(%v A) = %v", i+di, m2, i, m1)
		}
	})
}

// residualBig evaluates βL·I² + α·I − MR in 200-bit arithmetic (math/big as
// the reference), relative to MR.
func residualBig(l predict.Lesnewich, ext, i, mr float64) float64 {
	f := func(x float64) *big.Float { return new(big.Float).SetPrec(200).SetFloat64(x) }
	bl := new(big.Float).Mul(f(l.BetaKgPerHA2MM), f(ext))
	r := new(big.Float).Mul(bl, new(big.Float).Mul(f(i), f(i)))
	r.Add(r, new(big.Float).Mul(f(l.AlphaKgPerHA), f(i)))
	r.Sub(r, f(mr))
	v, _ := r.Float64()
	return math.Abs(v) / mr
}

func TestCurrentForMeltingRateReproducesRate(t *testing.T) {
	cases := []struct {
		name  string
		l     predict.Lesnewich
		ext   float64
		mrKgH float64
	}{
		// Plausible 1.2 mm steel coefficients (from memory, order of magnitude).
		{"Typical", predict.Lesnewich{AlphaKgPerHA: 0.008, BetaKgPerHA2MM: 3e-6}, 15, 4.5},
		// β·L·MR ≪ α²: the textbook root (−b+√(b²−4ac))/2a would cancel.
		{"TinyBeta", predict.Lesnewich{AlphaKgPerHA: 0.02, BetaKgPerHA2MM: 1e-14}, 10, 3},
		{"BetaZero", predict.Lesnewich{AlphaKgPerHA: 0.02}, 10, 3},
		{"AlphaZero", predict.Lesnewich{BetaKgPerHA2MM: 5e-6}, 20, 6},
		{"LongStickOut", predict.Lesnewich{AlphaKgPerHA: 0.008, BetaKgPerHA2MM: 3e-6}, 50, 12},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			i, err := c.l.CurrentForMeltingRateA(c.mrKgH, c.ext)
			if err != nil {
				t.Fatal(err)
			}
			if r := residualBig(c.l, c.ext, i, c.mrKgH); r > 1e-12 {
				t.Errorf("CurrentForMeltingRateA(%v) = %v A: residual %.2g of MR, want ≤ 1e-12", c.mrKgH, i, r)
			}
			mr, _ := c.l.MeltingRateKgPerH(i, c.ext)
			checkRel(t, "MeltingRateKgPerH(solved I)", mr, c.mrKgH, 1e-12)
		})
	}
	t.Run("ErrNegativeRate", func(t *testing.T) {
		l := predict.Lesnewich{AlphaKgPerHA: 0.008, BetaKgPerHA2MM: 3e-6}
		if _, err := l.CurrentForMeltingRateA(-1, 15); err == nil {
			t.Error("CurrentForMeltingRateA(-1) error = nil, want error")
		}
	})
	t.Run("ErrExtensionUnreachable", func(t *testing.T) {
		l := predict.Lesnewich{AlphaKgPerHA: 0.02, BetaKgPerHA2MM: 3e-6}
		if _, err := l.ExtensionForMeltingRateMM(3, 200); err == nil {
			t.Error("ExtensionForMeltingRateMM(3 kg/h, 200 A) with α·I = 4 kg/h: error = nil, want error")
		}
	})
}
