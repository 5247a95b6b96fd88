package predict_test

import (
	"errors"
	"math"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

// freeFit is a stored free-exponent fit with coefficients c₀, a, b, c and a
// zero covariance, enough for Predict's median. A fixture, not reference data.
func freeFit(c0, a, b, c float64) predict.PenetrationFit {
	cov := make([][]float64, 4)
	for i := range cov {
		cov[i] = make([]float64, 4)
	}
	return predict.PenetrationFit{Model: predict.ModelJacksonFree,
		Terms: []string{"ln_k", "current_exponent", "travel_speed_exponent", "voltage_exponent"},
		Coef:  []float64{c0, a, b, c}, Cov: cov, ResidualSDLn: 0.1, DoF: 5,
		CurrentExponent: a, TravelSpeedExponent: b, VoltageExponent: c}
}

// drawFreeFit draws exponents around the published Jackson ones (the shop
// fits scatter about them) and ln K over a wide range.
func drawFreeFit(t *rapid.T) predict.PenetrationFit {
	return freeFit(rapid.Float64Range(-8, 1).Draw(t, "c0"), rapid.Float64Range(0.5, 2).Draw(t, "a"),
		rapid.Float64Range(-0.9, -0.05).Draw(t, "b"), rapid.Float64Range(-1.3, -0.05).Draw(t, "c"))
}

// TestFreeInversesRoundTrip checks inverse(forward(x)) = x over the
// plausible welding domain, forward being Predict's median.
func TestFreeInversesRoundTrip(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		f := drawFreeFit(t)
		i, s, v, _ := drawWeld(t)
		iv, err := f.Predict(i, v, s, 0.95)
		if err != nil {
			t.Fatal(err)
		}
		p := iv.MedianMM
		gotI, errI := f.CurrentForPenetrationA(p, s, v)
		gotV, errV := f.VoltageForPenetrationV(p, i, s)
		gotS, errS := f.TravelSpeedForPenetrationMMPerS(p, i, v)
		for _, e := range []error{errI, errV, errS} {
			if e != nil {
				t.Fatal(e)
			}
		}
		checkRel(t, "CurrentForPenetrationA", gotI, i, roundTrip)
		checkRel(t, "VoltageForPenetrationV", gotV, v, roundTrip)
		checkRel(t, "TravelSpeedForPenetrationMMPerS", gotS, s, roundTrip)
	})
}

// TestFreeHoldPenetration checks that the held current gives the fit's
// median penetration of the old setting at the new one.
func TestFreeHoldPenetration(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		f := drawFreeFit(t)
		i, s, v, _ := drawWeld(t)
		s2 := s * rapid.Float64Range(0.5, 2).Draw(t, "travelRatio")
		v2 := v * rapid.Float64Range(0.8, 1.25).Draw(t, "voltageRatio")
		i2, err := f.HoldPenetrationCurrentA(i, s, s2, v, v2)
		if err != nil {
			t.Fatal(err)
		}
		p1, err1 := f.Predict(i, v, s, 0.95)
		p2, err2 := f.Predict(i2, v2, s2, 0.95)
		if err1 != nil || err2 != nil {
			t.Fatalf("Predict: %v, %v", err1, err2)
		}
		checkRel(t, "median penetration after change", p2.MedianMM, p1.MedianMM, roundTrip)
	})
}

// TestFreeWithPublishedExponentsIsJackson checks that a free fit whose
// exponents are the published Jackson ones, P = K·I^(4/3)·S^(−1/3)·V^(−2/3)
// (Jackson power law, from memory), gives the fixed-exponent inverses.
func TestFreeWithPublishedExponentsIsJackson(t *testing.T) {
	const same = 1e-12
	rapid.Check(t, func(t *rapid.T) {
		i, s, v, k := drawWeld(t)
		f := freeFit(math.Log(k.Value), 4.0/3, -1.0/3, -2.0/3)
		p := rapid.Float64Range(0.1, 50).Draw(t, "penetrationMM")
		pairs := []struct {
			what      string
			free, fix func() (float64, error)
		}{
			{"current", func() (float64, error) { return f.CurrentForPenetrationA(p, s, v) },
				func() (float64, error) { return predict.JacksonCurrentA(k, p, s, v) }},
			{"voltage", func() (float64, error) { return f.VoltageForPenetrationV(p, i, s) },
				func() (float64, error) { return predict.JacksonVoltageV(k, p, i, s) }},
			{"travel speed", func() (float64, error) { return f.TravelSpeedForPenetrationMMPerS(p, i, v) },
				func() (float64, error) { return predict.JacksonTravelSpeedMMPerS(k, p, i, v) }},
			{"hold current", func() (float64, error) { return f.HoldPenetrationCurrentA(i, s, 1.5*s, v, 0.9*v) },
				func() (float64, error) { return predict.HoldPenetrationCurrentA(i, s, 1.5*s, v, 0.9*v) }},
		}
		for _, c := range pairs {
			got, err1 := c.free()
			want, err2 := c.fix()
			if err1 != nil || err2 != nil {
				t.Fatalf("%s: errors %v, %v", c.what, err1, err2)
			}
			checkRel(t, c.what+" from the free fit", got, want, same)
		}
	})
}

// TestFreeInverseRefusals checks each refusal and the error it matches.
func TestFreeInverseRefusals(t *testing.T) {
	ok := freeFit(-3.6, 4.0/3, -1.0/3, -2.0/3)
	fixed := ok
	fixed.Model, fixed.Coef = predict.ModelJacksonFixed, []float64{-3.6}
	short := ok
	short.Coef = short.Coef[:3]
	for _, c := range []struct {
		name  string
		solve func() (float64, error)
		want  error
	}{
		{"ErrFixedModel", func() (float64, error) { return fixed.CurrentForPenetrationA(2, 5, 22) }, predict.ErrInvalidFit},
		{"ErrShortCoef", func() (float64, error) { return short.VoltageForPenetrationV(2, 180, 5) }, predict.ErrInvalidFit},
		{"ErrNaNCoef", func() (float64, error) { return freeFit(math.NaN(), 1, -0.3, -0.6).CurrentForPenetrationA(2, 5, 22) }, predict.ErrInvalidFit},
		{"ErrCurrentExponentZero", func() (float64, error) { return freeFit(-3.6, 0, -0.3, -0.6).CurrentForPenetrationA(2, 5, 22) }, predict.ErrInvalidInput},
		{"ErrVoltageExponentZero", func() (float64, error) { return freeFit(-3.6, 1.3, -0.3, 1e-9).VoltageForPenetrationV(2, 180, 5) }, predict.ErrInvalidInput},
		{"ErrTravelExponentZero", func() (float64, error) {
			return freeFit(-3.6, 1.3, 0, -0.6).TravelSpeedForPenetrationMMPerS(2, 180, 22)
		}, predict.ErrInvalidInput},
		{"ErrHoldCurrentExponentZero", func() (float64, error) {
			return freeFit(-3.6, 0, -0.3, -0.6).HoldPenetrationCurrentA(180, 5, 6, 22, 22)
		}, predict.ErrInvalidInput},
		{"ErrPenetrationZero", func() (float64, error) { return ok.CurrentForPenetrationA(0, 5, 22) }, predict.ErrInvalidInput},
		{"ErrPenetrationNaN", func() (float64, error) { return ok.VoltageForPenetrationV(math.NaN(), 180, 5) }, predict.ErrInvalidInput},
		{"ErrTravelSpeedNegative", func() (float64, error) { return ok.CurrentForPenetrationA(2, -5, 22) }, predict.ErrInvalidInput},
		{"ErrVoltageInf", func() (float64, error) { return ok.CurrentForPenetrationA(2, 5, math.Inf(1)) }, predict.ErrInvalidInput},
		{"ErrCurrentZero", func() (float64, error) { return ok.TravelSpeedForPenetrationMMPerS(2, 0, 22) }, predict.ErrInvalidInput},
		{"ErrHoldSpeedZero", func() (float64, error) { return ok.HoldPenetrationCurrentA(180, 5, 0, 22, 22) }, predict.ErrInvalidInput},
		{"ErrOutOfReach", func() (float64, error) { return freeFit(-3.6, 1e-5, -0.3, -0.6).CurrentForPenetrationA(40, 5, 22) }, predict.ErrInvalidInput},
	} {
		t.Run(c.name, func(t *testing.T) {
			got, err := c.solve()
			if !errors.Is(err, c.want) || got != 0 {
				t.Errorf("got %v, %v; want 0 and an error matching %v", got, err, c.want)
			}
		})
	}
}
